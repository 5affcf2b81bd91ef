"""Error analysis: the hand-worked corpus kind by kind, and agreement with exact-mode counts."""

from __future__ import annotations

import json

from evaluation_samples import ROLES, hand_corpus, record_pairs
from hypothesis import given, settings

from trainer.corpus.records import Record
from trainer.evaluation.error_analysis import ErrorExample, error_analysis, word_before
from trainer.evaluation.scoring import score_corpus

# The hand corpus (evaluation_samples.hand_corpus, figures in test_scoring.py), instance by instance:
#   r1 left-mover We, rode-mover We         correct x2
#   r1 left-source Harrowgate / Harrowgate and         boundary   (overlap 10)
#   r1 rode-destination the lake / lake                 boundary   (overlap 4, beats "the" at 3)
#   r1 rode-destination "the"                           spurious   (one-to-one: the gold is taken)
#   r2 crossed-mover The mules, crossed-path the ford   missed x2  (no prediction)
#   r3 runs-mover The road                              spurious
#   r5 sailed-mover We, landed-mover We                 correct x2
#   r5 sailed-destination Pell / landed-destination Pell  wrong_trigger_link
#   r6 crossed-mover We                                 correct
#   r6 crossed-destination Arlo / crossed-path Arlo     wrong_role
# Errors by gold trigger (else predicted): crossed 3 (r2 x2, r6), rode 2, left 1, runs 1, sailed 1.
# Word before the gold argument (else predicted), alphabetic only: to 4 (r1 "the lake", r1 "the",
# r5 "Pell", r6 "Arlo"), crossed 1 (r2 "the ford"), left 1 (r1 "Harrowgate"); sentence-initial
# arguments have none.


def test_hand_corpus_kinds_confusion_and_top_words() -> None:
    analysis = error_analysis(*hand_corpus(), roles=ROLES, examples=2, top=3)
    assert analysis.counts == {"correct": 5, "boundary": 2, "wrong_role": 1, "wrong_trigger_link": 1,
                               "missed": 2, "spurious": 2}
    assert analysis.confusion == {
        "mover": {"mover": 5, "source": 0, "path": 0, "destination": 0, "none": 1},
        "source": {"mover": 0, "source": 1, "path": 0, "destination": 0, "none": 0},
        "path": {"mover": 0, "source": 0, "path": 0, "destination": 0, "none": 1},
        "destination": {"mover": 0, "source": 0, "path": 1, "destination": 2, "none": 0},
        "none": {"mover": 1, "source": 0, "path": 0, "destination": 1, "none": 0},
    }
    assert analysis.triggers == [("crossed", 3), ("rode", 2), ("left", 1)]
    assert analysis.prepositions == [("to", 4), ("crossed", 1), ("left", 1)]


def test_hand_corpus_examples() -> None:
    analysis = error_analysis(*hand_corpus(), roles=ROLES, examples=2)
    t1 = "We left Harrowgate and rode to the lake."
    assert analysis.examples["boundary"] == [
        ErrorExample("r1", t1, "boundary", "source", "left", "Harrowgate", "source", "left", "Harrowgate and"),
        ErrorExample("r1", t1, "boundary", "destination", "rode", "the lake", "destination", "rode", "lake"),
    ]
    assert analysis.examples["spurious"] == [
        ErrorExample("r1", t1, "spurious", None, None, None, "destination", "rode", "the"),
        ErrorExample("r3", "The road runs north.", "spurious", None, None, None, "mover", "runs", "The road"),
    ]
    assert analysis.examples["wrong_trigger_link"] == [
        ErrorExample("r5", "We sailed to Pell and landed.", "wrong_trigger_link", "destination", "sailed", "Pell",
                     "destination", "landed", "Pell")]
    assert analysis.examples["wrong_role"][0].predicted_role == "path"
    assert [e.gold_span for e in analysis.examples["missed"]] == ["The mules", "the ford"]
    assert len(analysis.examples["correct"]) == 2
    data = analysis.to_dict()
    assert list(data) == ["roles", "counts", "confusion", "triggers", "prepositions", "examples"]
    assert data["triggers"][0] == ["crossed", 3]
    assert json.loads(json.dumps(data)) == data


def test_word_before() -> None:
    text = "We went through the Sallow Gap (by boat) to Ærø."
    assert word_before(text, (16, 30)) == "through"
    assert word_before(text, (0, 2)) is None
    assert word_before(text, (35, 39)) is None  # "(by": not alphabetic
    assert word_before(text, (44, 47)) == "to"


@settings(max_examples=150, deadline=None)
@given(record_pairs())
def test_kinds_add_up_to_exact_counts(pair: tuple[list[Record], list[Record]]) -> None:
    # Each instance gets one kind, so exact-mode tp = correct and every other kind is one fp and/or one fn.
    analysis = error_analysis(*pair, roles=ROLES)
    micro = score_corpus(*pair, roles=ROLES, mode="exact").micro
    c = analysis.counts
    paired = c["boundary"] + c["wrong_role"] + c["wrong_trigger_link"]
    assert micro.tp == c["correct"]
    assert micro.fp == paired + c["spurious"]
    assert micro.fn == paired + c["missed"]
    assert sum(sum(row.values()) for row in analysis.confusion.values()) == sum(c.values())
