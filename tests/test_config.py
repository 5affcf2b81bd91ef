"""The experiment config: defaults, validation messages, and the shipped configs load."""

from __future__ import annotations

from pathlib import Path

import pytest

from trainer.config import ExperimentConfig, config_from_dict, load_config
from trainer.errors import ConfigError

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
    ({"evaluation": {"folds": 0}}, "'evaluation.folds' must be at least 1, got 0"),
    ({"role_model": {"threshold": 1.5}}, "'role_model.threshold' must lie in [0, 1], got 1.5"),
    ({"parser": {"batch_size": "big"}}, "'parser.batch_size' must be int, got 'big'"),
    ({"corpus": {"roles": ["mover", "mover"]}}, "'corpus.roles' must be a non-empty list without repeats"),
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
    (tmp_path / "sub" / "c.toml").write_text('[features]\ngazetteer = "../places.tsv"\n', encoding="utf-8")
    config = load_config(tmp_path / "sub" / "c.toml")
    assert Path(config.features.gazetteer) == (tmp_path / "places.tsv").resolve()
    assert config.name == "c"


def test_broken_toml_names_the_file(tmp_path):
    path = tmp_path / "b.toml"
    path.write_text("[features\n", encoding="utf-8")
    with pytest.raises(ConfigError, match="b.toml: not valid TOML"):
        load_config(path)
