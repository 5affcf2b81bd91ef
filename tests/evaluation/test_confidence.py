"""Reliability bins, expected calibration error and precision-recall curves of held-out confidences."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from evaluation_samples import ROLES, event

from trainer.corpus.records import Record
from trainer.errors import ConfigError
from trainer.evaluation.confidence import (ALL_ROLES, Scored, bin_indices, confidence_report, precision_recall,
                                           reliability, scored_predictions)

TEXT = "We left Harrowgate and rode to the lake."  # We 0-2, left 3-7, Harrowgate 8-18, rode 23-27, the lake 31-39


def confident(e, trigger: float, *roles: float):
    return dataclasses.replace(e, confidence=trigger, roles=tuple(dataclasses.replace(a, confidence=c)
                                                                   for a, c in zip(e.roles, roles)))


def hand_pair() -> tuple[list[Record], list[Record]]:
    """Gold: left (mover We, source Harrowgate), rode (mover We, destination the lake).

    Predicted: left 0.9 (mover We 0.8 right, source "Harrowgate and" 0.6 wrong under exact, right under overlap),
    rode 0.4 (destination "lake" 0.3, overlap only), and a spurious trigger "and" 0.7 with mover We 0.5.
    """
    gold = [Record("r1", "log-1", TEXT, (event((3, 7), ("mover", (0, 2)), ("source", (8, 18))),
                                         event((23, 27), ("mover", (0, 2)), ("destination", (31, 39)))))]
    pred = [gold[0].with_events([
        confident(event((3, 7), ("mover", (0, 2)), ("source", (8, 22))), 0.9, 0.8, 0.6),
        confident(event((23, 27), ("destination", (35, 39))), 0.4, 0.3),
        confident(event((19, 22), ("mover", (0, 2))), 0.7, 0.5),
    ])]
    return gold, pred


def test_scored_predictions_by_hand() -> None:
    gold, pred = hand_pair()
    exact = scored_predictions(gold, pred, roles=ROLES, mode="exact")
    assert sorted(zip(exact["trigger"].confidence, exact["trigger"].correct)) == [(0.4, True), (0.7, False), (0.9, True)]
    assert exact["trigger"].gold == 2
    assert sorted(zip(exact["mover"].confidence, exact["mover"].correct)) == [(0.5, False), (0.8, True)]
    assert exact["mover"].gold == 2
    assert list(zip(exact["source"].confidence, exact["source"].correct)) == [(0.6, False)]
    overlap = scored_predictions(gold, pred, roles=ROLES, mode="overlap")
    assert list(zip(overlap["source"].confidence, overlap["source"].correct)) == [(0.6, True)]
    assert list(zip(overlap["destination"].confidence, overlap["destination"].correct)) == [(0.3, True)]


def test_predictions_without_confidence_are_left_out_and_counted() -> None:
    gold, pred = hand_pair()
    bare = [pred[0].with_events([dataclasses.replace(e, confidence=None) for e in pred[0].events])]
    scored = scored_predictions(gold, bare, roles=ROLES)
    assert scored["trigger"].confidence.size == 0 and scored["trigger"].without_confidence == 3
    assert reliability(scored["trigger"])["ece"] is None


def test_bins_and_reliability_equal_scikit_learn_calibration_curve() -> None:
    # Reference library: sklearn.calibration.calibration_curve(strategy="uniform") gives, per non-empty bin,
    # the share of positives (prob_true) and the mean predicted probability (prob_pred).
    calibration = pytest.importorskip("sklearn.calibration")
    rng = np.random.default_rng(11)
    edges = np.linspace(0, 1, 11)
    confidence = np.concatenate([rng.uniform(0, 1, 400), edges, [0.0, 1.0, 0.35, 0.35]])  # edges test the ties
    correct = rng.uniform(0, 1, confidence.size) < confidence
    for bins in (5, 10, 15):
        ours = reliability(Scored(confidence, correct, gold=int(correct.sum())), bins)
        prob_true, prob_pred = calibration.calibration_curve(correct, confidence, n_bins=bins, strategy="uniform")
        assert [b["accuracy"] for b in ours["bins"]] == pytest.approx(prob_true, abs=1e-6)
        assert [b["mean_confidence"] for b in ours["bins"]] == pytest.approx(prob_pred, abs=1e-6)
        assert sum(b["count"] for b in ours["bins"]) == confidence.size
        # ECE: the instance-weighted mean of |share correct - mean confidence| (common practice, Guo et al. 2017).
        counts = np.array([b["count"] for b in ours["bins"]])
        expected = float(np.sum(counts * np.abs(prob_true - prob_pred)) / confidence.size)
        assert ours["ece"] == pytest.approx(expected, abs=1e-6)


def test_bin_edges_go_to_the_lower_bin_and_one_to_the_last() -> None:
    assert list(bin_indices(np.array([0.0, 0.1, 0.1000001, 0.5, 0.95, 1.0]), 10)) == [0, 0, 1, 4, 9, 9]
    with pytest.raises(ConfigError, match="must lie in"):
        bin_indices(np.array([1.2]))
    with pytest.raises(ConfigError, match="at least 1"):
        bin_indices(np.array([0.5]), 0)


def test_precision_recall_by_hand_and_against_scikit_learn() -> None:
    # Triggers of hand_pair: 0.9 right, 0.7 wrong, 0.4 right; 2 gold triggers.
    gold, pred = hand_pair()
    curve = precision_recall(scored_predictions(gold, pred, roles=ROLES)["trigger"])
    assert [(p["threshold"], p["kept"], p["correct"]) for p in curve["points"]] == [(0.9, 1, 1), (0.7, 2, 1), (0.4, 3, 2)]
    assert [p["precision"] for p in curve["points"]] == pytest.approx([1.0, 0.5, 2 / 3], abs=1e-6)
    assert [p["recall"] for p in curve["points"]] == pytest.approx([0.5, 0.5, 1.0])
    # F1 = 2tp / (kept + gold): 2/3, 2/4, 4/5; the best threshold is 0.4.
    assert curve["best"]["threshold"] == 0.4 and curve["best"]["f1"] == pytest.approx(0.8)
    # Reference library: sklearn.metrics.precision_recall_curve on the predictions alone gives the same
    # precision per threshold; its recall is over predicted correct ones, ours over all gold, so they scale.
    metrics = pytest.importorskip("sklearn.metrics")
    rng = np.random.default_rng(4)
    confidence = np.round(rng.uniform(0, 1, 300), 2)  # rounding makes ties
    correct = rng.uniform(0, 1, 300) < confidence
    gold = int(correct.sum()) + 40  # 40 gold instances no prediction found
    ours = precision_recall(Scored(confidence, correct, gold))
    precision, recall, thresholds = metrics.precision_recall_curve(correct, confidence)
    theirs = {round(float(t), 6): (p, r) for p, r, t in zip(precision, recall, thresholds)}
    for point in ours["points"]:
        p, r = theirs[point["threshold"]]
        assert point["precision"] == pytest.approx(p, abs=1e-6)
        assert point["recall"] == pytest.approx(r * correct.sum() / gold, abs=1e-6)


def test_confidence_report_has_every_label_and_pools_the_roles() -> None:
    gold, pred = hand_pair()
    report = confidence_report(gold, pred, roles=ROLES)
    assert list(report["calibration"]) == ["trigger", *ROLES, ALL_ROLES]
    assert report["calibration"][ALL_ROLES]["instances"] == 4  # We 0.8, Harrowgate and 0.6, lake 0.3, We 0.5
    assert report["thresholds"][ALL_ROLES]["gold"] == 4
    assert report["calibration"]["path"] == {"instances": 0, "without_confidence": 0, "ece": None, "bins": []}
    assert report["thresholds"]["path"]["best"] is None
