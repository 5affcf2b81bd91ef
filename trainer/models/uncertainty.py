"""How unsure a trained extractor is about each unannotated record, for choosing what to annotate next.

Both stages are read through the full probability distributions behind
their decisions, not only through the confidences of what they kept:

- trigger stage: one distribution over the BIO tags per token (the CRF's
  marginals from ``sklearn_crfsuite.CRF.predict_marginals``, or the logistic
  tagger's ``predict_proba`` rows);
- role stage, for each trigger the trigger stage predicts: one distribution
  per token of the role sequence (CRF or logistic role tagger), or one per
  (candidate phrase, trigger) pair over ``none`` and the roles (the logistic
  candidate linker). A candidate it rejected at 51 % is a doubt too, which the
  ``confidence`` of the predicted roles cannot show.

Each distribution is a *decision*. A measure turns the decisions of one part
(trigger or role) into a number in [0, 1], with ``K`` the number of labels:

- ``least_confidence``: ``(1 - min_d max_k p_dk) * K / (K - 1)``: one minus
  the probability of the least sure decision, scaled so that a uniform
  distribution gives 1. The *minimum* of the per-decision maxima is used, not
  their *product* (the probability of the best labelling when decisions are
  independent): the product shrinks with every extra token, so it would rank
  long sentences first just for being long, while an annotator checks every
  decision of a chosen sentence and one doubtful decision is enough to make
  the sentence worth that look.
- ``entropy``: the mean over decisions of ``H(p_d) / log K``.

A part with no decisions (no tokens; no predicted trigger for the role part)
or a model with a single label scores 0. The record's uncertainty is the
*maximum* of the trigger part and the role part: a sentence is worth
annotating when either stage is unsure, and averaging would let confident
roles hide a doubtful trigger (or the reverse). Higher means less sure.

Rule stages give no probabilities, so asking them raises
:class:`NoUncertaintyError`.

>>> from trainer.models.uncertainty import record_uncertainty     # doctest: +SKIP
>>> record_uncertainty(trained, records, docs, measure="entropy")  # doctest: +SKIP
[0.031, 0.274, ...]
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
from spacy.language import Language
from spacy.tokens import Doc

from trainer.corpus.records import Record
from trainer.errors import ConfigError, NoUncertaintyError
from trainer.models.sequence import CRFTagger, LogisticTagger
from trainer.models.stages import CandidateRoleLinker, SequenceRoleLabeller, SequenceTriggerFinder
from trainer.models.training import TrainedExtractor, parser_for
from trainer.parsing.parse import parse_records

# One array per sentence (or per trigger), shape (decisions, labels); rows sum to 1.
Decisions = np.ndarray


def least_confidence(decisions: Decisions) -> float:
    """``(1 - min over decisions of the top probability) * K / (K - 1)``; 0 with no decisions or one label.

    >>> round(least_confidence(np.array([[0.9, 0.1], [0.6, 0.4]])), 6)
    0.8
    """
    rows, labels = decisions.shape
    if rows == 0 or labels < 2:
        return 0.0
    value = (1.0 - float(decisions.max(axis=1).min())) * labels / (labels - 1)
    return min(max(value, 0.0), 1.0)


def mean_entropy(decisions: Decisions) -> float:
    """Mean over decisions of the entropy divided by ``log K``; 0 with no decisions or one label.

    >>> round(mean_entropy(np.array([[0.5, 0.5], [1.0, 0.0]])), 6)
    0.5
    """
    rows, labels = decisions.shape
    if rows == 0 or labels < 2:
        return 0.0
    p = np.clip(decisions, 0.0, 1.0)
    logs = np.log(p, out=np.zeros_like(p), where=p > 0)
    value = float((-(p * logs).sum(axis=1)).mean() / np.log(labels))
    return min(max(value, 0.0), 1.0)


MEASURES: dict[str, Callable[[Decisions], float]] = {
    "least_confidence": least_confidence,
    "entropy": mean_entropy,
}


@dataclass(frozen=True)
class RecordUncertainty:
    """The two parts of one record's uncertainty; :attr:`value` combines them (their maximum)."""

    trigger: float
    role: float

    @property
    def value(self) -> float:
        return max(self.trigger, self.role)


# ---------------------------------------------------------------- distributions, per kind of estimator


def _tagger_distributions(tagger: CRFTagger | LogisticTagger, X: list[list[dict]]) -> list[Decisions]:
    """The tagger's own per-token tag distributions (CRF marginals, logistic probabilities) as arrays."""
    labels = sorted(tagger.labels_)
    return [np.array([[p.get(label, 0.0) for label in labels] for p in sentence], dtype=float).reshape(len(sentence), len(labels))
            for sentence in tagger.token_distributions(X)]


def _tagger_decisions(tagger: object, X: list[list[dict]], stage: str) -> list[Decisions]:
    if isinstance(tagger, (CRFTagger, LogisticTagger)):
        return _tagger_distributions(tagger, X)
    raise NoUncertaintyError(f"the {stage} stage uses a {type(tagger).__name__}, which gives no token probabilities",
                             "use a crf or logistic model for this stage")


def _trigger_decisions(trained: TrainedExtractor, features: Sequence[list[dict]]) -> list[Decisions]:
    finder = trained.extractor.trigger_finder
    if not isinstance(finder, SequenceTriggerFinder):
        raise NoUncertaintyError(
            f"model '{trained.config.name}': the trigger stage is a {type(finder).__name__}; "
            "rule models have no uncertainty (they give no probabilities)",
            "suggest with a trained model: [trigger_model] kind = \"crf\" or \"logistic\"",
        )
    return _tagger_decisions(finder.tagger, features, "trigger")


def _role_decisions(trained: TrainedExtractor, docs: Sequence[Doc], triggers: Sequence[Sequence[tuple]],
                    features: Sequence[list[dict]]) -> list[Decisions]:
    """Per sentence, the role stage's decisions for all its predicted triggers, stacked."""
    labeller = trained.extractor.role_labeller
    if isinstance(labeller, SequenceRoleLabeller):
        # One role sequence per trigger, built by the labeller's own feature path.
        flat = iter(_tagger_decisions(labeller.tagger, labeller.sequences(docs, triggers, features), "role")
                    if any(triggers) else [])
        per_trigger = [[next(flat) for _ in sentence] for sentence in triggers]
        n_labels = len(labeller.tagger.labels_)
    elif isinstance(labeller, CandidateRoleLinker):
        n_labels = len(labeller.model_.classes_)
        pairs = iter(labeller.candidate_pairs(docs, triggers, features))
        per_trigger = []
        for sentence in triggers:
            rows = []
            for _ in sentence:
                _, features = next(pairs)
                rows.append(labeller.model_.predict_proba(labeller.vectorizer_.transform(features))
                            if features else np.zeros((0, n_labels)))
            per_trigger.append(rows)
    else:
        raise NoUncertaintyError(
            f"model '{trained.config.name}': the role stage is a {type(labeller).__name__}; "
            "rule models have no uncertainty (they give no probabilities)",
            "suggest with a trained model: [role_model] kind = \"crf\" or \"logistic\"",
        )
    return [np.vstack(parts) if parts else np.zeros((0, n_labels)) for parts in per_trigger]


# ---------------------------------------------------------------- public API


def _check_measure(measure: str) -> Callable[[Decisions], float]:
    if measure not in MEASURES:
        raise ConfigError(f"measure={measure!r} is not an uncertainty measure", f"use one of: {', '.join(MEASURES)}")
    return MEASURES[measure]


def uncertainty_parts(
    trained: TrainedExtractor, records: Sequence[Record], docs: Sequence[Doc] | None = None, *,
    measure: str = "least_confidence", nlp: Language | None = None,
) -> list[RecordUncertainty]:
    """The trigger and role parts of each record's uncertainty (see the module docstring).

    ``records`` are sentences (their ``events``, if any, are ignored);
    ``docs`` are their parses in the same order (parsed through the cache when
    ``None``). Raises :class:`NoUncertaintyError` for rule stages and
    :class:`~trainer.errors.ConfigError` for an unknown ``measure``.
    """
    score = _check_measure(measure)
    if docs is None:
        docs, _ = parse_records(nlp or parser_for(trained.config), records, trained.config.parser)
    if len(docs) != len(records):
        raise ConfigError(f"{len(records)} records but {len(docs)} docs", "pass one parsed doc per record, in order")
    features = trained.extractor.prediction_features(docs)  # the extractor's own feature path, computed once
    trigger_parts = _trigger_decisions(trained, features.triggers)
    triggers = trained.extractor.trigger_finder.predict(docs, features.triggers)  # what the extractor would predict
    role_parts = _role_decisions(trained, docs, triggers, features.roles)
    return [RecordUncertainty(trigger=score(t), role=score(r)) for t, r in zip(trigger_parts, role_parts)]


def record_uncertainty(
    trained: TrainedExtractor, records: Sequence[Record], docs: Sequence[Doc] | None = None, *,
    measure: str = "least_confidence", nlp: Language | None = None,
) -> list[float]:
    """One number in [0, 1] per record, higher = the model is less sure: max of the trigger and role parts.

    ``measure`` is ``"least_confidence"`` or ``"entropy"``; see the module
    docstring for both definitions.
    """
    return [part.value for part in uncertainty_parts(trained, records, docs, measure=measure, nlp=nlp)]
