"""Settings resolved once from configs and command-line overrides, and checked before any work starts."""

from __future__ import annotations

from pathlib import Path

import pytest

from trainer.config import DEFAULT_CONFIG, DEFAULT_SEED, EvaluationConfig, ExperimentConfig, load_config
from trainer.errors import ConfigError
from trainer.evaluation.summary import EvaluationSettings
from trainer.experiment import settings as settings_module
from trainer.experiment.settings import FoldOptions, Overrides, resolve_settings, scoring_settings


def write(folder: Path, name: str, text: str) -> Path:
    path = folder / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_every_evaluation_default_comes_from_one_place() -> None:
    assert EvaluationConfig().seed == EvaluationSettings().seed == FoldOptions().seed == DEFAULT_SEED
    assert resolve_settings().evaluation == EvaluationSettings()
    assert resolve_settings().folds == FoldOptions()
    assert scoring_settings() == EvaluationSettings()


def test_scoring_settings_take_the_overrides_checked_and_read_no_config(monkeypatch) -> None:
    monkeypatch.setattr(settings_module, "load_config", lambda path: pytest.fail("a config was read"))
    assert scoring_settings(Overrides(mode="overlap", seed=3, bootstrap_samples=50)) == EvaluationSettings(
        mode="overlap", seed=3, bootstrap_samples=50)
    with pytest.raises(ConfigError, match="--bootstrap"):
        scoring_settings(Overrides(bootstrap_samples=0))


def test_without_a_config_the_recommended_one_is_used_not_the_bare_dataclass_defaults() -> None:
    resolved = resolve_settings()
    assert resolved.configs == [load_config(DEFAULT_CONFIG)] and resolved.config_paths == []
    default = resolved.configs[0]
    assert default.name == "default" and default != ExperimentConfig(name="default")
    assert (default.trigger_model.kind, default.role_model.kind, default.auxiliary.corpora) == (
        "logistic", "crf", ["packaged:demo"])  # what configs/default.toml and the docs call the default


def test_without_a_config_and_without_the_ready_one_the_run_is_refused(monkeypatch, tmp_path: Path) -> None:
    monkeypatch.setattr(settings_module, "DEFAULT_CONFIG", tmp_path / "default.toml")
    with pytest.raises(ConfigError, match="no config given, and the recommended one .* is not there") as raised:
        resolve_settings()
    assert "-c" in raised.value.fix


def test_the_configs_evaluation_section_and_the_overrides_are_combined(tmp_path: Path) -> None:
    config = write(tmp_path, "a", "[evaluation]\nfolds = 4\nseed = 7\nmode = \"overlap\"\n")
    resolved = resolve_settings([config], Overrides(seed=21, bootstrap_samples=50))
    assert (resolved.folds.folds, resolved.folds.seed) == (4, 21)
    assert (resolved.evaluation.mode, resolved.evaluation.seed, resolved.evaluation.bootstrap_samples) == ("overlap", 21, 50)
    assert [c.name for c in resolved.configs] == ["a"]


def test_configs_that_disagree_on_evaluation_are_refused_naming_the_keys(tmp_path: Path) -> None:
    first = write(tmp_path, "a", "[evaluation]\nseed = 7\nfolds = 4\n")
    second = write(tmp_path, "b", "[evaluation]\nseed = 8\nfolds = 4\n")
    with pytest.raises(ConfigError) as caught:
        resolve_settings([first, second])
    message = str(caught.value)
    assert "evaluation.seed = 7" in message and "8" in message and str(second) in message
    assert "evaluation.folds" not in message
    # Set on the command line, the key no longer conflicts.
    assert resolve_settings([first, second], Overrides(seed=3)).evaluation.seed == 3


def test_a_second_configs_evaluation_section_is_not_silently_ignored(tmp_path: Path) -> None:
    first = write(tmp_path, "a", "")
    second = write(tmp_path, "b", "[evaluation]\nmode = \"overlap\"\n")
    with pytest.raises(ConfigError, match="evaluation.mode"):
        resolve_settings([first, second])


@pytest.mark.parametrize("overrides, named", [
    (Overrides(mode="fuzzy"), "--mode"),
    (Overrides(bootstrap_samples=0), "--bootstrap"),
    (Overrides(folds=1), "--folds"),
    (Overrides(leave_one_doc_out=True, leave_one_book_out=True), "one way to split"),
])
def test_bad_overrides_are_refused_before_any_config_is_read(monkeypatch, overrides, named) -> None:
    monkeypatch.setattr(settings_module, "load_config", lambda path: pytest.fail("a config was read"))
    if "split" in named:  # the split is checked once the configs are known
        monkeypatch.undo()
    with pytest.raises(ConfigError, match=named):
        resolve_settings([], overrides)


def test_each_config_is_read_once(monkeypatch, tmp_path: Path) -> None:
    reads: list[Path] = []
    real = settings_module.load_config
    monkeypatch.setattr(settings_module, "load_config", lambda path: reads.append(path) or real(path))
    configs = [write(tmp_path, "a", ""), write(tmp_path, "b", "")]
    resolve_settings(configs, Overrides(mode="overlap"))
    assert reads == configs


def test_configs_with_one_name_or_different_roles_are_refused(tmp_path: Path) -> None:
    (tmp_path / "x").mkdir()
    with pytest.raises(ConfigError, match="share a name"):
        resolve_settings([write(tmp_path, "a", ""), write(tmp_path / "x", "a", "")])
    with pytest.raises(ConfigError, match="role inventories"):
        resolve_settings([write(tmp_path, "c", ""), write(tmp_path, "d", "[corpus]\nroles = [\"mover\"]\n")])


def test_options_that_the_other_options_would_make_silently_idle_are_refused() -> None:
    with pytest.raises(ConfigError, match="--folds and --repeats set K shuffled folds"):
        resolve_settings([], Overrides(folds=2, leave_one_doc_out=True))
    with pytest.raises(ConfigError, match="--folds and --repeats set K shuffled folds"):
        resolve_settings([], Overrides(repeats=2, test_docs=("d1",)))
    with pytest.raises(ConfigError, match="--target-precision is read only when") as raised:
        resolve_settings([], Overrides(target_precision=0.9))
    assert "add --thresholds precision" in raised.value.fix
    assert resolve_settings([], Overrides(target_precision=0.9, thresholds="precision")).configs[0].confidence.target_precision == 0.9
    assert resolve_settings([], Overrides(leave_one_book_out=True)).folds.leave_one_book_out
