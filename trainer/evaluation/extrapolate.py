"""Extrapolating a learning curve: how much would more annotation help?

The points are a learning curve's ``(train_records, F1)`` pairs (the output of
:func:`trainer.experiment.curve.learning_curve`). They are fitted with an
inverse power law

    f(n) = a - b * n ** (-c),   a in [0, 1], b >= 0, c in (0, 2]

(``a`` the plateau, ``b`` how far below it the curve starts, ``c`` how fast it
closes the gap) by least squares (:func:`scipy.optimize.curve_fit`, bounded
``trf``). F1 is then estimated at ``factor`` times the largest training size.

Interval: parameters are drawn ``samples`` times from a normal distribution
with the fitted values as mean and curve_fit's covariance (residual variance
scaled, ``absolute_sigma=False``), clipped to the bounds; the central
``confidence`` share of the resulting F1 values (each clipped to [0, 1]) is
the interval. It reflects the fit's parameter uncertainty only, not the
uncertainty of each point (see the bootstrap intervals for that), and with 4
or 5 points it is rough.

``reliable`` is false, with one reason per problem, when: fewer than
:data:`MIN_POINTS` distinct training sizes; curve_fit fails; the covariance is
not finite; a parameter's standard error exceeds ``max_relative_error`` times
its value; a parameter sits on a bound (``a = 1``, ``b = 0``, ``c = 2``,
``c`` near 0); or a target lies more than ``max_factor`` times beyond the
largest training size. Every function here is pure: data in, data out.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np
from scipy.optimize import OptimizeWarning, curve_fit

from trainer.config import DEFAULT_CONFIDENCE, DEFAULT_SEED
from trainer.errors import ConfigError

MODEL = "f(n) = a - b * n^(-c)"
PARAMETERS = ("a", "b", "c")
C_MIN = 1e-6  # curve_fit bounds are closed; c must stay above 0
LOWER = (0.0, 0.0, C_MIN)
UPPER = (1.0, math.inf, 2.0)
MIN_POINTS = 4  # three parameters: with 3 points the fit is exact and says nothing about its error
DEFAULT_FACTORS = (1.5, 2.0, 4.0)
MAX_FACTOR = 4.0
MAX_RELATIVE_ERROR = 1.0
INTERVAL_METHOD = "parameter sampling from the fit covariance (multivariate normal, clipped to the bounds)"
_AT_BOUND = 1e-6


def inverse_power_law(n: np.ndarray | float, a: float, b: float, c: float) -> np.ndarray | float:
    """``a - b * n ** (-c)``, element-wise."""
    return a - b * np.power(n, -c)


@dataclass(frozen=True)
class Estimate:
    """F1 predicted at ``train_records`` (= ``factor`` x the largest training size), with its interval."""

    factor: float
    train_records: float
    f1: float | None
    low: float | None
    high: float | None
    beyond_data: bool

    def to_dict(self) -> dict[str, Any]:
        return {"factor": self.factor, "train_records": round(self.train_records, 1),
                "f1": _round(self.f1), "low": _round(self.low), "high": _round(self.high),
                "beyond_data": self.beyond_data}


@dataclass(frozen=True)
class CurveFit:
    """The fit of one score of one system and its extrapolations.

    ``params`` and ``errors`` (standard errors) map ``a``, ``b``, ``c`` to
    values; they are ``None`` when there was no fit (``errors`` also when the
    covariance is not finite). ``points`` are the ``(train_records, f1)``
    pairs used, sorted by size.
    """

    score: str
    points: tuple[tuple[float, float], ...]
    params: dict[str, float] | None
    errors: dict[str, float] | None
    estimates: tuple[Estimate, ...]
    reliable: bool
    reasons: list[str] = field(default_factory=list)
    confidence: float = DEFAULT_CONFIDENCE
    samples: int = 2000
    seed: int = DEFAULT_SEED
    model: str = MODEL
    interval_method: str = INTERVAL_METHOD

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-able data, floats rounded to 6 places."""
        return {
            "score": self.score, "model": self.model,
            "points": [[x, _round(y)] for x, y in self.points],
            "params": None if self.params is None else {k: _round(v) for k, v in self.params.items()},
            "errors": None if self.errors is None else {k: _round(v) for k, v in self.errors.items()},
            "estimates": [e.to_dict() for e in self.estimates],
            "reliable": self.reliable, "reasons": list(self.reasons),
            "interval": {"method": self.interval_method, "confidence": self.confidence,
                         "samples": self.samples, "seed": self.seed},
        }


def _round(value: float | None) -> float | None:
    return None if value is None else round(float(value), 6)


def _check_options(factors: Sequence[float], confidence: float, samples: int, max_factor: float,
                   max_relative_error: float) -> None:
    if not factors or any(not (isinstance(f, (int, float)) and math.isfinite(f) and f > 0) for f in factors):
        raise ConfigError(f"factors must be positive numbers, got {list(factors)}", "e.g. factors=(1.5, 2, 4)")
    if not 0.0 < confidence < 1.0:
        raise ConfigError(f"confidence must lie strictly between 0 and 1, got {confidence}", "use e.g. 0.95")
    if samples < 1:
        raise ConfigError(f"samples must be at least 1, got {samples}", "use e.g. 2000")
    if not max_factor > 0 or not max_relative_error > 0:
        raise ConfigError(f"max_factor and max_relative_error must be positive, got {max_factor} and "
                          f"{max_relative_error}", f"use e.g. {MAX_FACTOR} and {MAX_RELATIVE_ERROR}")


def fit_learning_curve(
    train_records: Sequence[float], f1: Sequence[float], *, score: str = "micro",
    factors: Sequence[float] = DEFAULT_FACTORS, confidence: float = DEFAULT_CONFIDENCE, samples: int = 2000, seed: int = DEFAULT_SEED,
    max_factor: float = MAX_FACTOR, max_relative_error: float = MAX_RELATIVE_ERROR,
) -> CurveFit:
    """Fit :func:`inverse_power_law` to ``(train_records[i], f1[i])`` and estimate F1 at ``factor`` x the largest size.

    Points with a non-finite value or a size <= 0 are left out (a reason says
    so). Never raises for bad data: a fit that cannot be made comes back with
    ``params=None``, estimates of ``None`` and ``reliable=False``.
    """
    _check_options(factors, confidence, samples, max_factor, max_relative_error)
    if len(train_records) != len(f1):
        raise ConfigError(f"{len(train_records)} training sizes but {len(f1)} F1 values",
                          "give one F1 per training size")
    reasons: list[str] = []
    pairs = [(float(x), float(y)) for x, y in zip(train_records, f1)]
    points = sorted((x, y) for x, y in pairs if math.isfinite(x) and math.isfinite(y) and x > 0)
    if len(points) < len(pairs):
        reasons.append(f"{len(pairs) - len(points)} point(s) left out (size <= 0 or value not finite)")
    sizes = np.array([x for x, _ in points])
    values = np.array([y for _, y in points])
    distinct = len(set(sizes.tolist()))
    largest = float(sizes.max()) if len(sizes) else 0.0
    targets = [(float(f), float(f) * largest) for f in factors]
    far = [f for f, _ in targets if f > max_factor]
    if far:
        reasons.append(f"extrapolation to {', '.join(f'{f:g}x' for f in far)} the largest training size "
                       f"({largest:g} records) is more than {max_factor:g}x beyond the data")
    if distinct < MIN_POINTS:
        reasons.insert(0, f"only {distinct} distinct training size(s); at least {MIN_POINTS} are needed to fit "
                          f"3 parameters and judge the fit")
    common = dict(score=score, points=tuple(points), confidence=confidence, samples=samples, seed=seed)
    if distinct < len(PARAMETERS):
        return CurveFit(params=None, errors=None, estimates=_empty(targets, max_factor), reliable=False,
                        reasons=reasons, **common)
    params, covariance, failure = _fit(sizes, values)
    if failure:
        reasons.append(failure)
        return CurveFit(params=None, errors=None, estimates=_empty(targets, max_factor), reliable=False,
                        reasons=reasons, **common)
    errors = None
    if covariance is None:
        reasons.append("the parameter covariance is not finite (the points do not pin the 3 parameters down); "
                       "no interval")
    else:
        stderr = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
        errors = dict(zip(PARAMETERS, map(float, stderr)))
        for name, value, error in zip(PARAMETERS, params, stderr):
            if error > max_relative_error * abs(value):
                ratio = "no finite ratio to" if value == 0 else f"{error / abs(value):.3g} times"
                reasons.append(f"parameter {name} = {value:.4g} has standard error {error:.3g} ({ratio} its "
                               f"value; the limit is {max_relative_error:g} times)")
    reasons.extend(_bound_reasons(params))
    estimates = _estimates(params, covariance, targets, max_factor=max_factor, confidence=confidence,
                           samples=samples, seed=seed)
    return CurveFit(params=dict(zip(PARAMETERS, map(float, params))), errors=errors, estimates=estimates,
                    reliable=not reasons, reasons=reasons, **common)


def _fit(sizes: np.ndarray, values: np.ndarray) -> tuple[np.ndarray, np.ndarray | None, str]:
    """``(params, covariance or None when not finite, failure message or "")``."""
    top = float(min(1.0, max(values.max() + 0.05, 0.05)))
    start_b = max((top - float(values[0])) * float(sizes[0]) ** 0.5, 1e-3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", OptimizeWarning)
        try:
            params, covariance = curve_fit(
                inverse_power_law, sizes, values, p0=(top, start_b, 0.5), bounds=(LOWER, UPPER),
                method="trf", maxfev=20000, ftol=1e-12, xtol=1e-12, gtol=1e-12,
            )
        except (RuntimeError, ValueError) as exc:
            return np.full(3, np.nan), None, f"curve_fit failed: {exc}"
    if not np.all(np.isfinite(params)):
        return params, None, "curve_fit returned non-finite parameters"
    if not np.all(np.isfinite(covariance)):
        return params, None, ""
    return params, covariance, ""


def _bound_reasons(params: np.ndarray) -> list[str]:
    a, b, c = map(float, params)
    out = []
    if a >= UPPER[0] - _AT_BOUND:
        out.append("a sits on its bound 1: the points do not show where F1 levels off")
    if b <= _AT_BOUND:
        out.append("b sits on its bound 0: the fitted curve is flat (F1 does not rise with training size)")
    if c >= UPPER[2] - _AT_BOUND or c <= 10 * C_MIN:
        out.append(f"c = {c:.3g} sits on a bound of (0, 2]: the curve's shape is not fixed by the points")
    return out


def _empty(targets: list[tuple[float, float]], max_factor: float) -> tuple[Estimate, ...]:
    return tuple(Estimate(f, n, None, None, None, f > max_factor) for f, n in targets)


def _estimates(
    params: np.ndarray, covariance: np.ndarray | None, targets: list[tuple[float, float]], *,
    max_factor: float, confidence: float, samples: int, seed: int,
) -> tuple[Estimate, ...]:
    sizes = np.array([n for _, n in targets])
    central = np.clip(inverse_power_law(sizes, *params), 0.0, 1.0)
    lows = highs = [None] * len(targets)
    if covariance is not None:
        rng = np.random.default_rng(seed)
        draws = rng.multivariate_normal(params, (covariance + covariance.T) / 2, size=samples,
                                        check_valid="ignore", method="eigh")
        draws = np.clip(draws, LOWER, UPPER)
        values = np.clip(inverse_power_law(sizes[None, :], draws[:, :1], draws[:, 1:2], draws[:, 2:3]), 0.0, 1.0)
        alpha = (1.0 - confidence) / 2
        lows = [float(v) for v in np.quantile(values, alpha, axis=0)]
        highs = [float(v) for v in np.quantile(values, 1.0 - alpha, axis=0)]
    return tuple(
        Estimate(factor, n, float(value), low, high, factor > max_factor)
        for (factor, n), value, low, high in zip(targets, central, lows, highs)
    )


def extrapolate_curve(
    curve: Mapping[str, Any], *, score: str = "micro", factors: Sequence[float] = DEFAULT_FACTORS,
    confidence: float = DEFAULT_CONFIDENCE, samples: int = 2000, seed: int = DEFAULT_SEED, max_factor: float = MAX_FACTOR,
    max_relative_error: float = MAX_RELATIVE_ERROR,
) -> dict[str, CurveFit]:
    """One :class:`CurveFit` per system of a learning curve, in the curve's system order.

    ``curve`` is ``{"shares": [...], "systems": {name: [{"share", "train_records", "f1": {score: value}}]}}``.
    A ``score`` missing from a point is a :class:`ConfigError` naming the scores there are.
    """
    fits = {}
    for name, points in curve.get("systems", {}).items():
        for point in points:
            if score not in point.get("f1", {}):
                raise ConfigError(f"system {name!r}: the learning curve has no F1 named {score!r}",
                                  f"use one of {', '.join(sorted(point.get('f1', {})))}")
        fits[name] = fit_learning_curve(
            [p["train_records"] for p in points], [p["f1"][score] for p in points], score=score, factors=factors,
            confidence=confidence, samples=samples, seed=seed, max_factor=max_factor,
            max_relative_error=max_relative_error,
        )
    return fits


def extrapolation_report(fits: Mapping[str, CurveFit]) -> dict[str, Any]:
    """``{"model", "systems": {name: fit.to_dict()}}``: JSON-able, to sit beside the learning curve."""
    return {"model": MODEL, "systems": {name: fit.to_dict() for name, fit in fits.items()}}


def describe_fit(name: str, fit: CurveFit) -> list[str]:
    """Plain-text lines for a terminal: one per estimate, then the verdict and its reasons."""
    lines = []
    for e in fit.estimates:
        if e.f1 is None:
            lines.append(f"{name}: {fit.score} F1 at {e.train_records:g} records ({e.factor:g}x): no estimate")
            continue
        interval = "" if e.low is None else f" [{e.low:.3f}, {e.high:.3f}]"
        lines.append(f"{name}: {fit.score} F1 at {e.train_records:g} records ({e.factor:g}x): {e.f1:.3f}{interval}")
    if fit.reliable:
        lines.append(f"{name}: fit looks reliable ({len(fit.points)} points)")
    else:
        lines.append(f"{name}: UNRELIABLE extrapolation: " + "; ".join(fit.reasons))
    return lines
