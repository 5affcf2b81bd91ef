"""What a trained extractor learned: its strongest features per label, and the CRF's tag transitions.

For each stage (trigger finding, role labelling) the learned weights are read
from the fitted estimator:

- a CRF tagger (``CRFTagger``): the state feature weights ``(attribute, tag)``
  and the transition weights ``(tag, next tag)`` that CRFsuite learned;
- a logistic tagger or the candidate role linker: the logistic regression
  coefficients of each class over the vectorised features. With two classes
  scikit-learn keeps one row, for the second class; the first class's
  weights are that row negated (the two log-odds are opposite).

Per label the ``top`` features with the largest weight (evidence *for* the
label) and the most negative (evidence *against*) are listed, ties broken by
feature name. Rule stages learn nothing and say so.

For one predicted span, :func:`span_explanations` gives the features that
weighed most for it: each feature's contribution (weight times value, as the
estimator sees the feature: CRFsuite's attributes through
``pycrfsuite.ItemSequence``, the logistic models' columns through their
fitted ``DictVectorizer``) to the predicted label's score, summed over the
span's tokens (``B-`` label on the first, ``I-`` on the rest) or, for the
candidate linker, of the candidate's row. A CRF's transition weights also
weigh and are not split by token; they are listed by :func:`explain_stage`.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Callable, Sequence

import numpy as np
import pycrfsuite
from spacy.tokens import Doc

from trainer.corpus.records import Record

from trainer.errors import ConfigError
from trainer.models.extractor import StageFeatures
from trainer.models.sequence import CRFTagger, LogisticTagger
from trainer.models.stages import TRIGGER_LABEL, CandidateRoleLinker
from trainer.models.training import TrainedExtractor, load_extractor, tuned_trigger_threshold

DIGITS = 6
SPAN_TOP = 5
TRIGGER = "trigger"
Weights = dict[str, dict[str, float]]  # label -> feature -> weight
SpanKey = tuple[str, int, int]  # (label: "trigger" or a role, start, end) in characters


@dataclass
class StageExplanation:
    """The strongest learned weights of one stage."""

    stage: str
    estimator: str
    labels: dict[str, dict[str, list[tuple[str, float]]]] = field(default_factory=dict)  # label -> for/against
    transitions: list[tuple[str, str, float]] = field(default_factory=list)
    note: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"stage": self.stage, "estimator": self.estimator, "note": self.note,
                "labels": {label: {side: [[f, w] for f, w in items] for side, items in sides.items()}
                           for label, sides in self.labels.items()},
                "transitions": [[a, b, w] for a, b, w in self.transitions]}


def _crf_weights(tagger: CRFTagger) -> tuple[Weights, list[tuple[str, str, float]]]:
    crf = tagger.crf_
    weights: Weights = {label: {} for label in tagger.labels_}
    for (attribute, label), weight in crf.state_features_.items():
        weights.setdefault(label, {})[attribute] = float(weight)
    transitions = [(a, b, float(w)) for (a, b), w in crf.transition_features_.items()]
    return weights, transitions


def _logistic_weights(model: Any, vectorizer: Any) -> tuple[Weights, list[tuple[str, str, float]]]:
    names = list(vectorizer.get_feature_names_out())
    classes = [str(c) for c in model.classes_]
    coef = np.asarray(model.coef_, dtype=float)
    rows = np.vstack([-coef[0], coef[0]]) if len(classes) == 2 and coef.shape[0] == 1 else coef
    return {label: dict(zip(names, row.tolist())) for label, row in zip(classes, rows)}, []


READERS: dict[type, tuple[str, Callable[[Any], tuple[Weights, list[tuple[str, str, float]]]]]] = {
    CRFTagger: ("crf", _crf_weights),
    LogisticTagger: ("logistic", lambda t: _logistic_weights(t.model_, t.vectorizer_)),
    CandidateRoleLinker: ("logistic", lambda t: _logistic_weights(t.model_, t.vectorizer_)),
}


def _strongest(weights: dict[str, float], top: int) -> dict[str, list[tuple[str, float]]]:
    ranked = sorted(weights.items(), key=lambda item: (-item[1], item[0]))
    return {"for": [(f, round(w, DIGITS)) for f, w in ranked[:top] if w > 0],
            "against": [(f, round(w, DIGITS)) for f, w in sorted(weights.items(), key=lambda i: (i[1], i[0]))[:top]
                        if w < 0]}


def explain_stage(stage_name: str, stage: Any, *, top: int = 10) -> StageExplanation:
    """The strongest weights of one fitted stage (its tagger, or the stage itself for the candidate linker)."""
    if top < 1:
        raise ConfigError(f"top must be at least 1, got {top}", "ask for e.g. the 10 strongest features")
    estimator = getattr(stage, "tagger", stage)
    reader = next((entry for kind, entry in READERS.items() if isinstance(estimator, kind)), None)
    if reader is None:
        return StageExplanation(stage_name, type(stage).__name__,
                                note="hand-written rules: no learned weights (see docs/models.md)")
    kind, read = reader
    weights, transitions = read(estimator)
    ranked = sorted(transitions, key=lambda t: (-abs(t[2]), t[0], t[1]))
    note = ""
    if getattr(estimator, "trees_", None) is not None:
        note = (f"the probabilities blend in gradient-boosted trees (share {estimator.tree_share:g}), which have no "
                "weights per feature: the weights below are the logistic model's part")
    return StageExplanation(stage_name, kind, {label: _strongest(w, top) for label, w in sorted(weights.items())},
                            [(a, b, round(w, DIGITS)) for a, b, w in ranked[:top]], note)


def explain_extractor(trained: TrainedExtractor, *, top: int = 10) -> list[StageExplanation]:
    """Both stages of a trained extractor, trigger finding first."""
    extractor = trained.extractor
    trigger = explain_stage("trigger", extractor.trigger_finder, top=top)
    tuned = tuned_trigger_threshold(extractor)
    if tuned:
        decided = (f"a token starts a trigger at probability {tuned['threshold']:.2f} or more, the threshold chosen on "
                   f"inner folds of the training docs (trigger F1 there {tuned['inner_fold_f1']:.3f})")
        trigger = replace(trigger, note=f"{trigger.note}; {decided}" if trigger.note else decided)
    return [trigger, explain_stage("roles", extractor.role_labeller, top=top)]


def explain_model(path: Path | str, *, top: int = 10) -> list[StageExplanation]:
    """Load a verified model file (see :func:`trainer.models.training.load_extractor`) and explain both stages."""
    trained, _ = load_extractor(path)
    return explain_extractor(trained, top=top)


def explanation_text(stages: list[StageExplanation]) -> str:
    """A plain-text listing: per stage, per label the features for and against, then the transitions."""
    out = []
    for stage in stages:
        out.append(f"## {stage.stage} stage ({stage.estimator})")
        if stage.note:
            out += ["", stage.note]
        for label, sides in stage.labels.items():
            out += ["", f"{label}:"]
            for side, items in sides.items():
                listed = ", ".join(f"{feature} {weight:+.3f}" for feature, weight in items) or "(none)"
                out.append(f"  {side}: {listed}")
        if stage.transitions:
            out += ["", "strongest transitions (tag -> next tag):"]
            out += [f"  {a} -> {b} {w:+.3f}" for a, b, w in stage.transitions]
        out.append("")
    return "\n".join(out)


# ---------------------------------------------------------------- one predicted span


def _crf_contributions(tagger: CRFTagger, sequence: list[dict], labelled: list[tuple[int, str]]) -> Counter:
    items = pycrfsuite.ItemSequence(sequence).items()
    state = tagger.crf_.state_features_
    total: Counter = Counter()
    for index, label in labelled:
        for attribute, value in items[index].items():
            weight = state.get((attribute, label))
            if weight:
                total[attribute] += weight * value
    return total


def _logistic_contributions(model: Any, vectorizer: Any, rows: list[dict], labelled: list[tuple[int, str]]) -> Counter:
    weights, _ = _logistic_weights(model, vectorizer)
    names = vectorizer.get_feature_names_out()
    matrix = vectorizer.transform([rows[index] for index, _ in labelled]).tocsr()
    total: Counter = Counter()
    for row, (_, label) in enumerate(labelled):
        vector = matrix.getrow(row)
        for column, value in zip(vector.indices, vector.data):
            total[names[column]] += weights[label][names[column]] * value
    return total


def _tagger_contributions(tagger: Any, sequence: list[dict], first: int, end: int, label: str) -> Counter | None:
    labelled = [(i, f"{'B' if i == first else 'I'}-{label}") for i in range(first, end)]
    if isinstance(tagger, CRFTagger):
        return _crf_contributions(tagger, sequence, labelled)
    if isinstance(tagger, LogisticTagger):
        return _logistic_contributions(tagger.model_, tagger.vectorizer_, sequence, labelled)
    return None


def _tokens(doc: Doc, span: Sequence[int]) -> tuple[int, int] | None:
    chosen = doc.char_span(int(span[0]), int(span[1]), alignment_mode="expand")
    return (chosen.start, chosen.end) if chosen is not None and len(chosen) else None


def _top(total: Counter | None, top: int) -> list[tuple[str, float]] | None:
    if total is None:
        return None
    ranked = sorted(((f, w) for f, w in total.items() if w > 0), key=lambda item: (-item[1], item[0]))
    return [(str(f), round(float(w), DIGITS)) for f, w in ranked[:top]]


def _role_contributions(labeller: Any, doc: Doc, base: list[dict], trigger: tuple[int, int],
                        argument: tuple[int, int], role: str) -> Counter | None:
    if isinstance(labeller, CandidateRoleLinker):
        for spans, rows in labeller.candidate_pairs([doc], [[trigger]], [base]):
            if argument in spans and role in {str(c) for c in labeller.model_.classes_}:
                return _logistic_contributions(labeller.model_, labeller.vectorizer_, rows,
                                               [(spans.index(argument), role)])
        return None
    tagger = getattr(labeller, "tagger", None)
    if tagger is None:
        return None
    sequence = labeller.featurizer.role_features(doc, trigger, base)
    return _tagger_contributions(tagger, sequence, argument[0], argument[1], role)


def span_explanations(extractor: Any, docs: Sequence[Doc], predicted: Sequence[Record], *,
                      top: int = SPAN_TOP) -> dict[str, dict[SpanKey, list[tuple[str, float]]]]:
    """``record id -> {(label, start, end): [(feature, contribution), ...]}`` for every predicted span.

    ``extractor`` is a fitted :class:`~trainer.models.extractor.MotionExtractor`; ``docs`` are the
    parses of ``predicted`` (one each, in order). Only positive contributions are listed, largest
    first, at most ``top``; spans of rule stages (no weights) are left out. A role span shared by
    several triggers is explained for the first of them.
    """
    out: dict[str, dict[SpanKey, list[tuple[str, float]]]] = {}
    features = extractor.prediction_features(docs) if predicted else StageFeatures([], [])
    trigger_tagger = getattr(extractor.trigger_finder, "tagger", None)
    for record, doc, base, role_base in zip(predicted, docs, features.triggers, features.roles):
        found: dict[SpanKey, list[tuple[str, float]]] = {}
        for event in record.events or ():
            trigger = _tokens(doc, event.trigger)
            if trigger is None:
                continue
            key = (TRIGGER, int(event.trigger[0]), int(event.trigger[1]))
            if key not in found and trigger_tagger is not None:
                listed = _top(_tagger_contributions(trigger_tagger, base, trigger[0], trigger[1], TRIGGER_LABEL), top)
                if listed is not None:
                    found[key] = listed
            for argument in event.roles:
                span = _tokens(doc, argument.span)
                key = (argument.role, int(argument.span[0]), int(argument.span[1]))
                if span is None or key in found:
                    continue
                listed = _top(_role_contributions(extractor.role_labeller, doc, role_base, trigger, span, argument.role),
                              top)
                if listed is not None:
                    found[key] = listed
        if found:
            out[record.id] = found
    return out
