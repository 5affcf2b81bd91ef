"""The two-stage motion-event extractor: find triggers, then label roles for each.

Which trigger finder and which role labeller are used comes from the config
(``[trigger_model] kind`` and ``[role_model] kind``, entries of the table
:data:`trainer.models.kinds.MODEL_KINDS`), so any finder combines with any labeller.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Mapping, Sequence

from spacy.tokens import Doc

from trainer.config import ConfidenceConfig, ExperimentConfig, ModelConfig
from trainer.corpus.auxiliary import TARGET_DOMAIN
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import ConfigError
from trainer.features.extract import Featurizer, augment
from trainer.models.calibration import ConfidencePolicy, held_out_points
from trainer.models.conventions import Departure, departures, rule_agreement
from trainer.models.kinds import MODEL_KINDS, RoleLabeller, TriggerFinder
from trainer.models.search import f1_of_sets, inner_folds, search_stage
from trainer.models.sequence import marginal_spans
from trainer.models.stages import TRIGGER_LABEL, SequenceTriggerFinder
from trainer.parsing.align import AlignmentReport, span_to_tokens, tokens_to_span


THRESHOLD_GRID = tuple(round(0.05 * k, 2) for k in range(2, 13))  # 0.10 ... 0.60
STAGES = ("triggers", "roles")  # the stages whose features may be augmented by corpus


@dataclass(frozen=True)
class StageFeatures:
    """Token features per sentence as each stage reads them: the same lists unless one stage alone is augmented."""

    triggers: list[list[dict]]
    roles: list[list[dict]]


@dataclass
class GoldTargets:
    """Gold triggers and roles as token ranges, per sentence (and per trigger for roles)."""

    triggers: list[list[tuple[int, int]]] = field(default_factory=list)
    roles: list[list[list[tuple[int, int, str]]]] = field(default_factory=list)
    alignment: AlignmentReport = field(default_factory=AlignmentReport)


def gold_targets(records: Sequence[Record], docs: Sequence[Doc]) -> GoldTargets:
    """Align each record's gold events to its doc's tokens (policy in :mod:`trainer.parsing.align`)."""
    targets = GoldTargets()
    for record, doc in zip(records, docs):
        triggers, roles = [], []
        for event in record.events or ():
            trigger = span_to_tokens(doc, event.trigger, targets.alignment)
            if trigger is None:
                continue
            aligned = [(span_to_tokens(doc, r.span, targets.alignment), r.role) for r in event.roles]
            triggers.append(trigger)
            roles.append([(t[0], t[1], role) for t, role in aligned if t is not None])
        targets.triggers.append(triggers)
        targets.roles.append(roles)
    return targets


def build_trigger_finder(config: ModelConfig, featurizer: Featurizer) -> TriggerFinder:
    """The trigger stage a model config names (its kind's entry in :data:`MODEL_KINDS`)."""
    return MODEL_KINDS[config.kind].trigger_finder(config, featurizer)


def build_role_labeller(config: ModelConfig, featurizer: Featurizer) -> RoleLabeller:
    """The role stage a model config names (its kind's entry in :data:`MODEL_KINDS`)."""
    return MODEL_KINDS[config.kind].role_labeller(config, featurizer)


def best_threshold(scores: Mapping[float, float]) -> float:
    """The threshold at the peak of the inner-fold F1 curve (``threshold -> F1``), the highest among equals.

    Each grid point's F1 is first averaged with its neighbours' (a three-point moving average, two points
    at the ends of the grid), so a single lucky point of a noisy curve does not decide: the peak of a flat
    stretch wins over a spike beside a drop.
    """
    grid = sorted(scores)
    window = [grid[max(0, i - 1) : i + 2] for i in range(len(grid))]
    smoothed = {t: sum(scores[u] for u in near) / len(near) for t, near in zip(grid, window)}
    return max(smoothed, key=lambda t: (smoothed[t], t))


class MotionExtractor:
    """Trigger finder plus role labeller, trained on gold triggers, applied to predicted ones.

    When the config gives a search grid for a stage, the stage's parameters are
    chosen first by inner folds over the training records (``search_results_``).
    """

    def __init__(self, config: ExperimentConfig, featurizer: Featurizer) -> None:
        self.config = config
        self.featurizer = featurizer
        self.trigger_finder = build_trigger_finder(config.trigger_model, featurizer)
        self.role_labeller = build_role_labeller(config.role_model, featurizer)
        self.alignment_: AlignmentReport | None = None
        self.search_results_: dict[str, list[dict]] = {}
        self.domains_: list[str] = []
        self.augmented_stages_: tuple[str, ...] = ()  # of STAGES: whose features are augmented by corpus
        self.threshold_scores_: dict[float, float] = {}
        self.departures_: list[Departure] = []
        self.confidence_: ConfidencePolicy | None = None
        # A role's confidence is that of the whole instance (trigger, role, span): see raw_predictions.
        # Model files written before it lack the attribute and keep the role stage's own confidence.
        self.joint_role_confidence_ = True

    def _search(self, records: Sequence[Record], docs: Sequence[Doc], targets: GoldTargets) -> None:
        def trigger_f1(candidate: ModelConfig, train: list[int], test: list[int]) -> float:
            finder = build_trigger_finder(candidate, self.featurizer)
            finder.fit([docs[i] for i in train], [targets.triggers[i] for i in train])
            predicted = finder.predict([docs[i] for i in test])
            return f1_of_sets([set(targets.triggers[i]) for i in test], [{t[:2] for t in p} for p in predicted])

        def role_f1(candidate: ModelConfig, train: list[int], test: list[int]) -> float:
            train = [i for i in train if targets.triggers[i]]
            labeller = build_role_labeller(candidate, self.featurizer)
            labeller.fit([docs[i] for i in train], [targets.triggers[i] for i in train], [targets.roles[i] for i in train])
            predicted = labeller.predict([docs[i] for i in test], [targets.triggers[i] for i in test])
            gold = [{(k, *r) for k, event in enumerate(targets.roles[i]) for r in event} for i in test]
            return f1_of_sets(gold, [{(k, *r[:3]) for k, event in enumerate(p) for r in event} for p in predicted])

        trigger_config, self.search_results_["trigger_model"] = search_stage(self.config.trigger_model, records, docs, trigger_f1)
        role_config, self.search_results_["role_model"] = search_stage(self.config.role_model, records, docs, role_f1)
        self.trigger_finder = build_trigger_finder(trigger_config, self.featurizer)
        self.role_labeller = build_role_labeller(role_config, self.featurizer)

    @property
    def _stages_augmented(self) -> tuple[str, ...]:
        # Model files written before augmentation by stage augmented both stages or neither.
        return getattr(self, "augmented_stages_", STAGES if self.domains_ else ())

    def _features(self, docs: Sequence[Doc], domains: Sequence[str]) -> StageFeatures:
        """Token features of each doc, computed once; copied by corpus (``domains``, one per doc) for the
        stages in ``augmented_stages_``."""
        plain = [self.featurizer.token_features(d) for d in docs]
        stages = self._stages_augmented
        if not stages:
            return StageFeatures(plain, plain)
        augmented = [[augment(features, domain) for features in sentence] for sentence, domain in zip(plain, domains)]
        return StageFeatures(augmented if "triggers" in stages else plain, augmented if "roles" in stages else plain)

    def prediction_features(self, docs: Sequence[Doc]) -> StageFeatures:
        """Token features as this model's stages see new text: the target's copies where trained with augmentation."""
        return self._features(docs, [TARGET_DOMAIN] * len(docs))

    def _tune_trigger_threshold(self, records: Sequence[Record], docs: Sequence[Doc], targets: GoldTargets,
                                features: list[list[dict]], domains: Sequence[str] | None) -> None:
        """Choose the trigger stage's decision threshold by pooled F1 on inner folds of the training docs.

        Each inner fold trains a fresh trigger stage on the other docs (auxiliary
        corpora included) and scores its held-out target docs at every
        threshold of :data:`THRESHOLD_GRID`; the threshold at the peak of the pooled F1 curve wins
        (:func:`best_threshold`). The scores are kept in ``threshold_scores_``.
        """
        collected: list[tuple[list[dict[str, float]], set[tuple[int, int]]]] = []
        for train, test in inner_folds(records):
            test = [i for i in test if domains is None or domains[i] == TARGET_DOMAIN]
            if not test or not train:
                continue
            finder = build_trigger_finder(self.config.trigger_model, self.featurizer)
            finder.fit([docs[i] for i in train], [targets.triggers[i] for i in train], [features[i] for i in train])
            distributions = finder.tagger.token_distributions([features[i] for i in test])
            collected.extend((d, set(targets.triggers[i])) for d, i in zip(distributions, test))
        if not collected:
            return
        scores = {}
        for threshold in THRESHOLD_GRID:
            predicted = [{s[:2] for s in marginal_spans(d, TRIGGER_LABEL, threshold)} for d, _ in collected]
            scores[threshold] = round(f1_of_sets([g for _, g in collected], predicted), 6)
        self.trigger_finder.decision_threshold = best_threshold(scores)
        self.threshold_scores_ = scores

    def fit(self, records: Sequence[Record], docs: Sequence[Doc], *,
            domains: Sequence[str] | None = None) -> "MotionExtractor":
        """Train both stages on annotated records (negatives included; unannotated ones refused).

        ``domains`` names each record's corpus: ``"target"`` or an auxiliary
        corpus's name. A tuned trigger threshold is then scored on target docs
        only; with ``[auxiliary] augment`` both stages' features are augmented
        by corpus, with ``augment_if_conventions_differ`` those of the stages whose
        conventions the target departs on (:meth:`_stages_to_augment`); predictions
        then use the target's copies.
        """
        unannotated = [r.id for r in records if not r.is_annotated]
        if unannotated:
            raise ConfigError(f"{len(unannotated)} training record(s) carry no annotation, e.g. {unannotated[:3]}",
                              "train on annotated records only (records with an 'events' list)")
        targets = gold_targets(records, docs)
        self.alignment_ = targets.alignment
        if self.config.trigger_model.grid or self.config.role_model.grid:
            self._search(records, docs, targets)
        if domains is not None and len(domains) != len(records):
            raise ConfigError(f"{len(domains)} domain names for {len(records)} records", "give one domain per record")
        self.departures_ = []
        self.augmented_stages_ = self._stages_to_augment(docs, targets, domains)
        self.domains_ = sorted(set(domains or ())) if self.augmented_stages_ else []
        features = self._features(docs, domains or [TARGET_DOMAIN] * len(docs))
        if self.config.trigger_model.tune_threshold and isinstance(self.trigger_finder, SequenceTriggerFinder):
            self._tune_trigger_threshold(records, docs, targets, features.triggers, domains)
        if self.config.confidence.calibration != "none" or self.config.confidence.thresholds != "none":
            self._learn_confidence(records, docs, targets, domains)
        self.trigger_finder.fit(docs, targets.triggers, features.triggers)
        with_triggers = [i for i, ts in enumerate(targets.triggers) if ts]
        self.role_labeller.fit([docs[i] for i in with_triggers], [targets.triggers[i] for i in with_triggers],
                               [targets.roles[i] for i in with_triggers], [features.roles[i] for i in with_triggers])
        return self

    def _stages_to_augment(self, docs: Sequence[Doc], targets: GoldTargets,
                           domains: Sequence[str] | None) -> tuple[str, ...]:
        """Which of :data:`STAGES` get features augmented by corpus: both with ``[auxiliary] augment``; with
        ``augment_if_conventions_differ``, each stage whose annotation (its triggers, or its roles) departs from
        the auxiliary corpora's; none without auxiliary records."""
        if domains is None or set(domains) == {TARGET_DOMAIN}:
            return ()
        if self.config.auxiliary.augment:
            return STAGES
        if not self._conventions_differ(docs, targets, domains):
            return ()
        return tuple(stage for stage in STAGES if any(d.stage == stage for d in self.departures_))

    def _conventions_differ(self, docs: Sequence[Doc], targets: GoldTargets, domains: Sequence[str]) -> bool:
        """With ``[auxiliary] augment_if_conventions_differ``: whether the target's annotation departs from the
        auxiliary corpora's, measured against the rules (:mod:`trainer.models.conventions`); the departures are
        kept in ``departures_``."""
        if not self.config.auxiliary.augment_if_conventions_differ:
            return False
        counts = {}
        for side in (True, False):
            chosen = [i for i, domain in enumerate(domains) if (domain == TARGET_DOMAIN) == side]
            counts[side] = rule_agreement([docs[i] for i in chosen], [targets.triggers[i] for i in chosen],
                                          [targets.roles[i] for i in chosen], self.featurizer.lexicons)
        self.departures_ = departures(counts[True], counts[False], self.config.roles)
        return bool(self.departures_)

    def _learn_confidence(self, records: Sequence[Record], docs: Sequence[Doc], targets: GoldTargets,
                          domains: Sequence[str] | None) -> None:
        """Learn the ``[confidence]`` calibration and thresholds from held-out predictions on inner folds.

        Each inner fold trains a fresh extractor (same config, without ``[confidence]``) on the other docs,
        auxiliary corpora included, and predicts its held-out target docs; the pooled held-out predictions
        give :class:`ConfidencePolicy` its points. The policy is kept in ``confidence_``.
        """
        settings = self.config.confidence
        plain = replace(self.config, confidence=ConfidenceConfig())
        held: list[int] = []  # the held-out target records, in the order predicted
        triggers: list = []
        roles: list = []
        for train, test in inner_folds(records):
            test = [i for i in test if domains is None or domains[i] == TARGET_DOMAIN]
            if not test or not train:
                continue
            inner = MotionExtractor(plain, self.featurizer).fit(
                [records[i] for i in train], [docs[i] for i in train],
                domains=[domains[i] for i in train] if domains is not None else None)
            fold_triggers, fold_roles = inner.raw_predictions([docs[i] for i in test])
            held += test
            triggers += fold_triggers
            roles += fold_roles
        points = held_out_points([targets.triggers[i] for i in held], [targets.roles[i] for i in held],
                                 triggers, roles, self.config.roles)
        self.confidence_ = ConfidencePolicy.learn(points, calibration=settings.calibration,
                                                  objective=settings.thresholds,
                                                  target_precision=settings.target_precision)

    def raw_predictions(self, docs: Sequence[Doc], gold: Sequence[list[tuple[int, int]]] | None = None
                        ) -> tuple[list[list[tuple[int, int, float]]], list[list[list[tuple[int, int, str, float]]]]]:
        """Both stages' token-range predictions with confidences, before any ``[confidence]`` policy
        (``gold``: label the roles of these gold triggers instead of predicted ones).

        A trigger's confidence is the trigger stage's. A role's is the confidence that the whole role
        instance is right, as it is scored: the role stage's confidence in the span and role given the
        trigger, times the trigger's confidence (a role on a wrong trigger is wrong). Given gold
        triggers (confidence 1) it is the role stage's own.
        """
        features = self.prediction_features(docs)
        if gold is not None:
            triggers = [[(f, e, 1.0) for f, e in ts] for ts in gold]
        else:
            triggers = self.trigger_finder.predict(docs, features.triggers)
        roles = self.role_labeller.predict(docs, triggers, features.roles)
        if getattr(self, "joint_role_confidence_", False):
            roles = [[[(f, e, role, q * trigger[2]) for f, e, role, q in arguments]
                      for trigger, arguments in zip(sentence_triggers, sentence_roles)]
                     for sentence_triggers, sentence_roles in zip(triggers, roles)]
        return triggers, roles

    def predict(self, records: Sequence[Record], docs: Sequence[Doc], *, gold_triggers: bool = False) -> list[Record]:
        """Records carrying predicted events with confidences (``gold_triggers``: label roles of the gold triggers).

        With a ``[confidence]`` policy, confidences are calibrated and predictions below their threshold dropped.
        """
        gold = gold_targets(records, docs).triggers if gold_triggers else None
        triggers, roles = self.raw_predictions(docs, gold)
        policy = getattr(self, "confidence_", None)  # absent in model files written before calibration
        if policy is not None:
            triggers, roles = policy.apply(triggers, roles, given_triggers=gold_triggers)
        out = []
        for record, doc, sentence_triggers, sentence_roles in zip(records, docs, triggers, roles):
            events = [
                Event(
                    trigger=tokens_to_span(doc, first, end),
                    roles=tuple(RoleSpan(role, tokens_to_span(doc, f, e), round(p, 4)) for f, e, role, p in event_roles),
                    confidence=round(probability, 4),
                )
                for (first, end, probability), event_roles in zip(sentence_triggers, sentence_roles)
            ]
            out.append(record.with_events(events))
        return out
