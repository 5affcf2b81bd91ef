"""What held-out confidences are worth: reliability (calibration) and precision-recall curves.

Each predicted trigger and role instance that carries a ``confidence`` is one
point: its confidence and whether it is correct (matched to a gold instance
of the same kind under the scoring mode, as :func:`~trainer.evaluation.scoring.match_instances`
pairs them). Predictions without a confidence (the rule baseline) are left
out and counted.

Reliability: the confidences are cut into ``bins`` equal-width bins of
``[0, 1]``; a confidence on an inner edge goes to the lower bin, and 1.0 to
the last (the binning of scikit-learn's ``calibration_curve`` with
``strategy="uniform"``). Each non-empty bin gives its count, mean confidence
and share correct. The expected calibration error (ECE) is the mean over
instances of ``|share correct - mean confidence|`` of their bin.

Precision-recall: keeping the predictions with confidence at or above a
threshold, precision is the share of kept ones that are correct and recall
the correct kept ones over every gold instance (predicted or not). One point
per distinct confidence, highest first; the F1-optimal threshold is the one
with the largest F1 (the highest threshold among ties).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from trainer.config import DEFAULT_MODE
from trainer.corpus.records import Record
from trainer.errors import ConfigError
from trainer.evaluation.scoring import (TRIGGER, check_roles, match_instances, pair_by_id, role_instances,
                                        trigger_instances)
from trainer.models.calibration import threshold_sweep

DEFAULT_BINS = 10
ALL_ROLES = "all_roles"
DIGITS = 6


@dataclass
class Scored:
    """The confidences of one kind of prediction, whether each is correct, and the gold total."""

    confidence: np.ndarray
    correct: np.ndarray
    gold: int
    without_confidence: int = 0

    def __add__(self, other: "Scored") -> "Scored":
        return Scored(np.concatenate([self.confidence, other.confidence]), np.concatenate([self.correct, other.correct]),
                      self.gold + other.gold, self.without_confidence + other.without_confidence)


def _confidences(record: Record, label: str) -> dict[tuple, float | None]:
    """Instance -> confidence of the record's triggers (``label == "trigger"``) or role instances."""
    out: dict[tuple, float | None] = {}
    for event in record.events or ():
        trigger = (int(event.trigger[0]), int(event.trigger[1]))
        if label == TRIGGER:
            out[(trigger,)] = event.confidence
        for argument in event.roles:
            if argument.role == label:
                out[(trigger, (int(argument.span[0]), int(argument.span[1])))] = argument.confidence
    return out


def scored_predictions(gold: Sequence[Record], predicted: Sequence[Record], *, roles: Sequence[str],
                       mode: str = DEFAULT_MODE) -> dict[str, Scored]:
    """``{"trigger": Scored, role: Scored, ...}`` over every annotated gold record and its prediction."""
    roles = check_roles(roles)
    pairs, _ = pair_by_id(gold, predicted)
    found: dict[str, list[tuple[float, bool]]] = {label: [] for label in (TRIGGER, *roles)}
    gold_total = dict.fromkeys(found, 0)
    missing = dict.fromkeys(found, 0)
    for g, p in pairs:
        for label in found:
            gold_set = trigger_instances(g) if label == TRIGGER else role_instances(g, label)
            pred_set = trigger_instances(p) if label == TRIGGER else role_instances(p, label)
            matched = {pred for _, pred in match_instances(gold_set, pred_set, mode)}
            gold_total[label] += len(gold_set)
            for instance, confidence in sorted(_confidences(p, label).items()):
                if confidence is None:
                    missing[label] += 1
                else:
                    found[label].append((float(confidence), instance in matched))
    return {label: Scored(np.array([c for c, _ in items], dtype=float), np.array([k for _, k in items], dtype=bool),
                          gold_total[label], missing[label]) for label, items in found.items()}


def bin_indices(confidence: np.ndarray, bins: int = DEFAULT_BINS) -> np.ndarray:
    """The bin of each confidence: equal-width bins of [0, 1], inner edges to the lower bin, 1.0 to the last."""
    if bins < 1:
        raise ConfigError(f"bins must be at least 1, got {bins}", "use e.g. bins=10")
    confidence = np.asarray(confidence, dtype=float)
    if confidence.size and (confidence.min() < 0 or confidence.max() > 1):
        raise ConfigError("confidences must lie in [0, 1]", "pass probabilities, not scores or logits")
    inner = np.linspace(0.0, 1.0, bins + 1)[1:-1]
    return np.searchsorted(inner, confidence, side="left")


def reliability(scored: Scored, bins: int = DEFAULT_BINS) -> dict[str, Any]:
    """Non-empty bins (edges, count, mean confidence, share correct) and the expected calibration error."""
    index = bin_indices(scored.confidence, bins)
    edges = np.linspace(0.0, 1.0, bins + 1)
    rows, ece = [], 0.0
    for b in range(bins):
        inside = index == b
        n = int(inside.sum())
        if n == 0:
            continue
        mean_confidence = float(scored.confidence[inside].mean())
        accuracy = float(scored.correct[inside].mean())
        ece += n * abs(accuracy - mean_confidence)
        rows.append({"low": round(float(edges[b]), DIGITS), "high": round(float(edges[b + 1]), DIGITS), "count": n,
                     "mean_confidence": round(mean_confidence, DIGITS), "accuracy": round(accuracy, DIGITS)})
    total = len(scored.confidence)
    return {"instances": total, "without_confidence": scored.without_confidence,
            "ece": round(ece / total, DIGITS) if total else None, "bins": rows}


def precision_recall(scored: Scored) -> dict[str, Any]:
    """The precision-recall curve over thresholds (one point per distinct confidence) and the F1-optimal threshold."""
    points = []
    for threshold, kept, right in zip(*threshold_sweep(scored.confidence, scored.correct)):
        kept, right = int(kept), int(right)
        precision = right / kept
        recall = right / scored.gold if scored.gold else 0.0
        f1 = 2 * right / (kept + scored.gold) if kept + scored.gold else 0.0
        points.append({"threshold": round(float(threshold), DIGITS), "kept": kept, "correct": right,
                       "precision": round(precision, DIGITS), "recall": round(recall, DIGITS), "f1": round(f1, DIGITS)})
    best = max(points, key=lambda p: (p["f1"], p["threshold"]), default=None)
    return {"gold": scored.gold, "points": points, "best": best}


def pooled_roles(scored: dict[str, Scored], roles: Sequence[str]) -> Scored:
    """Every role's points and gold count pooled (the ``all_roles`` label of a report)."""
    roles = check_roles(roles)
    return sum((scored[role] for role in roles[1:]), scored[roles[0]])


def confidence_report(gold: Sequence[Record], predicted: Sequence[Record], *, roles: Sequence[str],
                      mode: str = DEFAULT_MODE, bins: int = DEFAULT_BINS) -> dict[str, Any]:
    """Reliability and precision-recall for the trigger, each role and all roles pooled."""
    scored = scored_predictions(gold, predicted, roles=roles, mode=mode)
    scored[ALL_ROLES] = pooled_roles(scored, roles)
    return {"mode": mode, "bins": bins,
            "calibration": {label: reliability(s, bins) for label, s in scored.items()},
            "thresholds": {label: precision_recall(s) for label, s in scored.items()}}
