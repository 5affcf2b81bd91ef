"""Percentile bootstrap intervals over resampled units (documents by default).

Units are the things drawn with replacement: per-document counts (group
per-record counts with :meth:`CorpusCounts.units`, ``by="doc"``) or, optionally,
per-record counts (``by="record"``). Resampling documents respects that
sentences of one document are not independent; with few documents the
intervals are wide, and that is the honest answer.

Each sample draws ``len(units)`` unit indices with ``numpy.random.default_rng(seed)``;
:func:`bootstrap_interval` (any statistic) and :func:`bootstrap_f1s` (every F1
of :class:`~trainer.evaluation.scoring.Scores`, vectorised) draw the same
indices for the same seed, so they agree exactly.
"""

from __future__ import annotations

from typing import Callable, Mapping, Sequence

import numpy as np

from trainer.config import DEFAULT_BOOTSTRAP_SAMPLES, DEFAULT_CONFIDENCE, DEFAULT_SEED
from trainer.errors import ConfigError, CorpusError
from trainer.evaluation.scoring import UnitCounts, check_roles, counts_array, f1_arrays

Statistic = Callable[[Sequence[UnitCounts]], float]
MIN_INTERVAL_DOCS = 5  # below this many docs an interval is shown with a warning


def interval_warning(docs: int) -> str | None:
    """A warning for intervals computed from fewer than :data:`MIN_INTERVAL_DOCS` documents, else ``None``."""
    if docs >= MIN_INTERVAL_DOCS:
        return None
    return (f"the intervals come from only {docs} doc(s) (fewer than {MIN_INTERVAL_DOCS}): resampling so few "
            "documents says little about other texts; read them as rough")


def _check(n_units: int, samples: int, confidence: float) -> None:
    if n_units == 0:
        raise CorpusError("no units to resample", "score at least one annotated record first")
    if samples < 1:
        raise ConfigError(f"samples must be at least 1, got {samples}", "use e.g. samples=1000")
    if not 0.0 < confidence < 1.0:
        raise ConfigError(f"confidence must lie strictly between 0 and 1, got {confidence}", "use e.g. 0.95")


def resample_indices(n_units: int, *, samples: int, seed: int) -> np.ndarray:
    """``(samples, n_units)`` unit indices drawn with replacement."""
    return np.random.default_rng(seed).integers(0, n_units, size=(samples, n_units))


def percentile_interval(values: np.ndarray, confidence: float) -> tuple[float, float]:
    """The central ``confidence`` interval of bootstrap values (linear interpolation, as numpy and scipy)."""
    alpha = (1.0 - confidence) / 2
    low, high = np.percentile(values, [100 * alpha, 100 * (1 - alpha)])
    return float(low), float(high)


def _resampled_totals(per_unit: np.ndarray, indices: np.ndarray) -> np.ndarray:
    """Summed counts of each resample: how often each unit was drawn, times its counts."""
    samples, n_units = indices.shape
    offsets = indices + n_units * np.arange(samples)[:, None]
    draws = np.bincount(offsets.ravel(), minlength=samples * n_units).reshape(samples, n_units)
    return (draws @ per_unit.reshape(n_units, -1)).reshape(samples, *per_unit.shape[1:])


def bootstrap_interval(
    unit_counts: Sequence[UnitCounts],
    *,
    statistic: Statistic,
    samples: int = DEFAULT_BOOTSTRAP_SAMPLES,
    seed: int = DEFAULT_SEED,
    confidence: float = DEFAULT_CONFIDENCE,
) -> tuple[float, float]:
    """Percentile interval of ``statistic`` over resamples of the units.

    ``unit_counts`` is a list of ``{key: Counts}`` dicts, one per unit;
    ``statistic`` maps such a list to a number, e.g.
    ``lambda units: scores_from_counts(units, roles).micro.f1``.
    """
    units = list(unit_counts)
    _check(len(units), samples, confidence)
    indices = resample_indices(len(units), samples=samples, seed=seed)
    values = np.array([statistic([units[i] for i in row]) for row in indices], dtype=float)
    return percentile_interval(values, confidence)


def bootstrap_f1s(
    counts_by_unit: Mapping[str, UnitCounts] | Sequence[UnitCounts],
    roles: Sequence[str],
    *,
    samples: int = DEFAULT_BOOTSTRAP_SAMPLES,
    seed: int = DEFAULT_SEED,
    confidence: float = DEFAULT_CONFIDENCE,
) -> dict[str, tuple[float, float]]:
    """Percentile interval of every F1 in ``Scores`` (per role, micro, macro, trigger, unlinked), by name.

    ``counts_by_unit`` maps unit ids to their counts (e.g.
    ``corpus_counts.units(by="doc")``) or is a list of unit counts.
    """
    roles = check_roles(roles)
    units = list(counts_by_unit.values()) if isinstance(counts_by_unit, Mapping) else list(counts_by_unit)
    _check(len(units), samples, confidence)
    per_unit = counts_array(units, roles)  # (units, keys, 3)
    indices = resample_indices(len(units), samples=samples, seed=seed)
    totals = _resampled_totals(per_unit, indices)  # (samples, keys, 3)
    return {name: percentile_interval(values, confidence) for name, values in f1_arrays(totals, roles).items()}
