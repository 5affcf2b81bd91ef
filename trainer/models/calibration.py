"""Calibrated confidences and decision thresholds, learned on inner folds of the training docs and kept in the model.

A trained extractor's confidences are probabilities of its own estimators,
often over- or under-confident on new text. With ``[confidence]`` in the
config, :class:`~trainer.models.extractor.MotionExtractor` trains a fresh
extractor on each inner fold of its training docs (docs never split), predicts
the held-out target docs, and from those held-out predictions learns, per
label (``trigger`` and each role):

- a calibration map from confidence to the observed share correct: isotonic
  regression (monotone, non-parametric; Zadrozny and Elkan 2002) or Platt
  scaling (a logistic curve over the logit of the confidence; Platt 1999);
- a decision threshold on the calibrated confidence: the F1-optimal one, or
  the lowest one whose held-out precision reaches a target (the most recall
  at that precision).

A held-out prediction is correct when the same token range (and, for a role,
the same role on a correctly found trigger) is in the gold annotation: the
exact match the stages are trained for. Both are applied at prediction time,
so every later use of the model file (extraction, scoring, suggestions) sees
calibrated confidences and thresholded predictions.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

TRIGGER = "trigger"
_EDGE = 1e-6  # keeps logits finite for confidences of exactly 0 or 1

TokenRange = tuple[int, int]


@dataclass
class HeldOut:
    """One label's held-out confidences, whether each prediction was correct, and how many gold instances there were."""

    confidence: list[float] = field(default_factory=list)
    correct: list[bool] = field(default_factory=list)
    gold: int = 0


def held_out_points(gold_triggers: Sequence[Sequence[TokenRange]],
                    gold_roles: Sequence[Sequence[Sequence[tuple[int, int, str]]]],
                    predicted_triggers: Sequence[Sequence[tuple[int, int, float]]],
                    predicted_roles: Sequence[Sequence[Sequence[tuple[int, int, str, float]]]],
                    roles: Sequence[str]) -> dict[str, HeldOut]:
    """Per label, each predicted instance's confidence and correctness (exact token ranges) plus the gold count."""
    points = {label: HeldOut() for label in (TRIGGER, *roles)}
    for triggers, events, guesses, guessed_roles in zip(gold_triggers, gold_roles, predicted_triggers, predicted_roles):
        gold_by_trigger = {tuple(t): {(f, e, r) for f, e, r in event} for t, event in zip(triggers, events)}
        points[TRIGGER].gold += len(gold_by_trigger)
        for event in gold_by_trigger.values():
            for _, _, role in event:
                if role in points:
                    points[role].gold += 1
        for (first, end, probability), arguments in zip(guesses, guessed_roles):
            gold_event = gold_by_trigger.get((first, end))
            points[TRIGGER].confidence.append(float(probability))
            points[TRIGGER].correct.append(gold_event is not None)
            for f, e, role, p in arguments:
                if role in points:
                    points[role].confidence.append(float(p))
                    points[role].correct.append(gold_event is not None and (f, e, role) in gold_event)
    return points


class Calibrator:
    """A monotone map from a stage's confidence to a calibrated probability (scikit-learn style: fit, then transform)."""

    def __init__(self, method: str = "isotonic") -> None:
        self.method = method

    def fit(self, confidence: Sequence[float], correct: Sequence[bool]) -> "Calibrator":
        x, y = np.asarray(confidence, dtype=float), np.asarray(correct, dtype=float)
        if not len(y):
            raise ValueError("a calibrator needs at least one held-out prediction")
        self.constant_ = None
        if len(set(y.tolist())) < 2:  # all right or all wrong: nothing to fit a curve to
            self.constant_ = float(y.mean())
        elif self.method == "isotonic":
            from sklearn.isotonic import IsotonicRegression

            self.model_ = IsotonicRegression(y_min=0.0, y_max=1.0, out_of_bounds="clip").fit(x, y)
        else:
            from sklearn.linear_model import LogisticRegression

            self.model_ = LogisticRegression(C=1e6).fit(_logit(x), y)
        return self

    def transform(self, confidence: Sequence[float]) -> np.ndarray:
        x = np.asarray(confidence, dtype=float)
        if self.constant_ is not None:
            return np.full(x.shape, self.constant_)
        if self.method == "isotonic":
            return np.clip(self.model_.predict(x), 0.0, 1.0)
        return self.model_.predict_proba(_logit(x))[:, 1]


def _logit(x: np.ndarray) -> np.ndarray:
    clipped = np.clip(x, _EDGE, 1 - _EDGE)
    return np.log(clipped / (1 - clipped)).reshape(-1, 1)


def threshold_sweep(confidence: Sequence[float], correct: Sequence[bool]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Every distinct confidence as a threshold, highest first, with how many predictions it keeps
    (confidence at or above it) and how many of those are correct; one sort, so n log n."""
    x, y = np.asarray(confidence, dtype=float), np.asarray(correct, dtype=bool)
    order = np.argsort(-x, kind="stable")
    x, right = x[order], np.cumsum(y[order])
    # The last position of each distinct confidence: a threshold keeps every prediction at it.
    last = np.flatnonzero(np.append(x[1:] != x[:-1], True)) if len(x) else np.array([], dtype=int)
    return x[last], last + 1, right[last]


def choose_threshold(confidence: Sequence[float], correct: Sequence[bool], gold: int, *, objective: str,
                     target_precision: float = 0.9) -> float | None:
    """The decision threshold for one label (keep predictions with confidence >= threshold), or None to keep all.

    ``f1``: the threshold of the best held-out F1 (the highest among ties).
    ``precision``: the lowest threshold whose held-out precision reaches ``target_precision`` (the most recall
    at that precision); when none does, the threshold of the best precision (the highest among ties).
    """
    if objective == "none" or not len(confidence):
        return None
    thresholds, kept, right = threshold_sweep(confidence, correct)
    precision = right / kept
    if objective == "f1":
        f1 = 2 * right / (kept + gold)
        return float(thresholds[int(np.flatnonzero(f1 == f1.max())[0])])
    reaching = np.flatnonzero(precision >= target_precision)
    if reaching.size:
        return float(thresholds[reaching[-1]])
    return float(thresholds[int(np.flatnonzero(precision == precision.max())[0])])


@dataclass
class ConfidencePolicy:
    """What a model keeps: a calibrator and a threshold per label (either may be absent)."""

    calibrators: dict[str, Calibrator] = field(default_factory=dict)
    thresholds: dict[str, float] = field(default_factory=dict)
    held_out: dict[str, int] = field(default_factory=dict)  # held-out predictions each was learned from
    unreached: list[str] = field(default_factory=list)  # labels whose held-out precision never reached the target

    @classmethod
    def learn(cls, points: dict[str, HeldOut], *, calibration: str, objective: str,
              target_precision: float) -> "ConfidencePolicy":
        """Fit the calibrators on the held-out points, then choose thresholds on the calibrated confidences."""
        policy = cls(held_out={label: len(p.confidence) for label, p in points.items()})
        for label, p in points.items():
            confidence = np.asarray(p.confidence, dtype=float)
            if calibration != "none" and len(confidence):
                policy.calibrators[label] = Calibrator(calibration).fit(confidence, p.correct)
                confidence = policy.calibrators[label].transform(confidence)
            threshold = choose_threshold(confidence, p.correct, p.gold, objective=objective,
                                         target_precision=target_precision)
            if threshold is not None:
                policy.thresholds[label] = threshold
                kept = confidence >= threshold
                if objective == "precision" and np.asarray(p.correct)[kept].mean() < target_precision:
                    policy.unreached.append(label)
        return policy

    def calibrated(self, label: str, confidences: Sequence[float]) -> list[float]:
        """The calibrated confidences of one label, in order (unchanged without a calibrator)."""
        calibrator = self.calibrators.get(label)
        if calibrator is None or not len(confidences):
            return [float(c) for c in confidences]
        return [float(c) for c in calibrator.transform(confidences)]

    def apply(self, triggers: list[list[tuple[int, int, float]]],
              roles: list[list[list[tuple[int, int, str, float]]]], *,
              given_triggers: bool = False) -> tuple[list, list]:
        """Calibrated, thresholded triggers and roles (a dropped trigger takes its roles with it).

        ``given_triggers`` (gold triggers handed to the role stage) leaves the triggers as they are.
        """
        confidences = [p for sentence in triggers for _, _, p in sentence]
        trigger_p = iter(confidences if given_triggers else self.calibrated(TRIGGER, confidences))
        by_role: dict[str, list[float]] = {}
        for sentence in roles:
            for arguments in sentence:
                for _, _, role, q in arguments:
                    by_role.setdefault(role, []).append(q)
        role_p = {role: iter(self.calibrated(role, qs)) for role, qs in by_role.items()}
        out_triggers, out_roles = [], []
        for sentence_triggers, sentence_roles in zip(triggers, roles):
            kept_triggers, kept_roles = [], []
            for (first, end, _), arguments in zip(sentence_triggers, sentence_roles):
                p = next(trigger_p)
                calibrated = [(f, e, r, next(role_p[r])) for f, e, r, _ in arguments]
                if not given_triggers and p < self.thresholds.get(TRIGGER, 0.0):
                    continue
                kept_triggers.append((first, end, p))
                kept_roles.append([a for a in calibrated if a[3] >= self.thresholds.get(a[2], 0.0)])
            out_triggers.append(kept_triggers)
            out_roles.append(kept_roles)
        return out_triggers, out_roles
