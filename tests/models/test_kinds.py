"""The model-kind table: the config accepts its names, the extractor builds both stages from it, and every stage meets its protocol."""

from __future__ import annotations

import inspect

import pytest

from trainer.config import config_from_dict
from trainer.errors import ConfigError
from trainer.features.extract import Featurizer
from trainer.features.lexicons import load_lexicons
from trainer.models.extractor import MotionExtractor
from trainer.models.kinds import MODEL_KINDS, ModelKind, RoleLabeller, TriggerFinder
from trainer.models.rules import RuleRoleLabeller, RuleTriggerFinder
from trainer.models.sequence import CRFTagger, LogisticTagger
from trainer.models.stages import CandidateRoleLinker, SequenceRoleLabeller, SequenceTriggerFinder

FEATURIZER = Featurizer(config_from_dict({}).features, load_lexicons())
EXPECTED = {
    "crf": (SequenceTriggerFinder, CRFTagger, SequenceRoleLabeller),
    "logistic": (SequenceTriggerFinder, LogisticTagger, CandidateRoleLinker),
    "rules": (RuleTriggerFinder, None, RuleRoleLabeller),
}


@pytest.mark.parametrize("kind", list(MODEL_KINDS))
def test_each_kind_builds_both_stages_and_they_meet_the_protocols(kind: str) -> None:
    config = config_from_dict({"trigger_model": {"kind": kind}, "role_model": {"kind": kind}})
    extractor = MotionExtractor(config, FEATURIZER)
    finder_class, tagger_class, labeller_class = EXPECTED[kind]
    assert type(extractor.trigger_finder) is finder_class
    assert type(extractor.role_labeller) is labeller_class
    if tagger_class is not None:
        assert type(extractor.trigger_finder.tagger) is tagger_class
    assert isinstance(extractor.trigger_finder, TriggerFinder)
    assert isinstance(extractor.role_labeller, RoleLabeller)


@pytest.mark.parametrize("stage", [SequenceTriggerFinder, RuleTriggerFinder, SequenceRoleLabeller, CandidateRoleLinker,
                                   RuleRoleLabeller])
def test_every_stage_takes_the_protocols_arguments(stage: type) -> None:
    """Same parameter names in the same order as the protocol (so keyword calls work on every kind)."""
    protocol = TriggerFinder if "Trigger" in stage.__name__ else RoleLabeller
    for method in ("fit", "predict"):
        expected = list(inspect.signature(getattr(protocol, method)).parameters)
        assert list(inspect.signature(getattr(stage, method)).parameters) == expected, (stage.__name__, method)


def test_a_registered_kind_is_accepted_and_built(monkeypatch: pytest.MonkeyPatch) -> None:
    data = {"trigger_model": {"kind": "toy"}, "role_model": {"kind": "rules"}}
    with pytest.raises(ConfigError, match="'trigger_model.kind' = 'toy' is not allowed"):
        config_from_dict(data)
    built = []

    def toy_finder(config, featurizer):
        built.append((config.kind, featurizer))
        return RuleTriggerFinder(featurizer.lexicons)

    monkeypatch.setitem(MODEL_KINDS, "toy", ModelKind("a test kind", toy_finder, MODEL_KINDS["rules"].role_labeller))
    extractor = MotionExtractor(config_from_dict(data), FEATURIZER)
    assert built == [("toy", FEATURIZER)]
    assert type(extractor.trigger_finder) is RuleTriggerFinder


def test_refused_kinds_name_the_table() -> None:
    with pytest.raises(ConfigError) as caught:
        config_from_dict({"role_model": {"kind": "forest"}})
    assert caught.value.fix == "use one of: crf, logistic, rules"
