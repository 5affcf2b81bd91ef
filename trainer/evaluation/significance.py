"""Paired approximate randomization test of two systems on the same gold, by unit (document).

Under the null hypothesis the two systems are exchangeable, so each unit's
counts of system A and system B may be swapped. A trial swaps each unit's
pair with probability 1/2 and recomputes ``statistic(A') - statistic(B')``.
Two-sided: a trial counts when ``|difference|`` reaches the observed one. The
p-value is ``(count + 1) / (trials + 1)`` (the observed split counts as a
trial, so p is never 0). ``exact=True`` enumerates all ``2**n`` swaps instead,
and p is ``count / 2**n`` (the identity is among them).

Per-role p-values from :func:`compare_f1s` are not corrected for testing
several roles at once; :func:`holm` corrects a family of p-values (a run
corrects each score's p-values across its pairs of configs).
"""

from __future__ import annotations

import itertools
from typing import Callable, Mapping, Sequence

import numpy as np

from trainer.config import DEFAULT_SEED, DEFAULT_TRIALS
from trainer.errors import ConfigError, CorpusError
from trainer.evaluation.scoring import UnitCounts, check_roles, counts_array, f1_arrays

Statistic = Callable[[Sequence[UnitCounts]], float]
MAX_EXACT_UNITS = 20
TOLERANCE = 1e-9  # differences this close to the observed one count as equal (float rounding)


def swap_masks(n_units: int, *, trials: int, seed: int, exact: bool = False) -> np.ndarray:
    """``(trials, n_units)`` booleans, True where a unit's A and B counts are swapped.

    Random: drawn with ``numpy.random.default_rng(seed)``. Exact: all ``2**n_units`` masks.
    """
    if exact:
        if n_units > MAX_EXACT_UNITS:
            raise ConfigError(f"exact=True enumerates 2**{n_units} swaps; at most {MAX_EXACT_UNITS} units allowed",
                              "use the randomized test (exact=False)")
        return np.array(list(itertools.product([False, True], repeat=n_units)), dtype=bool).reshape(-1, n_units)
    if trials < 1:
        raise ConfigError(f"trials must be at least 1, got {trials}", "use e.g. trials=9999")
    return np.random.default_rng(seed).integers(0, 2, size=(trials, n_units)).astype(bool)


def p_value(differences: np.ndarray, observed: float, *, exact: bool) -> float:
    """Two-sided p-value of ``observed`` among the trial differences (see the module docstring)."""
    count = int(np.count_nonzero(np.abs(differences) >= abs(observed) - TOLERANCE))
    if exact:
        return count / len(differences)
    return (count + 1) / (len(differences) + 1)


def _check_units(n_a: int, n_b: int) -> None:
    if n_a != n_b:
        raise CorpusError(f"system A has {n_a} units but system B has {n_b}",
                          "score both systems on the same gold records and group them the same way")
    if n_a == 0:
        raise CorpusError("no units to compare", "score at least one annotated record first")


def paired_randomization(
    units_a: Sequence[UnitCounts],
    units_b: Sequence[UnitCounts],
    *,
    statistic: Statistic,
    trials: int = DEFAULT_TRIALS,
    seed: int = DEFAULT_SEED,
    exact: bool = False,
) -> tuple[float, float]:
    """``(statistic(A) - statistic(B), two-sided p-value)``; ``units_a[i]`` and ``units_b[i]`` are the same unit.

    ``statistic`` maps a list of unit counts to a number, as for the bootstrap.
    ``trials`` is ignored when ``exact`` is true (all swaps are enumerated).
    """
    units_a, units_b = list(units_a), list(units_b)
    _check_units(len(units_a), len(units_b))
    observed = statistic(units_a) - statistic(units_b)
    masks = swap_masks(len(units_a), trials=trials, seed=seed, exact=exact)
    differences = np.empty(len(masks))
    for t, mask in enumerate(masks):
        a = [b if swap else a for a, b, swap in zip(units_a, units_b, mask)]
        b = [a if swap else b for a, b, swap in zip(units_a, units_b, mask)]
        differences[t] = statistic(a) - statistic(b)
    return float(observed), p_value(differences, observed, exact=exact)


def compare_f1s(
    counts_a: Mapping[str, UnitCounts],
    counts_b: Mapping[str, UnitCounts],
    roles: Sequence[str],
    *,
    trials: int = DEFAULT_TRIALS,
    seed: int = DEFAULT_SEED,
    exact: bool = False,
) -> dict[str, tuple[float, float]]:
    """``(F1 of A - F1 of B, p-value)`` for every F1 in ``Scores`` (per role, micro, macro, trigger, unlinked).

    ``counts_a`` and ``counts_b`` map the same unit ids (e.g. docs, from
    ``CorpusCounts.units()``) to each system's counts. Vectorised; for a seed it
    gives the same p-values as :func:`paired_randomization` with the matching statistic.
    """
    roles = check_roles(roles)
    if set(counts_a) != set(counts_b):
        only = sorted(set(counts_a) ^ set(counts_b))
        raise CorpusError(f"the systems were scored on different units: {only[:5]} are in only one of them",
                          "score both systems on the same gold records")
    ids = sorted(counts_a)
    _check_units(len(ids), len(ids))
    a = counts_array([counts_a[i] for i in ids], roles)  # (units, keys, 3)
    b = counts_array([counts_b[i] for i in ids], roles)
    gold_a, gold_b = a[..., 0] + a[..., 2], b[..., 0] + b[..., 2]
    differ = [ids[i] for i in np.flatnonzero((gold_a != gold_b).any(axis=1))]
    if differ:
        raise CorpusError(f"systems A and B count different gold instances in unit(s) {differ[:5]}",
                          "score both systems against the same gold records, with the same mode and roles")
    f1_a, f1_b = f1_arrays(a.sum(axis=0), roles), f1_arrays(b.sum(axis=0), roles)
    # Swapping unit i moves (b_i - a_i) from B's totals to A's: A' = sum(a) + masks @ (b - a).
    masks = swap_masks(len(ids), trials=trials, seed=seed, exact=exact).astype(np.int64)
    moved = (masks @ (b - a).reshape(len(ids), -1)).reshape(len(masks), *a.shape[1:])
    trial_a = f1_arrays(a.sum(axis=0) + moved, roles)
    trial_b = f1_arrays(b.sum(axis=0) - moved, roles)
    out = {}
    for name in f1_a:
        observed = float(f1_a[name]) - float(f1_b[name])
        out[name] = (observed, p_value(trial_a[name] - trial_b[name], observed, exact=exact))
    return out


def holm(p_values: Sequence[float]) -> list[float]:
    """Holm's step-down adjusted p-values, in the order given (Holm 1979).

    With the m p-values sorted ascending, the i-th (from 1) becomes
    ``min(1, max over j <= i of (m - j + 1) * p_(j))``; a hypothesis is
    rejected at level alpha when its adjusted p-value is at most alpha. This
    controls the family-wise error rate under any dependence between the tests.
    """
    values = np.asarray(p_values, dtype=float)
    if values.size and (np.isnan(values).any() or values.min() < 0 or values.max() > 1):
        raise ConfigError(f"p-values must lie in [0, 1], got {list(p_values)}", "pass p-values, not test statistics")
    order = np.argsort(values, kind="stable")
    m = len(values)
    stepped = np.maximum.accumulate(values[order] * (m - np.arange(m)))
    adjusted = np.empty(m)
    adjusted[order] = np.minimum(stepped, 1.0)
    return [float(x) for x in adjusted]
