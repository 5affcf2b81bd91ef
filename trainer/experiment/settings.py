"""One settings object per run, resolved once from the configs and the command line, checked before any work.

The configs are read once; auxiliary corpora given on the command line are
added to each; the evaluation settings (folds, seed, scoring mode, bootstrap)
come from the ``[evaluation]`` section the configs share, with command-line
overrides on top. Configs that disagree on an evaluation key not overridden
are refused, naming the key, so no section is silently ignored.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, replace
from pathlib import Path
from typing import Any, Sequence

from trainer.config import (
    DEFAULT_CONFIG, ConfidenceConfig, EvaluationConfig, ExperimentConfig, add_auxiliary, check_config_inputs,
    check_value, load_config,
)
from trainer.corpus.auxiliary import check_sources
from trainer.errors import ConfigError
from trainer.evaluation.summary import EvaluationSettings


# Command-line options whose name is not the setting's (the others are --<key with dashes>).
OPTION_NAMES = {"bootstrap_samples": "--bootstrap"}


@dataclass
class FoldOptions:
    """How to split the corpus: K grouped folds (repeated), one doc or book out at a time, or a fixed split."""

    folds: int = EvaluationConfig.folds
    repeats: int = EvaluationConfig.repeats
    seed: int = EvaluationConfig.seed
    leave_one_doc_out: bool = False
    leave_one_book_out: bool = False
    test_docs: tuple[str, ...] = ()


@dataclass(frozen=True)
class Overrides:
    """What the command line sets on top of the configs; ``None`` keeps the configs' value."""

    folds: int | None = None
    repeats: int | None = None
    seed: int | None = None
    mode: str | None = None
    bootstrap_samples: int | None = None
    leave_one_doc_out: bool = False
    leave_one_book_out: bool = False
    test_docs: tuple[str, ...] = ()
    auxiliary: tuple[str, ...] = ()
    augment: bool | None = None
    calibration: str | None = None
    thresholds: str | None = None
    target_precision: float | None = None

    def evaluation(self) -> dict[str, Any]:
        """The ``[evaluation]`` keys this sets, by name."""
        return self._set_in(EvaluationConfig)

    def confidence(self) -> dict[str, Any]:
        """The ``[confidence]`` keys this sets, by name."""
        return self._set_in(ConfidenceConfig)

    def _set_in(self, section: type) -> dict[str, Any]:
        names = {f.name for f in fields(section)}
        return {key: value for key, value in self.__dict__.items() if key in names and value is not None}


@dataclass
class RunSettings:
    """Everything a run needs to know before it starts: the configs, how to score, how to split."""

    configs: list[ExperimentConfig]
    evaluation: EvaluationSettings
    folds: FoldOptions = field(default_factory=FoldOptions)
    config_paths: list[Path] = field(default_factory=list)

    @property
    def roles(self) -> tuple[str, ...]:
        return self.configs[0].roles


def resolve_settings(config_paths: Sequence[Path | str] = (), overrides: Overrides = Overrides()) -> RunSettings:
    """Read every config once (``configs/default.toml`` when none), apply the overrides, check all before any work.

    Refused: an override out of range, an auxiliary corpus that cannot be read,
    a spaCy pipeline that is not installed or a data file that is not there,
    configs with different role inventories or names, and configs whose
    ``[evaluation]`` sections disagree on a key the command line does not set.
    """
    paths = [Path(p) for p in config_paths]
    _check_overrides(overrides)
    if not paths and not DEFAULT_CONFIG.is_file():
        raise ConfigError(f"no config given, and the recommended one ({DEFAULT_CONFIG}) is not there",
                          "name a config with -c (itinerant's source has ready ones in configs/)")
    read = paths or [DEFAULT_CONFIG]
    configs = [add_auxiliary(load_config(p), overrides.auxiliary, overrides.augment) for p in read]
    if overrides.confidence():
        configs = [replace(c, confidence=replace(c.confidence, **overrides.confidence())) for c in configs]
    if overrides.target_precision is not None and any(c.confidence.thresholds != "precision" for c in configs):
        raise ConfigError("--target-precision is read only when each label's threshold is chosen for precision",
                          "add --thresholds precision (or set [confidence] thresholds = \"precision\"), "
                          "or leave --target-precision out")
    check_sources([source for c in configs for source in c.auxiliary.corpora])
    for config, path in zip(configs, read):
        check_config_inputs(config, str(path))
    roles = configs[0].roles
    if any(c.roles != roles for c in configs):
        raise ConfigError("configs use different role inventories", "compare configs with the same [corpus] roles")
    unique_names(configs)
    evaluation = _shared_evaluation(configs, paths, set(overrides.evaluation()))
    values = {**evaluation.__dict__, **overrides.evaluation()}
    settings = _scoring(values)
    folds = FoldOptions(folds=values["folds"], repeats=values["repeats"], seed=values["seed"],
                        leave_one_doc_out=overrides.leave_one_doc_out, leave_one_book_out=overrides.leave_one_book_out,
                        test_docs=overrides.test_docs)
    if sum([folds.leave_one_doc_out, folds.leave_one_book_out, bool(folds.test_docs)]) > 1:
        raise ConfigError("choose one way to split: --leave-one-doc-out, --leave-one-book-out or a fixed split",
                          "drop all but one of them")
    fixed = folds.leave_one_doc_out or folds.leave_one_book_out or bool(folds.test_docs)
    if fixed and (overrides.folds is not None or overrides.repeats is not None):
        raise ConfigError("--folds and --repeats set K shuffled folds; a leave-one-out or fixed split makes its own",
                          "drop --folds and --repeats, or the leave-one-out or fixed split")
    return RunSettings(configs, settings, folds, paths)


def scoring_settings(overrides: Overrides = Overrides()) -> EvaluationSettings:
    """How to score where no config takes part (``itinerant score``): the evaluation defaults and the overrides."""
    _check_overrides(overrides)
    return _scoring({**EvaluationConfig().__dict__, **overrides.evaluation()})


def _check_overrides(overrides: Overrides) -> None:
    for section, values in (("evaluation", overrides.evaluation()), ("confidence", overrides.confidence())):
        for key, value in values.items():
            check_value(f"{section}.{key}", value, OPTION_NAMES.get(key, f"--{key.replace('_', '-')}"))


def _scoring(values: dict[str, Any]) -> EvaluationSettings:
    return EvaluationSettings(mode=values["mode"], bootstrap_samples=values["bootstrap_samples"],
                              bootstrap_unit=values["bootstrap_unit"], seed=values["seed"])


def _shared_evaluation(configs: Sequence[ExperimentConfig], paths: Sequence[Path],
                       overridden: set[str]) -> EvaluationConfig:
    """The ``[evaluation]`` section all configs agree on, ignoring the keys the command line overrides."""
    first = configs[0].evaluation
    for path, config in zip(paths[1:], configs[1:]):
        conflicts = [f.name for f in fields(EvaluationConfig)
                     if f.name not in overridden and getattr(config.evaluation, f.name) != getattr(first, f.name)]
        if conflicts:
            detail = ", ".join(f"evaluation.{k} = {getattr(first, k)!r} in {paths[0]} but {getattr(config.evaluation, k)!r} "
                               f"in {path}" for k in conflicts)
            raise ConfigError(f"the configs disagree on how to evaluate: {detail}",
                              "give every config the same [evaluation] values, or set them on the command line "
                              "(e.g. --seed, --folds, --mode)")
    return first


def unique_names(configs: Sequence[ExperimentConfig]) -> list[str]:
    """The configs' names, refusing repeats (reports and predictions are keyed by name)."""
    names = [c.name for c in configs]
    if len(set(names)) != len(names):
        raise ConfigError(f"configs share a name: {names}", "give each config a distinct `name` (or file name)")
    return names
