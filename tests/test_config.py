"""The experiment config: defaults, validation messages, and the shipped configs load."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from trainer.config import ExperimentConfig, check_config_inputs, config_from_dict, load_config
from trainer.errors import ConfigError, ItinerantError

CONFIGS = Path(__file__).resolve().parent.parent / "configs"


def test_empty_config_gives_defaults():
    config = config_from_dict({})
    assert config == ExperimentConfig()
    assert config.roles == ("mover", "source", "path", "destination")
    assert config.trigger_model.kind == "crf"


@pytest.mark.parametrize("data, message", [
    ({"trigger_model": {"kind": "svm"}}, "'trigger_model.kind' = 'svm' is not allowed"),
    ({"features": {"groupz": []}}, "unknown key 'features.groupz'"),
    ({"features": {"groups": ["lexical", "sound"]}}, "unknown feature group(s) ['sound']"),
    ({"evaluation": {"folds": 0}}, "'evaluation.folds' must be at least 2, got 0"),
    ({"evaluation": {"folds": 1}}, "'evaluation.folds' must be at least 2, got 1"),
    ({"features": {"window": -1}}, "'features.window' must be 0 or more, got -1"),
    ({"features": {"affix_length": 0}}, "'features.affix_length' must be at least 1, got 0"),
    ({"role_model": {"threshold": 1.5}}, "'role_model.threshold' must lie in [0, 1], got 1.5"),
    ({"parser": {"batch_size": "big"}}, "'parser.batch_size' must be int, got 'big'"),
    ({"corpus": {"roles": ["mover", "mover"]}}, "'corpus.roles' must be a non-empty list without repeats"),
    ({"trigger_model": {"optimiser": "ap"}}, "'trigger_model.optimiser' = 'ap' is not allowed"),
    ({"role_model": {"regularisation": 0.0}}, "'role_model.regularisation' must be above 0, got 0.0"),
    ({"role_model": {"l2_penalty": -0.1}}, "'role_model.l2_penalty' must be 0 or more, got -0.1"),
])
def test_bad_values_are_refused_with_the_key_and_the_allowed_values(data, message):
    with pytest.raises(ConfigError) as raised:
        config_from_dict(data, "x.toml")
    assert message in str(raised.value)
    assert raised.value.exit_code == 2


def test_shipped_configs_load():
    names = sorted(p.name for p in CONFIGS.glob("*.toml"))
    assert "default.toml" in names
    for path in CONFIGS.glob("*.toml"):
        assert load_config(path).name


def test_relative_paths_resolve_from_the_config_folder(tmp_path):
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "c.toml").write_text('[features]\ngazetteer = "../places.tsv"\n[parser]\nconllu = "p.conllu"\n',
                                             encoding="utf-8")
    config = load_config(tmp_path / "sub" / "c.toml")
    assert Path(config.features.gazetteer) == (tmp_path / "places.tsv").resolve()
    assert Path(config.parser.conllu) == (tmp_path / "sub" / "p.conllu").resolve()
    assert config.name == "c"


@pytest.mark.parametrize("data, refused", [
    ({"parser": {"pipeline": "en_core_web_nonesuch"}}, "spaCy pipeline 'en_core_web_nonesuch' is not installed"),
    ({"parser": {"pipeline": ".relative"}}, "spaCy pipeline '.relative' is not installed"),
    ({"features": {"gazetteer": "{tmp}/places.tsv"}}, "'features.gazetteer' = '{tmp}/places.tsv': no such file"),
    ({"parser": {"conllu": "{tmp}/p.conllu"}}, "'parser.conllu' = '{tmp}/p.conllu': no such file"),
    ({"features": {"lexicons": {"motion_verbs": "{tmp}/v.txt"}}}, "'features.lexicons.motion_verbs' = '{tmp}/v.txt'"),
])
def test_a_missing_pipeline_or_data_file_is_refused_before_any_work(tmp_path, data, refused):
    filled = json.loads(json.dumps(data).replace("{tmp}", str(tmp_path)))
    with pytest.raises(ItinerantError) as raised:
        check_config_inputs(config_from_dict(filled), "x.toml")
    assert raised.value.cause.startswith(f"x.toml: {refused.replace('{tmp}', str(tmp_path))}")
    assert raised.value.exit_code == 2


def test_the_default_pipeline_and_files_that_exist_pass(tmp_path):
    (tmp_path / "places.tsv").write_text("name\nCaddow\n", encoding="utf-8")
    check_config_inputs(config_from_dict({"features": {"gazetteer": str(tmp_path / "places.tsv")}}), "x.toml")


def test_broken_toml_names_the_file(tmp_path):
    path = tmp_path / "b.toml"
    path.write_text("[features\n", encoding="utf-8")
    with pytest.raises(ConfigError, match="b.toml: not valid TOML"):
        load_config(path)


@pytest.mark.parametrize("old, new", [
    ("c1", "l1_penalty"), ("c2", "l2_penalty"), ("algorithm", "optimiser"), ("max_iterations", "iterations"),
    ("C", "regularisation (= 1 / C)"), ("class_weight", "balance_classes (true for 'balanced')"), ("search", "grid"),
])
def test_old_model_keys_are_refused_naming_the_new_key(old, new):
    with pytest.raises(ConfigError) as raised:
        config_from_dict({"role_model": {old: 1}}, "x.toml")
    assert str(raised.value) == (f"x.toml: 'role_model.{old}' is no longer a config key\n"
                                 f"  fix: write 'role_model.{new}' instead (see docs/models.md)")
    assert raised.value.exit_code == 2


def test_our_model_settings_reach_the_libraries_under_their_names():
    from trainer.models.kinds import crf_tagger, logistic_settings

    crf = config_from_dict({"trigger_model": {"l1_penalty": 0.2, "l2_penalty": 0.01, "optimiser": "sgd",
                                              "iterations": 7}}).trigger_model
    tagger = crf_tagger(crf)
    assert (tagger.c1, tagger.c2, tagger.algorithm, tagger.max_iterations) == (0.2, 0.01, "l2sgd", 7)
    logistic = config_from_dict({"role_model": {"kind": "logistic", "regularisation": 4.0,
                                                "balance_classes": True}}).role_model
    # scikit-learn's LogisticRegression: C is the inverse of regularisation strength (scikit-learn docs)
    assert logistic_settings(logistic) == {"C": 0.25, "class_weight": "balanced"}
    assert logistic_settings(config_from_dict({}).role_model) == {"C": 1.0, "class_weight": "none"}


def test_the_confidence_section_is_checked_like_every_other() -> None:
    from trainer.config import config_from_dict

    config = config_from_dict({"confidence": {"calibration": "platt", "thresholds": "precision", "target_precision": 0.8}})
    assert (config.confidence.calibration, config.confidence.thresholds, config.confidence.target_precision) == \
        ("platt", "precision", 0.8)
    with pytest.raises(ConfigError, match="(?s)confidence.calibration.*isotonic"):
        config_from_dict({"confidence": {"calibration": "beta"}})
    with pytest.raises(ConfigError, match="target_precision"):
        config_from_dict({"confidence": {"target_precision": 1.5}})


def test_a_config_that_is_a_folder_or_not_utf8_is_a_message_not_a_traceback(tmp_path) -> None:
    (tmp_path / "adir.toml").mkdir()
    with pytest.raises(ConfigError, match="adir.toml: is a folder, not a config file"):
        load_config(tmp_path / "adir.toml")
    (tmp_path / "latin1.toml").write_bytes('name = "F\u00fcssen"\n'.encode("latin-1"))
    with pytest.raises(ItinerantError, match=r"latin1.toml: not UTF-8 text: line 1, byte offset 9 \(0xfc\)") as raised:
        load_config(tmp_path / "latin1.toml")
    assert raised.value.exit_code == 2 and raised.value.fix == "save the config as UTF-8 (TOML files are UTF-8)"
