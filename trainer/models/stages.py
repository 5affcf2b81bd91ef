"""The two stages of extraction and their interchangeable implementations.

A trigger finder maps a parsed sentence to trigger token ranges with a
probability; a role labeller maps a sentence and one trigger to role token
ranges with a probability. Any finder combines with any labeller. Learned
stages are trained on gold triggers; at prediction time they see predicted ones.

Shapes (token ranges are ``[first, end)``):

- gold triggers: ``list[list[(first, end)]]``, one list per sentence;
- gold roles: ``list[list[list[(first, end, role)]]]``, per sentence, per trigger;
- predictions add a probability as the last item of each tuple.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np
from sklearn.base import BaseEstimator
from sklearn.feature_extraction import DictVectorizer
from sklearn.linear_model import LogisticRegression
from spacy.tokens import Doc

from trainer.features.extract import DOMAIN_KEY, Featurizer, augment
from trainer.features.groups import governing_preposition
from trainer.features.rule_cues import rule_roles
from trainer.models.candidates import candidate_phrases
from trainer.models.sequence import CRFTagger, LogisticTagger, marginal_spans, vectorize
from trainer.parsing.align import bio_tags

TokenRange = tuple[int, int]
TRIGGER_LABEL = "TRIGGER"
NONE_LABEL = "none"


class SequenceTriggerFinder:
    """Trigger finding as BIO tagging of tokens with a CRF or logistic tagger.

    ``decision_threshold`` ``None`` keeps the tagger's most likely tags; a
    number decides token by token from the tag probabilities instead
    (:func:`marginal_spans`), which the extractor can tune on inner folds.
    """

    def __init__(self, tagger: CRFTagger | LogisticTagger, featurizer: Featurizer,
                 decision_threshold: float | None = None) -> None:
        self.tagger = tagger
        self.featurizer = featurizer
        self.decision_threshold = decision_threshold

    def fit(self, docs: Sequence[Doc], triggers: Sequence[list[TokenRange]],
            features: Sequence[list[dict]] | None = None) -> "SequenceTriggerFinder":
        X = features if features is not None else [self.featurizer.token_features(d) for d in docs]
        y = [bio_tags(d, [(t, TRIGGER_LABEL) for t in ts]) for d, ts in zip(docs, triggers)]
        self.tagger.fit(X, y)
        return self

    def predict(self, docs: Sequence[Doc], features: Sequence[list[dict]] | None = None) -> list[list[tuple[int, int, float]]]:
        """Trigger ranges with probabilities; ``features`` reuses token features already computed for ``docs``."""
        features = features if features is not None else [self.featurizer.token_features(d) for d in docs]
        if self.decision_threshold is None:
            guesses = self.tagger.predict_spans(features)
        else:
            guesses = [marginal_spans(d, TRIGGER_LABEL, self.decision_threshold)
                       for d in self.tagger.token_distributions(features)]
        return [[(first, end, p) for first, end, _, p in sentence] for sentence in guesses]


class SequenceRoleLabeller:
    """Role labelling as BIO tagging of the sentence, one sequence per trigger."""

    def __init__(self, tagger: CRFTagger | LogisticTagger, featurizer: Featurizer) -> None:
        self.tagger = tagger
        self.featurizer = featurizer

    def sequences(self, docs: Sequence[Doc], triggers: Sequence[Sequence[TokenRange]],
                   features: Sequence[list[dict]] | None = None) -> list[list[dict]]:
        """The role-labelling input: one feature sequence per trigger, sentences in order."""
        out = []
        for k, (doc, sentence_triggers) in enumerate(zip(docs, triggers)):
            if not sentence_triggers:
                continue
            base = features[k] if features is not None else self.featurizer.token_features(doc)
            out.extend(self.featurizer.role_features(doc, tuple(t[:2]), base) for t in sentence_triggers)
        return out

    def fit(self, docs, triggers, roles, features=None) -> "SequenceRoleLabeller":
        X = self.sequences(docs, triggers, features)
        y = [bio_tags(doc, [((f, e), r) for f, e, r in event_roles])
             for doc, doc_roles in zip(docs, roles) for event_roles in doc_roles]
        self.tagger.fit(X, y)
        return self

    def predict(self, docs, triggers, features=None) -> list[list[list[tuple[int, int, str, float]]]]:
        flat = iter(self.tagger.predict_spans(self.sequences(docs, triggers, features)) if any(triggers) else [])
        return [[next(flat) for _ in sentence_triggers] for sentence_triggers in triggers]


class CandidateRoleLinker(BaseEstimator):
    """Role labelling as classification of (candidate phrase, trigger) pairs with logistic regression.

    Candidates are noun phrases, proper-noun runs, pronouns and gazetteer names
    (:func:`candidate_phrases`); each pair is labelled none or one role. Gold
    spans that match no candidate cannot be learned; their count is kept in
    ``unreachable_``.
    """

    def __init__(self, *, featurizer: Featurizer | None = None, C: float = 1.0, class_weight: str = "none",
                 max_iterations: int = 1000, threshold: float = 0.0, random_state: int = 0) -> None:
        self.featurizer = featurizer
        self.C = C
        self.class_weight = class_weight
        self.max_iterations = max_iterations
        self.threshold = threshold
        self.random_state = random_state

    def _pairs(self, doc: Doc, trigger: TokenRange, base: list[dict]) -> tuple[list[TokenRange], list[dict]]:
        token_rel = self.featurizer.role_features(doc, trigger, base)
        rule_spans = ({(r.first, r.end): r for r in rule_roles(doc, trigger, self.featurizer.lexicons)}
                      if "rules" in self.featurizer.groups else None)
        domain = base[0].get(DOMAIN_KEY) if base else None
        spans, rows = [], []
        for first, end, kind in candidate_phrases(doc, self.featurizer.gazetteer):
            if first < trigger[1] and trigger[0] < end:
                continue
            root = doc[first:end].root
            row = {f"root:{k}": v for k, v in token_rel[root.i].items()}
            own = {
                "kind": kind, "length": str(min(end - first, 5)), "first_lower": doc[first].lower_,
                "gov_prep": governing_preposition(root) or "-", "before_trigger": end <= trigger[0],
                "first_pos": doc[first].pos_, "path_kind": f"{row.get('root:t_path', '-')}|{kind}",
            }
            if rule_spans is not None:
                rule = rule_spans.get((first, end))
                own["rule_span"] = rule.role if rule else "-"
                own["rule_span_cue"] = f"{rule.role}|{rule.cue}" if rule else "-"
            row.update(augment(own, str(domain)) if domain is not None else own)
            spans.append((first, end))
            rows.append(row)
        return spans, rows

    def candidate_pairs(self, docs, triggers, features=None):
        """Per trigger, in order: the candidate spans and their feature rows."""
        for k, (doc, sentence_triggers) in enumerate(zip(docs, triggers)):
            if not sentence_triggers:
                continue
            base = features[k] if features is not None else self.featurizer.token_features(doc)
            for trigger in sentence_triggers:
                yield self._pairs(doc, tuple(trigger[:2]), base)

    def fit(self, docs, triggers, roles, features=None) -> "CandidateRoleLinker":
        rows, labels, self.unreachable_ = [], [], 0
        gold_iter = (event_roles for doc_roles in roles for event_roles in doc_roles)
        for (spans, pair_rows), event_roles in zip(self.candidate_pairs(docs, triggers, features), gold_iter):
            gold = {(f, e): r for f, e, r in reversed(event_roles)}
            self.unreachable_ += len(set(gold) - set(spans))
            rows.extend(pair_rows)
            labels.extend(gold.get(span, NONE_LABEL) for span in spans)
        self.vectorizer_ = DictVectorizer(sort=True)
        self.model_ = LogisticRegression(
            C=self.C, class_weight=None if self.class_weight == "none" else self.class_weight,
            max_iter=self.max_iterations, random_state=self.random_state,
        )
        self.model_.fit(self.vectorizer_.fit_transform(rows), labels)
        return self

    def predict(self, docs, triggers, features=None) -> list[list[list[tuple[int, int, str, float]]]]:
        classes = list(self.model_.classes_)
        flat = []
        for spans, rows in self.candidate_pairs(docs, triggers, features):
            chosen = []
            if rows:
                for span, probs in zip(spans, self.model_.predict_proba(vectorize(self.vectorizer_, rows))):
                    best = int(np.argmax(probs))
                    if classes[best] != NONE_LABEL and probs[best] >= self.threshold:
                        chosen.append((span[0], span[1], classes[best], float(probs[best])))
            flat.append(_drop_overlaps(chosen))
        it = iter(flat)
        return [[next(it) for _ in sentence_triggers] for sentence_triggers in triggers]


def _drop_overlaps(chosen: list[tuple[int, int, str, float]]) -> list[tuple[int, int, str, float]]:
    """Keep the most probable of overlapping candidates (nested phrases compete)."""
    kept: list[tuple[int, int, str, float]] = []
    for guess in sorted(chosen, key=lambda g: -g[3]):
        if all(guess[1] <= k[0] or k[1] <= guess[0] for k in kept):
            kept.append(guess)
    return sorted(kept)
