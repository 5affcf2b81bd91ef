"""The feature-group table drives config validation, the pipeline's components and the Featurizer.

A toy group registered for one test (pytest's monkeypatch) must be accepted by
the config, keep the components it names and give its features, with no other
change anywhere.
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
import spacy
from spacy.tokens import Doc

from trainer.config import FeatureConfig, config_from_dict
from trainer.errors import ConfigError
from trainer.features.extract import Featurizer
from trainer.features.groups import Features, Sentence
from trainer.features.lexicons import load_lexicons
from trainer.features.registry import DEFAULT_FEATURE_GROUPS, FEATURE_GROUPS, GroupSpec, enabled
from trainer.parsing.pipeline import ALWAYS_NEEDED, needed_components

VOCAB = spacy.blank("en").vocab
LEXICONS = load_lexicons()


@pytest.fixture(scope="module")
def doc() -> Doc:
    """'We rode to Kell .' parsed by hand."""
    return Doc(VOCAB, words=["We", "rode", "to", "Kell", "."], spaces=[True, True, True, False, False],
               lemmas=["we", "ride", "to", "Kell", "."], pos=["PRON", "VERB", "ADP", "PROPN", "PUNCT"],
               deps=["nsubj", "ROOT", "prep", "pobj", "punct"], heads=[1, 1, 1, 2, 1])


def _word_length(sentence: Sentence) -> list[Features]:
    return [{"toy_length": float(len(token.text))} for token in sentence.doc]


def _after_trigger(sentence: Sentence, trigger: tuple[int, int]) -> list[Features]:
    return [{"toy_after": token.i >= trigger[1]} for token in sentence.doc]


def _sees_others(sentence: Sentence) -> list[Features]:
    return [{"toy_seen": ",".join(sorted(features))} for features in sentence.features]


TOY = GroupSpec("toy", "word length; tokens after the trigger", ("tok2vec", "ner"),
                tokens=_word_length, trigger=_after_trigger)


@pytest.fixture
def toy(monkeypatch: pytest.MonkeyPatch) -> GroupSpec:
    monkeypatch.setitem(FEATURE_GROUPS, "toy", TOY)
    return TOY


def test_the_config_accepts_a_registered_group_and_refuses_it_otherwise(monkeypatch: pytest.MonkeyPatch) -> None:
    data = {"features": {"groups": ["lexical", "toy"]}}
    with pytest.raises(ConfigError, match=r"unknown feature group\(s\) \['toy'\]"):
        config_from_dict(data)
    monkeypatch.setitem(FEATURE_GROUPS, "toy", TOY)
    assert config_from_dict(data).features.groups == ["lexical", "toy"]


def test_the_pipeline_keeps_the_components_a_registered_group_reads(toy: GroupSpec) -> None:
    assert needed_components(["toy"]) == set(ALWAYS_NEEDED) | {"ner"}
    assert needed_components(["lexical"]) == set(ALWAYS_NEEDED)


def test_a_registered_group_gives_its_token_and_trigger_features(toy: GroupSpec, doc: Doc) -> None:
    featurizer = Featurizer(FeatureConfig(groups=["toy"]), LEXICONS)
    base = featurizer.token_features(doc)
    assert base == [{"bias": 1.0, "toy_length": n} for n in (2.0, 4.0, 2.0, 4.0, 1.0)]
    roles = featurizer.role_features(doc, (1, 2), base)
    assert [f["toy_after"] for f in roles] == [False, False, True, True, True]
    assert all("toy_after" not in f for f in base)


def test_a_group_reading_the_others_runs_after_them_whatever_its_place(monkeypatch: pytest.MonkeyPatch,
                                                                       doc: Doc) -> None:
    """Listed first in the table, the group still sees the features of the groups listed after it."""
    monkeypatch.setattr("trainer.features.registry.FEATURE_GROUPS",
                        {"seer": GroupSpec("seer", "keys so far", (), tokens=_sees_others, reads_other_groups=True),
                         "toy": TOY})
    features = Featurizer(FeatureConfig(groups=["seer", "toy"]), LEXICONS).token_features(doc)
    assert features[0] == {"bias": 1.0, "toy_length": 2.0, "toy_seen": "bias,toy_length"}


def test_features_follow_table_order_not_config_order(doc: Doc) -> None:
    """Key order feeds CRFsuite's attribute order, so it must not depend on how a config lists the groups."""
    forward = Featurizer(FeatureConfig(groups=["lexical", "tagging"]), LEXICONS).token_features(doc)
    backward = Featurizer(FeatureConfig(groups=["tagging", "lexical"]), LEXICONS).token_features(doc)
    assert [list(f) for f in forward] == [list(f) for f in backward]
    assert list(forward[0])[:3] == ["bias", "lower", "lemma"]
    assert [spec.name for spec in enabled({"wordnet", "lexical", "nothing"})] == ["lexical", "wordnet"]


def test_every_entry_makes_features_and_reads_known_components() -> None:
    pipeline_components = {"tok2vec", "tagger", "parser", "attribute_ruler", "lemmatizer", "ner"}
    for name, spec in FEATURE_GROUPS.items():
        assert spec.name == name
        assert spec.tokens is not None or spec.trigger is not None, name
        assert set(spec.components) <= pipeline_components, name
        assert spec.doc, name


def test_the_defaults_are_the_six_groups_of_earlier_configs() -> None:
    """Configs that name no groups keep the features (and report text) they had before the table."""
    expected = ("lexical", "tagging", "context", "syntax", "trigger_relative", "lexicon")
    assert DEFAULT_FEATURE_GROUPS == expected
    assert FeatureConfig().groups == list(expected)
    assert list(FEATURE_GROUPS) == [*expected, "rules", "wordnet"]


def test_reading_the_table_loads_no_parser() -> None:
    """The config imports the table, and light commands import the config (see tests/test_cli_imports.py)."""
    code = "import json, sys, trainer.config; print(json.dumps(sorted(sys.modules)))"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    modules = json.loads(done.stdout)
    assert "trainer.features.registry" in modules
    assert not [m for m in modules if m.split(".")[0] in {"spacy", "thinc", "sklearn"}]
