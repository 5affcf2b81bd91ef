"""The table of model kinds, and the contract the two stages of every kind meet.

``[trigger_model] kind`` and ``[role_model] kind`` name an entry of
:data:`MODEL_KINDS`: the config accepts exactly these names, and the
extractor builds each stage with the entry's builder, so any trigger finder
combines with any role labeller. A new kind is one entry here, with stages
that meet :class:`TriggerFinder` and :class:`RoleLabeller`.

The builders import the model libraries when called, so the config (which
reads the names) stays light.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Callable, Protocol, Sequence, runtime_checkable

if TYPE_CHECKING:
    from spacy.tokens import Doc

    from trainer.config import ModelConfig
    from trainer.features.extract import Featurizer
    from trainer.models.sequence import CRFTagger

TokenRange = tuple[int, int]
# A trigger handed to the role stage: a gold token range, or a predicted one with its probability.
Trigger = tuple[int, int] | tuple[int, int, float]
TokenFeatures = Sequence[list[dict[str, Any]]]  # per sentence, one feature dict per token


@runtime_checkable
class TriggerFinder(Protocol):
    """Finds triggers in parsed sentences; ``features`` reuses token features already computed for ``docs``."""

    def fit(self, docs: Sequence[Doc], triggers: Sequence[list[TokenRange]],
            features: TokenFeatures | None = None) -> TriggerFinder:
        """Learn from gold triggers (per sentence, token ranges); return the finder."""
        ...

    def predict(self, docs: Sequence[Doc], features: TokenFeatures | None = None) -> list[list[tuple[int, int, float]]]:
        """Per sentence, trigger token ranges with a probability."""
        ...


@runtime_checkable
class RoleLabeller(Protocol):
    """Labels the roles of each trigger of a parsed sentence."""

    def fit(self, docs: Sequence[Doc], triggers: Sequence[Sequence[Trigger]],
            roles: Sequence[list[list[tuple[int, int, str]]]], features: TokenFeatures | None = None) -> RoleLabeller:
        """Learn from gold roles (per sentence, per trigger: token ranges and role names); return the labeller."""
        ...

    def predict(self, docs: Sequence[Doc], triggers: Sequence[Sequence[Trigger]],
                features: TokenFeatures | None = None) -> list[list[list[tuple[int, int, str, float]]]]:
        """Per sentence, per trigger: role token ranges, role names and probabilities."""
        ...


# Our optimiser names -> the CRF library's training algorithms.
CRF_ALGORITHMS = {"lbfgs": "lbfgs", "sgd": "l2sgd", "averaged_perceptron": "ap", "passive_aggressive": "pa", "arow": "arow"}


def logistic_settings(config: ModelConfig) -> dict[str, Any]:
    """Our logistic settings in the library's terms: C is the inverse of the regularisation strength."""
    return {"C": 1.0 / config.regularisation, "class_weight": "balanced" if config.balance_classes else "none"}


def crf_tagger(config: ModelConfig) -> CRFTagger:
    """The CRF tagger a model config describes (our setting names mapped onto the library's)."""
    from trainer.models.sequence import CRFTagger

    return CRFTagger(c1=config.l1_penalty, c2=config.l2_penalty, algorithm=CRF_ALGORITHMS[config.optimiser],
                     max_iterations=config.iterations, threshold=config.threshold)


def _crf_trigger_finder(config: ModelConfig, featurizer: Featurizer) -> TriggerFinder:
    from trainer.models.stages import SequenceTriggerFinder

    return SequenceTriggerFinder(crf_tagger(config), featurizer)


def _crf_role_labeller(config: ModelConfig, featurizer: Featurizer) -> RoleLabeller:
    from trainer.models.stages import SequenceRoleLabeller

    return SequenceRoleLabeller(crf_tagger(config), featurizer)


def _logistic_trigger_finder(config: ModelConfig, featurizer: Featurizer) -> TriggerFinder:
    from trainer.models.sequence import LogisticTagger
    from trainer.models.stages import SequenceTriggerFinder

    return SequenceTriggerFinder(LogisticTagger(**logistic_settings(config), threshold=config.threshold,
                                                tree_share=config.tree_share), featurizer)


def _logistic_role_labeller(config: ModelConfig, featurizer: Featurizer) -> RoleLabeller:
    from trainer.models.stages import CandidateRoleLinker

    return CandidateRoleLinker(featurizer=featurizer, **logistic_settings(config), threshold=config.threshold)


def _rule_trigger_finder(config: ModelConfig, featurizer: Featurizer) -> TriggerFinder:
    from trainer.models.rules import RuleTriggerFinder

    return RuleTriggerFinder(featurizer.lexicons)


def _rule_role_labeller(config: ModelConfig, featurizer: Featurizer) -> RoleLabeller:
    from trainer.models.rules import RuleRoleLabeller

    return RuleRoleLabeller(featurizer.lexicons)


@dataclass(frozen=True)
class ModelKind:
    """How each stage of one model kind is built from its model config and the featurizer."""

    doc: str
    trigger_finder: Callable[[ModelConfig, Featurizer], TriggerFinder]
    role_labeller: Callable[[ModelConfig, Featurizer], RoleLabeller]
    learned: bool = True  # trained from annotated events (False: needs no event to fit)


MODEL_KINDS: dict[str, ModelKind] = {
    "crf": ModelKind("linear-chain CRF over BIO tags (one sequence per trigger for roles)",
                     _crf_trigger_finder, _crf_role_labeller),
    "logistic": ModelKind("logistic regression per token for triggers, over (candidate phrase, trigger) pairs for roles",
                          _logistic_trigger_finder, _logistic_role_labeller),
    "rules": ModelKind("the rule baseline: motion lexicons and dependency patterns, nothing learned",
                       _rule_trigger_finder, _rule_role_labeller, learned=False),
}
