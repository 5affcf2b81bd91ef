"""Learning-curve extrapolation: known parameters recovered, reliability rules, a grid-search cross-check."""

from __future__ import annotations

import json

import numpy as np
import pytest

from trainer.errors import ConfigError
from trainer.evaluation.extrapolate import (
    describe_fit,
    extrapolate_curve,
    extrapolation_report,
    fit_learning_curve,
    inverse_power_law,
)

A, B, C = 0.85, 2.0, 0.6
SIZES = [40.0, 80.0, 160.0, 320.0, 640.0]


def truth(n):
    return A - B * np.power(n, -C)


def curve_of(systems: dict[str, list[tuple[float, float]]]) -> dict:
    """A learning-curve output (trainer.experiment.curve) with the given (train_records, micro F1) points."""
    shares = [0.2, 0.4, 0.6, 0.8, 1.0]
    return {"shares": shares, "systems": {
        name: [{"share": s, "train_records": n, "f1": {"micro": f, "macro": f / 2}} for s, (n, f) in zip(shares, pts)]
        for name, pts in systems.items()}}


def test_noiseless_points_give_back_the_parameters() -> None:
    fit = fit_learning_curve(SIZES, truth(np.array(SIZES)))
    assert fit.params == pytest.approx({"a": A, "b": B, "c": C}, abs=1e-6)
    assert fit.reliable is True and fit.reasons == []
    assert [e.factor for e in fit.estimates] == [1.5, 2.0, 4.0]
    assert [e.train_records for e in fit.estimates] == [960.0, 1280.0, 2560.0]
    for estimate in fit.estimates:
        assert estimate.f1 == pytest.approx(truth(estimate.train_records), abs=1e-6)
        assert estimate.low <= estimate.f1 + 1e-9 and estimate.f1 <= estimate.high + 1e-9
        assert estimate.high - estimate.low < 1e-6  # no noise: a point interval
        assert estimate.beyond_data is False


def test_noisy_points_get_an_interval_that_holds_the_estimate() -> None:
    rng = np.random.default_rng(7)
    sizes = np.array([25.0, 50, 100, 200, 400, 800, 1600])
    fit = fit_learning_curve(sizes, truth(sizes) + rng.normal(0, 0.004, sizes.size), seed=3)
    assert fit.params["a"] == pytest.approx(A, abs=0.05)
    for estimate in fit.estimates:
        assert estimate.low < estimate.f1 < estimate.high
    again = fit_learning_curve(sizes, truth(sizes) + np.random.default_rng(7).normal(0, 0.004, sizes.size), seed=3)
    assert again == fit  # deterministic for a seed


def test_fit_agrees_with_a_grid_search_reference() -> None:
    # For a fixed c the model is linear in (a, b): solve that by least squares on a fine grid of c and keep the best.
    rng = np.random.default_rng(11)
    sizes = np.array([30.0, 60, 120, 240, 480, 960])
    values = truth(sizes) + rng.normal(0, 0.01, sizes.size)
    best = (np.inf, None)
    for c in np.arange(0.05, 2.0, 0.0005):
        design = np.column_stack([np.ones_like(sizes), -np.power(sizes, -c)])
        (a, b), *_ = np.linalg.lstsq(design, values, rcond=None)
        if 0 <= a <= 1 and b >= 0:
            sse = float(np.sum((design @ [a, b] - values) ** 2))
            best = min(best, (sse, (a, b, c)), key=lambda t: t[0])
    fit = fit_learning_curve(sizes, values)
    ours = float(np.sum((inverse_power_law(sizes, *fit.params.values()) - values) ** 2))
    assert ours <= best[0] + 1e-9
    assert list(fit.params.values()) == pytest.approx(list(best[1]), rel=2e-2)


def test_too_few_points_are_unreliable() -> None:
    fit = fit_learning_curve(SIZES[:3], truth(np.array(SIZES[:3])))
    assert fit.reliable is False
    assert fit.reasons == [
        "only 3 distinct training size(s); at least 4 are needed to fit 3 parameters and judge the fit",
        "the parameter covariance is not finite (the points do not pin the 3 parameters down); no interval",
    ]
    assert all(e.low is None and e.high is None for e in fit.estimates)
    two = fit_learning_curve(SIZES[:2], [0.5, 0.6])
    assert two.params is None and [e.f1 for e in two.estimates] == [None, None, None]
    assert two.reasons == ["only 2 distinct training size(s); at least 4 are needed to fit 3 parameters and "
                           "judge the fit"]
    repeated = fit_learning_curve([100, 100, 200, 200, 300], [0.5, 0.51, 0.6, 0.61, 0.65])
    assert repeated.reliable is False and repeated.reasons[0].startswith("only 3 distinct training size(s)")


def test_far_extrapolation_is_unreliable() -> None:
    fit = fit_learning_curve(SIZES, truth(np.array(SIZES)), factors=(2, 8))
    assert fit.reliable is False
    assert fit.reasons == ["extrapolation to 8x the largest training size (640 records) is more than 4x beyond "
                           "the data"]
    assert [e.beyond_data for e in fit.estimates] == [False, True]
    assert fit.estimates[1].f1 == pytest.approx(truth(5120.0), abs=1e-6)  # still estimated, but flagged
    assert fit_learning_curve(SIZES, truth(np.array(SIZES)), factors=(8,), max_factor=10).reliable is True


def test_a_flat_or_falling_curve_is_unreliable() -> None:
    fit = fit_learning_curve([10, 20, 30, 40], [0.5, 0.4, 0.45, 0.3])
    assert fit.reliable is False
    assert "b sits on its bound 0: the fitted curve is flat (F1 does not rise with training size)" in fit.reasons
    assert any(r.startswith("parameter b = ") for r in fit.reasons)  # huge relative error


def test_non_finite_points_are_left_out_and_said() -> None:
    fit = fit_learning_curve([*SIZES, 0.0, 50.0], [*truth(np.array(SIZES)), 0.1, float("nan")])
    assert fit.points == tuple(zip(SIZES, truth(np.array(SIZES))))
    assert fit.reasons == ["2 point(s) left out (size <= 0 or value not finite)"]


def test_extrapolate_curve_output_and_report() -> None:
    sizes = np.array(SIZES)
    curve = curve_of({"crf": list(zip(SIZES, truth(sizes))), "rules": list(zip(SIZES[:3], [0.3, 0.31, 0.32]))})
    fits = extrapolate_curve(curve)
    assert list(fits) == ["crf", "rules"]
    assert fits["crf"].reliable and not fits["rules"].reliable
    assert extrapolate_curve(curve, score="macro")["crf"].params["a"] == pytest.approx(A / 2, abs=1e-6)
    report = extrapolation_report(fits)
    json.dumps(report, allow_nan=False)  # plain JSON
    crf = report["systems"]["crf"]
    assert report["model"] == "f(n) = a - b * n^(-c)" and crf["reliable"] is True and crf["reasons"] == []
    assert crf["params"] == {"a": 0.85, "b": 2.0, "c": 0.6}
    assert crf["interval"] == {"method": "parameter sampling from the fit covariance (multivariate normal, "
                                         "clipped to the bounds)", "confidence": 0.95, "samples": 2000, "seed": 13}
    assert [e["train_records"] for e in crf["estimates"]] == [960.0, 1280.0, 2560.0]
    text = describe_fit("rules", fits["rules"])
    assert text[-1].startswith("rules: UNRELIABLE extrapolation: only 3 distinct training size(s)")


def test_bad_options_are_refused() -> None:
    curve = curve_of({"crf": list(zip(SIZES, truth(np.array(SIZES))))})
    with pytest.raises(ConfigError) as caught:
        extrapolate_curve(curve, score="micro_f1")
    assert caught.value.cause == "system 'crf': the learning curve has no F1 named 'micro_f1'"
    assert caught.value.fix == "use one of macro, micro"
    with pytest.raises(ConfigError):
        fit_learning_curve(SIZES, truth(np.array(SIZES)), confidence=1.0)
    with pytest.raises(ConfigError):
        fit_learning_curve(SIZES, truth(np.array(SIZES)), factors=(0,))
    with pytest.raises(ConfigError):
        fit_learning_curve(SIZES, [0.5])
