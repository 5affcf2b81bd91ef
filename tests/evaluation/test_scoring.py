"""Scoring (spec section 3): a hand-worked corpus, the error strings, invariants, and two reference libraries."""

from __future__ import annotations

import json
import random
from fractions import Fraction

import pytest
from evaluation_samples import ROLES, hand_corpus, record_pairs
from hypothesis import given, settings
from hypothesis import strategies as st
from seqeval.metrics import classification_report
from seqeval.scheme import IOB2
from sklearn.metrics import precision_recall_fscore_support

from trainer.corpus.records import Record
from trainer.errors import ConfigError, CorpusError
from trainer.evaluation.scoring import (
    Counts,
    RoleScore,
    count_corpus,
    count_record,
    f1_names,
    match_instances,
    merge_counts,
    prf,
    score_corpus,
    score_keys,
    scores_from_counts,
    span_scores_from_bio,
)


def f(x: Fraction | int) -> float:
    return float(Fraction(x))


# ---------------------------------------------------------------- prf and counts


def test_prf_values_and_undefined_cases() -> None:
    assert prf(3, 1, 2) == (0.75, 0.6, pytest.approx(2 / 3))
    assert prf(2, 0, 0) == (1.0, 1.0, 1.0)
    assert prf(0, 0, 0) == (0.0, 0.0, 0.0)  # nothing to find, nothing found: undefined, reported 0.0
    assert prf(0, 3, 0) == (0.0, 0.0, 0.0)  # recall undefined
    assert prf(0, 0, 3) == (0.0, 0.0, 0.0)  # precision undefined


def test_counts_add_and_sum() -> None:
    total = Counts(1, 2, 3) + Counts(4, 5, 6)
    assert total == Counts(5, 7, 9)
    assert sum([Counts(1, 0, 0), Counts(0, 1, 0), Counts(0, 0, 1)]) == Counts(1, 1, 1)
    assert (total.gold, total.predicted) == (14, 12)
    assert RoleScore.from_counts(Counts(1, 1, 3)) == RoleScore(0.5, 0.25, 1 / 3, 1, 1, 3, 4, 2)


# ---------------------------------------------------------------- the hand-worked corpus
#
# Gold and predictions are in evaluation_samples.hand_corpus(); an instance is
# (trigger span, role, argument span).
#
# r1 "We left Harrowgate and rode to the lake."
#    gold: left(3,7)  mover We(0,2), source Harrowgate(8,18)
#          rode(23,27) mover We(0,2), destination "the lake"(31,39)
#    pred: left(3,7)  mover (0,2) = gold, source "Harrowgate and"(8,22): exact no, overlap yes
#          rode(23,27) mover (0,2) = gold, destination "lake"(35,39) and "the"(31,34).
#          Both overlap the gold destination: overlap sizes are trigger 4 + argument 4 = 8
#          and 4 + 3 = 7, so "lake" takes it and "the" stays a false positive (one-to-one).
# r2 "The mules crossed the ford." gold: crossed mover, path; no prediction record -> 2 fn, trigger fn.
# r3 "The road runs north." gold [] ; pred runs(9,13) mover (0,8) -> mover fp, trigger fp.
# r4 unannotated: skipped and counted.
# r5 "We sailed to Pell and landed." gold: sailed mover We, destination Pell; landed mover We.
#    pred: sailed mover We; landed mover We, destination Pell -> Pell on the wrong trigger:
#    fp + fn with the link in both modes (triggers 3-9 and 22-28 do not overlap); tp without the link.
# r6 "We crossed to Arlo." gold: crossed mover We, destination Arlo; pred: mover We, *path* Arlo.
#
# exact, linked           tp fp fn   P     R     F1
#   mover    r1 2tp, r2 fn, r3 fp, r5 2tp, r6 tp
#                          5  1  1   5/6   5/6   5/6
#   source   r1 fp+fn      0  1  1   0     0     0
#   path     r2 fn, r6 fp  0  1  1   0     0     0
#   destination r1 2fp+fn, r5 fp+fn, r6 fn
#                          0  3  3   0     0     0
#   micro                  5  6  6   5/11  5/11  5/11
#   macro F1 = (5/6 + 0 + 0 + 0) / 4 = 5/24
#   trigger  r1 2tp, r2 fn, r3 fp, r5 2tp, r6 tp
#                          5  1  1   5/6   5/6   5/6
# exact, unlinked (role, argument) - duplicates collapse: "We" is one mover instance per record
#   mover    r1 tp, r2 fn, r3 fp, r5 tp, r6 tp
#                          3  1  1   3/4   3/4   3/4
#   destination r1 2fp+fn, r5 tp, r6 fn
#                          1  2  2   1/3   1/3   1/3
#   micro    (3+0+0+1, 1+1+1+2, 1+1+1+2)
#                          4  5  5   4/9   4/9   4/9
# overlap, linked
#   source   r1 tp         1  0  0   1     1     1
#   destination r1 tp+fp ("the"), r5 fp+fn, r6 fn
#                          1  2  2   1/3   1/3   1/3
#   micro    (5+1+0+1, 1+0+1+2, 1+0+1+2)
#                          7  4  4   7/11  7/11  7/11
#   macro F1 = (5/6 + 1 + 0 + 1/3) / 4 = 13/24


def test_hand_corpus_exact() -> None:
    gold, pred = hand_corpus()
    scores = score_corpus(gold, pred, roles=ROLES, mode="exact")
    assert (scores.records, scores.unannotated) == (5, 1)
    assert scores.per_role["mover"] == RoleScore(f(Fraction(5, 6)), f(Fraction(5, 6)), f(Fraction(5, 6)), 5, 1, 1, 6, 6)
    assert scores.per_role["source"] == RoleScore(0.0, 0.0, 0.0, 0, 1, 1, 1, 1)
    assert scores.per_role["path"] == RoleScore(0.0, 0.0, 0.0, 0, 1, 1, 1, 1)
    assert scores.per_role["destination"] == RoleScore(0.0, 0.0, 0.0, 0, 3, 3, 3, 3)
    assert scores.micro == RoleScore(f(Fraction(5, 11)), f(Fraction(5, 11)), f(Fraction(5, 11)), 5, 6, 6, 11, 11)
    assert scores.macro.f1 == pytest.approx(5 / 24)
    assert scores.macro.precision == pytest.approx(5 / 24)
    assert (scores.trigger.tp, scores.trigger.fp, scores.trigger.fn) == (5, 1, 1)
    assert (scores.unlinked["mover"].tp, scores.unlinked["mover"].fp, scores.unlinked["mover"].fn) == (3, 1, 1)
    assert scores.unlinked["destination"].f1 == pytest.approx(1 / 3)
    assert (scores.unlinked_micro.tp, scores.unlinked_micro.fp, scores.unlinked_micro.fn) == (4, 5, 5)
    assert scores.undefined == []


def test_hand_corpus_overlap() -> None:
    gold, pred = hand_corpus()
    scores = score_corpus(gold, pred, roles=ROLES, mode="overlap")
    assert scores.per_role["mover"].f1 == pytest.approx(5 / 6)
    assert scores.per_role["source"] == RoleScore(1.0, 1.0, 1.0, 1, 0, 0, 1, 1)
    assert (scores.per_role["destination"].tp, scores.per_role["destination"].fp,
            scores.per_role["destination"].fn) == (1, 2, 2)
    assert (scores.micro.tp, scores.micro.fp, scores.micro.fn) == (7, 4, 4)
    assert scores.micro.f1 == pytest.approx(7 / 11)
    assert scores.macro.f1 == pytest.approx(13 / 24)


def test_one_to_one_two_predictions_inside_one_gold() -> None:
    gold = {((23, 27), (31, 39))}
    pred = {((23, 27), (35, 39)), ((23, 27), (31, 34))}
    assert match_instances(gold, pred, "overlap") == [(((23, 27), (31, 39)), ((23, 27), (35, 39)))]
    assert match_instances(gold, pred, "exact") == []


def test_overlap_ties_go_to_exact_then_position() -> None:
    # (0,8) overlaps gold (0,4) by 4 characters, as much as the exact (0,4) does: the exact pair wins.
    gold = {((0, 1), (0, 4))}
    assert match_instances(gold, {((0, 1), (0, 8)), ((0, 1), (0, 4))}, "overlap") == [(((0, 1), (0, 4)),) * 2]
    # Two equal-size non-exact candidates: the earlier predicted span wins.
    gold = {((0, 1), (2, 6))}
    assert match_instances(gold, {((0, 1), (4, 8)), ((0, 1), (0, 4))}, "overlap") == [
        (((0, 1), (2, 6)), ((0, 1), (0, 4)))]


def test_count_record_modes_links_and_empty_prediction() -> None:
    gold, pred = hand_corpus()
    r1_gold, r1_pred = gold[0], pred[0]
    assert count_record(r1_gold, r1_pred, roles=ROLES, mode="exact") == {
        "mover": Counts(2, 0, 0), "source": Counts(0, 1, 1), "path": Counts(0, 0, 0),
        "destination": Counts(0, 2, 1), "trigger": Counts(2, 0, 0)}
    assert count_record(r1_gold, r1_pred, roles=ROLES, mode="overlap") == {
        "mover": Counts(2, 0, 0), "source": Counts(1, 0, 0), "path": Counts(0, 0, 0),
        "destination": Counts(1, 1, 0), "trigger": Counts(2, 0, 0)}
    assert count_record(r1_gold, r1_pred, roles=ROLES, mode="exact", link=False)["mover"] == Counts(1, 0, 0)
    r5_gold, r5_pred = gold[4], pred[2]
    assert count_record(r5_gold, r5_pred, roles=ROLES, mode="overlap")["destination"] == Counts(0, 1, 1)
    assert count_record(r5_gold, r5_pred, roles=ROLES, mode="overlap", link=False)["destination"] == Counts(1, 0, 0)
    r2 = gold[1]
    assert count_record(r2, r2.with_events(None), roles=ROLES) == {
        "mover": Counts(0, 0, 1), "source": Counts(), "path": Counts(0, 0, 1), "destination": Counts(),
        "trigger": Counts(0, 0, 1)}


def test_corpus_counts_units_and_to_dict() -> None:
    gold, pred = hand_corpus()
    counts = count_corpus(gold, pred, roles=ROLES)
    assert list(counts.by_record) == ["r1", "r2", "r3", "r5", "r6"]
    assert counts.unannotated == ["r4"]
    assert list(counts.units(by="doc")) == ["log-a", "log-b"]
    assert counts.units(by="doc")["log-b"]["mover"] == Counts(3, 0, 0)
    assert list(counts.units(by="record")) == ["r1", "r2", "r3", "r5", "r6"]
    data = counts.scores().to_dict()
    assert list(data) == ["mode", "records", "unannotated_skipped", "roles", "micro", "macro", "trigger",
                          "unlinked", "unlinked_micro", "undefined"]
    assert data["micro"] == {"precision": 0.454545, "recall": 0.454545, "f1": 0.454545,
                             "tp": 5, "fp": 6, "fn": 6, "gold": 11, "predicted": 11}
    assert data["macro"] == {"precision": 0.208333, "recall": 0.208333, "f1": 0.208333}
    assert json.loads(json.dumps(data)) == data
    assert list(counts.scores().f1s()) == list(f1_names(ROLES))


def test_undefined_metrics_are_named() -> None:
    gold, pred = hand_corpus()
    scores = score_corpus(gold[:2], pred[:1], roles=ROLES)  # r1 and r2: path is never predicted
    assert scores.undefined == [
        "no predictions for role path: its precision is undefined (reported as 0.0)",
    ]
    empty = score_corpus([gold[2]], [], roles=("mover", "source"))
    assert empty.undefined == [
        "role mover has no gold instances: its recall is undefined (reported as 0.0)",
        "no predictions for role mover: its precision is undefined (reported as 0.0)",
        "role source has no gold instances: its recall is undefined (reported as 0.0)",
        "no predictions for role source: its precision is undefined (reported as 0.0)",
        "trigger has no gold instances: its recall is undefined (reported as 0.0)",
        "no predictions for trigger: its precision is undefined (reported as 0.0)",
        "macro averages include roles with neither gold nor predictions, counted as F1 0.0",
    ]
    nothing = score_corpus([gold[3]], [], roles=("mover",))
    assert (nothing.records, nothing.unannotated) == (0, 1)
    assert nothing.undefined[0] == "no annotated gold records were scored: every metric is undefined (reported as 0.0)"


def test_errors_name_ids_and_fix() -> None:
    gold, pred = hand_corpus()
    strays = [Record(f"x{i}", "d", "t", ()) for i in range(7)]
    with pytest.raises(CorpusError) as info:
        score_corpus(gold, pred + strays)
    assert str(info.value) == (
        "7 predicted record(s) have ids not in the gold records: 'x0', 'x1', 'x2', 'x3', 'x4' and 2 more\n"
        "  fix: score predictions against the gold file they were made from, or drop those records")
    with pytest.raises(CorpusError, match=r"^1 prediction\(s\) have a text that differs from the gold record "
                                          r"with the same id: 'r3'\n  fix: predict on the gold"):
        score_corpus(gold, [pred[0], Record("r3", "log-a", "changed", ())])
    with pytest.raises(CorpusError, match=r"^1 id\(s\) occur more than once in the predicted records: 'r1'"):
        score_corpus(gold, [pred[0], pred[0]])
    with pytest.raises(ConfigError, match=r"^mode='fuzzy' is not a scoring mode\n  fix: use one of: exact, overlap"):
        score_corpus(gold, pred, mode="fuzzy")
    with pytest.raises(ConfigError, match=r"^role name\(s\) \['trigger'\] are reserved"):
        score_corpus(gold, pred, roles=("mover", "trigger"))
    with pytest.raises(CorpusError, match=r"^gold record 'r4' is unannotated"):
        count_record(gold[3], gold[3])


def test_scores_do_not_depend_on_record_order() -> None:
    gold, pred = hand_corpus()
    assert score_corpus(gold[::-1], pred[::-1], mode="overlap").to_dict() == score_corpus(
        gold, pred, mode="overlap").to_dict()


def test_merge_counts_pools_folds_and_refuses_a_record_twice() -> None:
    gold, pred = hand_corpus()
    whole = count_corpus(gold, pred)
    folds = [count_corpus([g for g in gold if g.doc == doc], [p for p in pred if p.doc == doc])
             for doc in ("log-a", "log-b")]
    assert merge_counts(folds).scores().to_dict() == whole.scores().to_dict()
    with pytest.raises(CorpusError, match=r"^3 record\(s\) were scored in two folds: 'r1', 'r2', 'r3'\n"):
        merge_counts([whole, folds[0], folds[1]])


# ---------------------------------------------------------------- invariants on random corpora


@settings(max_examples=150, deadline=None)
@given(record_pairs())
def test_overlap_never_scores_below_exact(pair: tuple[list[Record], list[Record]]) -> None:
    gold, pred = pair
    exact = count_corpus(gold, pred, roles=ROLES, mode="exact").units(by="doc")
    overlap = count_corpus(gold, pred, roles=ROLES, mode="overlap").units(by="doc")
    for doc, counts in exact.items():
        for key in score_keys(ROLES):
            assert overlap[doc][key].tp >= counts[key].tp
            assert overlap[doc][key].gold == counts[key].gold
            assert overlap[doc][key].predicted == counts[key].predicted


@settings(max_examples=100, deadline=None)
@given(record_pairs(), st.sampled_from(["exact", "overlap"]))
def test_pooling_by_doc_or_record_gives_the_same_scores(pair: tuple[list[Record], list[Record]], mode: str) -> None:
    counts = count_corpus(*pair, roles=ROLES, mode=mode)
    by_doc = scores_from_counts(counts.units(by="doc"), ROLES, mode=mode, records=len(counts.by_record))
    assert by_doc.to_dict() == counts.scores().to_dict()


@settings(max_examples=100, deadline=None)
@given(record_pairs())
def test_gold_against_itself_is_perfect(pair: tuple[list[Record], list[Record]]) -> None:
    gold, _ = pair
    for mode in ("exact", "overlap"):
        scores = score_corpus(gold, gold, roles=ROLES, mode=mode)
        for role in ROLES:
            score = scores.per_role[role]
            assert (score.fp, score.fn) == (0, 0)
            assert score.f1 == (1.0 if score.gold else 0.0)


# ---------------------------------------------------------------- BIO tags: seqeval and scikit-learn

LABELS = ("mover", "path", "destination")


def random_iob2(rng: random.Random) -> tuple[list[list[str]], list[list[str]]]:
    """Valid IOB2 gold and predicted sentences; predictions copy gold tags often, so chunks match."""
    def allowed(previous: str) -> list[str]:
        tags = ["O", *(f"B-{label}" for label in LABELS)]
        if previous != "O":
            tags.append("I-" + previous[2:])
        return tags

    true_seqs, pred_seqs = [], []
    for _ in range(rng.randint(1, 4)):
        true: list[str] = []
        pred: list[str] = []
        for _ in range(rng.randint(0, 12)):
            true.append(rng.choice(allowed(true[-1] if true else "O")))
            options = allowed(pred[-1] if pred else "O")
            pred.append(true[-1] if true[-1] in options and rng.random() < 0.75 else rng.choice(options))
        true_seqs.append(true)
        pred_seqs.append(pred)
    return true_seqs, pred_seqs


@settings(max_examples=200, deadline=None)
@given(st.randoms(use_true_random=False).map(random_iob2))
def test_bio_chunk_scores_equal_seqeval_strict(pair: tuple[list[list[str]], list[list[str]]]) -> None:
    # Reference: seqeval 1.2.2, seqeval.metrics.classification_report(mode="strict", scheme=IOB2),
    # which scores chunks as the CoNLL conlleval script does (exact label, start and end).
    true_seqs, pred_seqs = pair
    ours = span_scores_from_bio(true_seqs, pred_seqs)
    labels = [label for label in ours if label != "micro"]
    if not labels:
        return  # no chunk on either side: seqeval has nothing to report
    theirs = classification_report(true_seqs, pred_seqs, mode="strict", scheme=IOB2, output_dict=True,
                                   zero_division=0)
    assert sorted(k for k in theirs if not k.endswith(" avg")) == labels
    for ours_key, theirs_key in [(label, label) for label in labels] + [("micro", "micro avg")]:
        score, ref = ours[ours_key], theirs[theirs_key]
        assert score.precision == pytest.approx(ref["precision"])
        assert score.recall == pytest.approx(ref["recall"])
        assert score.f1 == pytest.approx(ref["f1-score"])
        assert score.gold == ref["support"]


def test_bio_scores_refuse_invalid_iob2_and_ragged_sentences() -> None:
    assert span_scores_from_bio([["B-path", "I-path", "O"]], [["B-path", "O", "O"]])["micro"] == RoleScore(
        0.0, 0.0, 0.0, 0, 1, 1, 1, 1)
    with pytest.raises(CorpusError, match=r"^predicted sequence 0, token 1: 'I-path' after 'O' is not valid IOB2"):
        span_scores_from_bio([["O", "O"]], [["O", "I-path"]])
    with pytest.raises(CorpusError, match=r"^sentence 0: 2 gold tags but 1 predicted tags"):
        span_scores_from_bio([["O", "O"]], [["O"]])


def test_token_level_prf_equals_sklearn() -> None:
    # Reference: scikit-learn, sklearn.metrics.precision_recall_fscore_support with an explicit label
    # list (average=None per label, average="micro" pooled over those labels, "O" left out).
    rng = random.Random(7)
    tags = ["O", "mover", "source", "path", "destination"]
    labels = tags[1:]
    for _ in range(50):
        y_true = [rng.choice(tags) for _ in range(rng.randint(1, 40))]
        y_pred = [t if rng.random() < 0.5 else rng.choice(tags) for t in y_true]
        counts = {label: Counts(sum(t == p == label for t, p in zip(y_true, y_pred)),
                                sum(p == label != t for t, p in zip(y_true, y_pred)),
                                sum(t == label != p for t, p in zip(y_true, y_pred))) for label in labels}
        precision, recall, f1, support = precision_recall_fscore_support(
            y_true, y_pred, labels=labels, average=None, zero_division=0)
        for i, label in enumerate(labels):
            assert prf(counts[label].tp, counts[label].fp, counts[label].fn) == pytest.approx(
                (precision[i], recall[i], f1[i]))
            assert counts[label].gold == support[i]
        micro = precision_recall_fscore_support(y_true, y_pred, labels=labels, average="micro", zero_division=0)
        pooled = sum(counts.values(), Counts())
        assert prf(pooled.tp, pooled.fp, pooled.fn) == pytest.approx(micro[:3])
