"""Feature groups on hand-built parses: exact values, independent of the statistical parser.

Each Doc is written as a table (word, lemma, UPOS, tag, dependency label, head
index) in the shape spaCy's English pipeline gives these sentences.
"""

from __future__ import annotations

import pytest
from spacy.tokens import Doc

from tests.hand_parsed import REACHED_TARN, make_doc

from trainer.config import FeatureConfig
from trainer.features import groups
from trainer.features.extract import Featurizer
from trainer.features.gazetteer import Gazetteer
from trainer.features.lexicons import Lexicons, load_lexicons

LEXICONS: Lexicons = load_lexicons()


RODE = """
We       we       PRON   PRP  nsubj     1
rode     ride     VERB   VBD  ROOT      1
through  through  ADP    IN   prep      1
the      the      DET    DT   det       5
Sallow   Sallow   PROPN  NNP  compound  5
Gap      Gap      PROPN  NNP  pobj      2
to       to       ADP    IN   prep      1
Quillon  Quillon  PROPN  NNP  pobj      6
.        .        PUNCT  .    punct     1
"""
ROWED = """
We      we      PRON   PRP  nsubjpass  2
were    be      AUX    VBD  auxpass    2
rowed   row     VERB   VBN  ROOT       2
across  across  ADP    IN   prep       2
the     the     DET    DT   det        5
bay     bay     NOUN   NN   pobj       3
.       .       PUNCT  .    punct      2
"""
CAME = """
We      we      PRON   PRP  nsubj     1
came    come    VERB   VBD  ROOT      1
out     out     ADP    IN   prep      1
of      of      ADP    IN   prep      2
the     the     DET    DT   det       5
forest  forest  NOUN   NN   pobj      3
by      by      ADP    IN   prep      1
way     way     NOUN   NN   pobj      6
of      of      ADP    IN   prep      7
Tell    Tell    PROPN  NNP  compound  10
Amar    Amar    PROPN  NNP  pobj      8
.       .       PUNCT  .    punct     1
"""
REACHED = REACHED_TARN
SET_OUT = """
We         we         PRON   PRP  nsubj   1
set        set        VERB   VBD  ROOT    1
out        out        ADP    RP   prt     1
northward  northward  ADV    RB   advmod  1
.          .          PUNCT  .    punct   1
"""
DEPARTURE = """
Our        our        PRON   PRP$  poss   1
departure  departure  NOUN   NN    ROOT   1
from       from       ADP    IN    prep   1
Caddow     Caddow     PROPN  NNP   pobj   2
"""


@pytest.fixture(scope="module")
def rode() -> Doc:
    return make_doc(RODE, ents=["O", "O", "O", "O", "B-LOC", "I-LOC", "O", "B-GPE", "O"])


def test_fixture_text(rode: Doc) -> None:
    assert rode.text == "We rode through the Sallow Gap to Quillon ."


# --- lexical ---------------------------------------------------------------


def test_parse_tree_of_a_hand_parsed_doc(rode: Doc) -> None:
    tree = groups.parse_tree(rode)
    assert tree.heads == [1, 1, 1, 5, 5, 2, 1, 6, 1]
    assert tree.children[1] == [0, 2, 6, 8] and tree.children[5] == [3, 4] and tree.children[0] == []
    assert tree.chains[4] == (4, 5, 2, 1) and tree.chains[1] == (1,)
    assert tree.lemma[4] == "sallow" and tree.lower[7] == "quillon"
    assert tree.governing == ["", "", "", "through", "through", "through", "", "to", ""]
    assert groups.parse_tree(rode) is tree  # made once per doc


def test_parse_tree_of_an_unparsed_doc() -> None:
    doc = make_doc("""
We    we    PRON  PRP  -  -
rode  ride  VERB  VBD  -  -
west  west  ADV   RB   -  -
""")
    tree = groups.parse_tree(doc)
    assert tree.heads == [0, 1, 2] and tree.children == [[], [], []] and tree.chains == [(0,), (1,), (2,)]
    assert tree.governing == ["", "", ""] and groups.syntax(doc[1])["depth"] == "0"


@pytest.mark.parametrize(
    ("text", "expected"),
    [("Caddow", "Xx"), ("d-2", "x-d"), ("NW", "X"), ("1840s", "dx"), ("O'Brien", "X'Xx"), (".", ".")],
)
def test_shape(text: str, expected: str) -> None:
    assert groups.shape(text) == expected


def test_lexical(rode: Doc) -> None:
    assert groups.lexical(rode[5]) == {
        "lower": "gap", "lemma": "gap", "shape": "Xx", "prefix": "gap", "suffix": "gap",
        "is_title": True, "is_upper": False, "has_digit": False, "is_punct": False,
    }
    assert groups.lexical(rode[1]) == {
        "lower": "rode", "lemma": "ride", "shape": "x", "prefix": "rod", "suffix": "ode",
        "is_title": False, "is_upper": False, "has_digit": False, "is_punct": False,
    }
    sallow = groups.lexical(rode[4])
    assert (sallow["prefix"], sallow["suffix"]) == ("sal", "low")
    quillon = groups.lexical(rode[7], affix_length=2)
    assert (quillon["prefix"], quillon["suffix"]) == ("qu", "on")
    assert groups.lexical(rode[8])["is_punct"] is True


# --- tagging ---------------------------------------------------------------


def test_tagging(rode: Doc) -> None:
    assert groups.tagging(rode[5]) == {"pos": "PROPN", "tag": "NNP", "ent_type": "LOC", "ent_iob": "I"}
    assert groups.tagging(rode[7]) == {"pos": "PROPN", "tag": "NNP", "ent_type": "GPE", "ent_iob": "B"}
    assert groups.tagging(rode[1]) == {"pos": "VERB", "tag": "VBD", "ent_type": "-", "ent_iob": "O"}


def test_tagging_without_entity_annotation() -> None:
    assert groups.tagging(make_doc(RODE)[5]) == {"pos": "PROPN", "tag": "NNP", "ent_type": "-", "ent_iob": "O"}


# --- syntax ----------------------------------------------------------------


def test_syntax_of_a_prepositional_object(rode: Doc) -> None:
    assert groups.syntax(rode[5]) == {
        "dep": "pobj", "head_lemma": "through", "head_pos": "ADP", "head_dep": "pobj<ADP", "gov_prep": "through",
        "depth": "2", "passive_subject": False, "passive_verb": False,
    }


def test_syntax_of_the_verb_lists_its_prepositions(rode: Doc) -> None:
    assert groups.syntax(rode[1]) == {
        "dep": "ROOT", "head_lemma": "ride", "head_pos": "VERB", "head_dep": "ROOT<VERB", "gov_prep": "-",
        "depth": "0", "passive_subject": False, "passive_verb": False,
        "child_prep=through": True, "child_prep=to": True,
    }


def test_depth(rode: Doc) -> None:
    assert [groups.depth(t) for t in rode] == [1, 0, 1, 3, 3, 2, 1, 2, 1]
    assert [groups.syntax(t)["depth"] for t in rode] == ["1", "0", "1", "3", "3", "2", "1", "2", "1"]


def test_depth_feature_is_capped_at_six() -> None:
    chain = make_doc("\n".join(f"w{i} w VERB VB {'dep' if i < 7 else 'ROOT'} {min(i + 1, 7)}" for i in range(8)))
    assert groups.depth(chain[0]) == 7
    assert groups.syntax(chain[0])["depth"] == "6"


def test_governing_preposition_reaches_up_through_the_noun_phrase(rode: Doc) -> None:
    assert [groups.governing_preposition(t) for t in rode] == [
        "", "", "", "through", "through", "through", "", "to", "",
    ]


def test_passive_subject_and_verb() -> None:
    rowed = make_doc(ROWED)
    assert groups.syntax(rowed[0])["passive_subject"] is True
    assert groups.syntax(rowed[2]) == {
        "dep": "ROOT", "head_lemma": "row", "head_pos": "VERB", "head_dep": "ROOT<VERB", "gov_prep": "-",
        "depth": "0", "passive_subject": False, "passive_verb": True, "child_prep=across": True,
    }
    assert groups.syntax(rowed[5])["gov_prep"] == "across"


def test_particles_and_adverbs_of_the_verb() -> None:
    features = groups.syntax(make_doc(SET_OUT)[1])
    assert {k for k in features if k.startswith("child_")} == {"child_prt=out", "child_advmod=northward"}


def test_multiword_prepositions() -> None:
    came = make_doc(CAME)
    assert [groups.governing_preposition(t) for t in came] == [
        "", "", "", "", "out of", "out of", "", "by", "", "by way of", "by way of", "",
    ]


def test_a_noun_before_of_is_not_part_of_a_preposition() -> None:
    assert groups.governing_preposition(make_doc(REACHED)[5]) == "of"
    assert groups.governing_preposition(make_doc(DEPARTURE)[3]) == "from"


def test_of_complement_is_a_child_preposition() -> None:
    assert groups.syntax(make_doc(REACHED)[3])["child_prep=of"] is True


# --- context ---------------------------------------------------------------


def test_context_window_keys_and_sentence_edges(rode: Doc) -> None:
    own = [groups.lexical(t) for t in rode]
    assert groups.context(own, 0, 2, ("lower", "shape")) == {
        "-2:edge": True, "-1:edge": True,
        "+1:lower": "rode", "+1:shape": "x", "+2:lower": "through", "+2:shape": "x",
        "BOS": True,
    }
    assert groups.context(own, 8, 2, ("lower",)) == {
        "-2:lower": "to", "-1:lower": "quillon", "+1:edge": True, "+2:edge": True, "EOS": True,
    }
    assert groups.context(own, 5, 1, ("lower", "dep")) == {"-1:lower": "sallow", "+1:lower": "to"}


def test_context_of_a_one_word_sentence() -> None:
    assert groups.context([{"lower": "onward"}], 0, 1, ("lower",)) == {
        "-1:edge": True, "+1:edge": True, "BOS": True, "EOS": True,
    }


# --- trigger_relative ------------------------------------------------------


def test_dependency_path_format(rode: Doc) -> None:
    assert groups.dependency_path(rode[5], rode[1]) == ("pobj↑prep↑", 2)
    assert groups.dependency_path(rode[0], rode[5]) == ("nsubj↑↓prep↓pobj", 3)
    assert groups.dependency_path(rode[3], rode[3]) == ("self", 0)
    assert groups.dependency_path(rode[3], rode[7]) == ("det↑pobj↑prep↑↓prep↓pobj", 5)


def test_dependency_path_between_two_trees() -> None:
    two = make_doc("We we PRON PRP ROOT 0\nrode ride VERB VBD ROOT 1")
    assert groups.dependency_path(two[0], two[1]) == ("none", 0)
    assert groups.trigger_relative(two[0], (1, 2), LEXICONS)["t_in_subtree"] is False


@pytest.mark.parametrize(
    ("distance", "label"), [(0, "<=1"), (1, "<=1"), (2, "<=2"), (4, "<=5"), (6, "<=8"), (13, "<=13"), (14, ">13")]
)
def test_distance_buckets(distance: int, label: str) -> None:
    assert groups.bucket(distance) == label


def test_trigger_relative_for_the_object_of_through(rode: Doc) -> None:
    assert groups.trigger_relative(rode[5], (1, 2), LEXICONS) == {
        "t_side": "after", "t_distance": "<=5", "t_side_distance": "after<=5",
        "t_path": "pobj↑prep↑", "t_path_length": "2", "t_path_dep": "pobj↑prep↑|pobj",
        "t_in_subtree": True, "t_lemma": "ride", "t_class": "manner", "t_gov_prep": "through|manner",
    }


def test_trigger_relative_for_the_subject_and_the_trigger_itself(rode: Doc) -> None:
    assert groups.trigger_relative(rode[0], (1, 2), LEXICONS) == {
        "t_side": "before", "t_distance": "<=1", "t_side_distance": "before<=1",
        "t_path": "nsubj↑", "t_path_length": "1", "t_path_dep": "nsubj↑|nsubj",
        "t_in_subtree": True, "t_lemma": "ride", "t_class": "manner", "t_gov_prep": "-|manner",
    }
    itself = groups.trigger_relative(rode[1], (1, 2), LEXICONS)
    assert (itself["t_side_distance"], itself["t_path"], itself["t_path_dep"]) == ("in<=1", "self", "self|ROOT")


def test_trigger_relative_outside_the_trigger_subtree(rode: Doc) -> None:
    features = groups.trigger_relative(rode[0], (5, 6), LEXICONS)
    assert (features["t_side_distance"], features["t_path"], features["t_path_length"]) == (
        "before<=5", "nsubj↑↓prep↓pobj", "3",
    )
    assert features["t_in_subtree"] is False
    assert (features["t_lemma"], features["t_class"], features["t_gov_prep"]) == ("gap", "-", "-|-")
    assert [groups.trigger_relative(t, (5, 6), LEXICONS)["t_in_subtree"] for t in rode] == [
        False, False, False, True, True, True, False, False, False,
    ]


def test_trigger_class_of_a_nominal_trigger() -> None:
    departure = make_doc(DEPARTURE)
    features = groups.trigger_relative(departure[3], (1, 2), LEXICONS)
    assert (features["t_lemma"], features["t_class"]) == ("departure", "departure")


def test_multiword_trigger_uses_its_root() -> None:
    set_out = make_doc(SET_OUT)
    out = groups.trigger_relative(set_out[2], (1, 3), LEXICONS)
    assert (out["t_side_distance"], out["t_path"], out["t_lemma"]) == ("in<=1", "prt↑", "set")
    after = groups.trigger_relative(set_out[3], (1, 3), LEXICONS)
    assert (after["t_side_distance"], after["t_path"]) == ("after<=1", "advmod↑")


def test_trigger_relative_all_equals_token_by_token(rode: Doc) -> None:
    for trigger in [(1, 2), (5, 6), (0, 3)]:
        assert groups.trigger_relative_all(rode, trigger, LEXICONS) == [
            groups.trigger_relative(t, trigger, LEXICONS) for t in rode
        ]


# --- lexicon ---------------------------------------------------------------


def test_lexicon_verb_class_and_preposition_cues(rode: Doc) -> None:
    assert groups.lexicon(rode[1], LEXICONS) == {"gazetteer": "O", "direction": False, "verb_class": "manner"}
    assert groups.lexicon(rode[5], LEXICONS, "I") == {"gazetteer": "I", "direction": False, "gov_prep_cue": "path"}
    assert groups.lexicon(rode[7], LEXICONS, "B")["gov_prep_cue"] == "destination"
    assert groups.preposition_cue(rode, 2, LEXICONS) == "path"
    assert groups.preposition_cue(rode, 6, LEXICONS) == "destination"
    assert groups.preposition_cue(rode, 5, LEXICONS) == ""


def test_lexicon_multiword_cues() -> None:
    came = make_doc(CAME)
    assert [groups.preposition_cue(came, i, LEXICONS) for i in (2, 3, 6, 7, 8)] == [
        "source", "source", "path", "path", "path",
    ]
    assert groups.lexicon(came[5], LEXICONS)["gov_prep_cue"] == "source"
    assert groups.lexicon(came[10], LEXICONS)["gov_prep_cue"] == "path"


def test_lexicon_phrasal_verb_direction_and_noun_class() -> None:
    set_out = make_doc(SET_OUT)
    assert groups.lexicon(set_out[1], LEXICONS)["verb_class"] == "departure"
    assert groups.lexicon(set_out[3], LEXICONS) == {"gazetteer": "O", "direction": True}
    departure = make_doc(DEPARTURE)
    assert groups.lexicon(departure[1], LEXICONS) == {"gazetteer": "O", "direction": False, "noun_class": "departure"}
    assert groups.lexicon(make_doc(REACHED)[3], LEXICONS)["noun_class"] == "-"


def test_lexicon_gazetteer_tags_through_the_featurizer(rode: Doc) -> None:
    gazetteer = Gazetteer([["Sallow", "Gap"], ["Quillon"]])
    assert gazetteer.tags(rode) == ["O", "O", "O", "O", "B", "I", "O", "B", "O"]
    featurizer = Featurizer(FeatureConfig(groups=["lexicon"]), LEXICONS, gazetteer)
    assert [f["gazetteer"] for f in featurizer.token_features(rode)] == ["O", "O", "O", "O", "B", "I", "O", "B", "O"]
    without = Featurizer(FeatureConfig(groups=["lexicon"]), LEXICONS)
    assert {f["gazetteer"] for f in without.token_features(rode)} == {"O"}
