"""Argument phrases as the annotation guide draws them, and the candidate kinds, on hand-built parses."""

from __future__ import annotations

import pytest
from spacy.tokens import Doc

from tests.hand_parsed import REACHED_TARN, VOCAB, make_doc

from trainer.features.gazetteer import Gazetteer
from trainer.models.candidates import candidate_phrases, phrase_span



REACHED = make_doc(REACHED_TARN)
LAKE = make_doc("""
We     we     PRON   PRP  nsubj  1
saw    see    VERB   VBD  ROOT   1
the    the    DET    DT   det    3
lake   lake   NOUN   NN   dobj   1
,      ,      PUNCT  ,    punct  3
which  which  PRON   WDT  dobj   8
we     we     PRON   PRP  nsubj  8
had    have   AUX    VBD  aux    8
seen   see    VERB   VBN  relcl  3
for    for    ADP    IN   prep   8
days   day    NOUN   NNS  pobj   9
.      .      PUNCT  .    punct  1
""")
RODE = make_doc("""
We       we       PRON   PRP  nsubj     1
rode     ride     VERB   VBD  ROOT      1
through  through  ADP    IN   prep      1
the      the      DET    DT   det       5
Sallow   sallow   ADJ    JJ   amod      5
gap      gap      NOUN   NN   pobj      2
to       to       ADP    IN   prep      1
Quillon  Quillon  PROPN  NNP  pobj      6
.        .        PUNCT  .    punct     1
""")
INN = make_doc("""
We      we      PRON   PRP  nsubj     1
left    leave   VERB   VBD  ROOT      1
the     the     DET    DT   det       4
old     old     ADJ    JJ   amod      4
inn     inn     NOUN   NN   dobj      1
at      at      ADP    IN   prep      4
Caddow  Caddow  PROPN  NNP  pobj      5
,       ,       PUNCT  ,    punct     4
Holm    Holm    PROPN  NNP  compound  9
Averly  Averly  PROPN  NNP  appos     4
.       .       PUNCT  .    punct     1
""")
NO_TREE = make_doc("""
Colm  Colm   PROPN  NNP  -  -
and   and    CCONJ  CC   -  -
I     I      PRON   PRP  -  -
left  leave  VERB   VBD  -  -
Holm  Holm   PROPN  NNP  -  -
Averly  Averly  PROPN  NNP  -  -
.     .      PUNCT  .    -  -
""")


def text(doc: Doc, span: tuple[int, int]) -> str:
    return doc[span[0]:span[1]].text


def test_of_complement_naming_the_place_is_kept() -> None:
    assert phrase_span(REACHED[3]) == (2, 6)
    assert text(REACHED, phrase_span(REACHED[3])) == "the island of Tarn"


def test_relative_clause_and_comma_are_dropped() -> None:
    assert phrase_span(LAKE[3]) == (2, 4)
    assert text(LAKE, phrase_span(LAKE[3])) == "the lake"


def test_preposition_is_left_out() -> None:
    assert text(RODE, phrase_span(RODE[5])) == "the Sallow gap"
    assert text(RODE, phrase_span(RODE[7])) == "Quillon"


def test_other_prepositional_phrases_and_appositions_are_cut() -> None:
    assert text(INN, phrase_span(INN[4])) == "the old inn"
    assert text(INN, phrase_span(INN[9])) == "Holm Averly"


def test_candidate_kinds() -> None:
    assert candidate_phrases(REACHED) == [(0, 1, "phrase"), (2, 4, "chunk"), (2, 6, "phrase"), (5, 6, "phrase")]
    assert candidate_phrases(LAKE) == [
        (0, 1, "phrase"), (2, 4, "phrase"), (5, 6, "phrase"), (6, 7, "phrase"), (10, 11, "phrase"),
    ]


def test_proper_noun_runs_and_gazetteer_names() -> None:
    assert candidate_phrases(INN) == [(0, 1, "phrase"), (2, 5, "phrase"), (6, 7, "phrase"), (8, 10, "phrase")]
    proper = make_doc("""
We       we       PRON   PRP  nsubj     1
rode     ride     VERB   VBD  ROOT      1
through  through  ADP    IN   prep      1
the      the      DET    DT   det       5
Sallow   Sallow   PROPN  NNP  compound  5
Gap      Gap      PROPN  NNP  pobj      2
""")
    assert candidate_phrases(proper) == [(0, 1, "phrase"), (3, 6, "phrase"), (4, 6, "proper")]
    gazetteer = Gazetteer([["Sallow", "gap"], ["Quillon"]])
    assert candidate_phrases(RODE, gazetteer) == [(0, 1, "phrase"), (3, 6, "phrase"), (4, 6, "gazetteer"),
                                                  (7, 8, "phrase")]


def test_without_a_tree_candidates_fall_back_to_the_other_kinds() -> None:
    assert not NO_TREE.has_annotation("DEP")
    with pytest.raises(ValueError, match="E029"):
        list(NO_TREE.noun_chunks)
    assert candidate_phrases(NO_TREE) == [(0, 1, "proper"), (2, 3, "pronoun"), (4, 6, "proper")]
    assert candidate_phrases(NO_TREE, Gazetteer([["Colm", "and"]])) == [
        (0, 1, "proper"), (0, 2, "gazetteer"), (2, 3, "pronoun"), (4, 6, "proper"),
    ]


def test_other_noun_chunk_errors_are_not_hidden() -> None:
    doc = Doc(VOCAB, words=["We", "rode"], deps=["nsubj", "ROOT"], heads=[1, 1])

    def broken(doclike: Doc) -> list:
        raise ValueError("something else")

    doc.noun_chunks_iterator = broken
    with pytest.raises(ValueError, match="something else"):
        candidate_phrases(doc)
