"""Bootstrap intervals: hand cases, one path for every F1, agreement with scipy, speed."""

from __future__ import annotations

import time

import numpy as np
import pytest
from evaluation_samples import ROLES, hand_corpus
from scipy.stats import bootstrap

from trainer.errors import ConfigError, CorpusError
from trainer.evaluation.bootstrap import bootstrap_f1s, bootstrap_interval
from trainer.evaluation.scoring import Counts, count_corpus, f1_names, prf, scores_from_counts


def micro_f1(units: list) -> float:
    return scores_from_counts(units, ROLES).micro.f1


def test_identical_units_give_a_point_interval() -> None:
    units = [{"mover": Counts(1, 1, 0)}] * 5  # every resample pools to 5/10/0: micro F1 = 10/15 = 2/3
    assert bootstrap_interval(units, statistic=micro_f1, samples=50) == (pytest.approx(2 / 3), pytest.approx(2 / 3))
    assert bootstrap_f1s(units, ROLES, samples=50)["micro"] == (pytest.approx(2 / 3), pytest.approx(2 / 3))


def test_two_documents_hand_corpus() -> None:
    # Docs of the hand corpus (see test_scoring.py), exact mode, micro counts:
    #   log-a (r1, r2, r3): tp 2, fp 4, fn 4 -> F1 4/12 = 1/3 alone
    #   log-b (r5, r6):     tp 3, fp 2, fn 2 -> F1 6/10 = 3/5 alone
    # Resamples hold {a, a}, {a, b} or {b, b}: F1 1/3, 5/11 or 3/5, so every bound is one of these.
    units = count_corpus(*hand_corpus(), roles=ROLES).units(by="doc")
    low, high = bootstrap_f1s(units, ROLES, samples=2000, seed=13)["micro"]
    assert (low, high) == (pytest.approx(1 / 3), pytest.approx(3 / 5))


def test_vectorised_f1s_equal_the_generic_interval_for_every_name() -> None:
    rng = np.random.default_rng(3)
    units = [{key: Counts(*map(int, rng.integers(0, 6, size=3))) for key in ("mover", "path", "trigger",
                                                                              "unlinked:mover")}
             for _ in range(9)]
    fast = bootstrap_f1s(units, ROLES, samples=200, seed=5)
    assert list(fast) == list(f1_names(ROLES))
    for name in fast:
        slow = bootstrap_interval(units, statistic=lambda us, n=name: scores_from_counts(us, ROLES).f1s()[n],
                                  samples=200, seed=5)
        assert fast[name] == slow  # same draws, same arithmetic: equal, not just close


def test_same_seed_same_interval_other_seed_other_draws() -> None:
    units = count_corpus(*hand_corpus(), roles=ROLES).units(by="record")
    assert bootstrap_f1s(units, ROLES, seed=1) == bootstrap_f1s(units, ROLES, seed=1)
    assert bootstrap_f1s(units, ROLES, seed=1) != bootstrap_f1s(units, ROLES, seed=2)


# Reference: scipy.stats.bootstrap(method="percentile"). Both are Monte Carlo estimates of the same
# percentiles of the same bootstrap distribution, so they differ only by resampling noise. With B = 20000
# resamples the standard error of the 2.5% / 97.5% percentile is about sqrt(0.025 * 0.975 / B) / 0.058
# = 0.019 standard deviations of the statistic; the statistics below have SDs of about 0.4 (mean) and
# 0.04 (F1), so the tolerances (0.05 and 0.01) are more than 5 standard errors, and the statistics'
# own discreteness (few units) moves both estimates together.


def test_mean_interval_agrees_with_scipy() -> None:
    rng = np.random.default_rng(11)
    values = rng.integers(0, 6, size=20)
    units = [{"mover": Counts(int(v), 0, 0)} for v in values]
    ours = bootstrap_interval(units, statistic=lambda us: float(np.mean([u["mover"].tp for u in us])),
                              samples=20000, seed=1)
    theirs = bootstrap((values,), np.mean, method="percentile", n_resamples=20000, rng=np.random.default_rng(2))
    assert ours == pytest.approx((theirs.confidence_interval.low, theirs.confidence_interval.high), abs=0.05)


def test_pooled_f1_interval_agrees_with_scipy_paired() -> None:
    rng = np.random.default_rng(12)
    tp, fp, fn = rng.integers(0, 8, size=14), rng.integers(0, 4, size=14), rng.integers(0, 4, size=14)
    units = [{"mover": Counts(int(a), int(b), int(c))} for a, b, c in zip(tp, fp, fn)]

    def pooled_f1(tp: np.ndarray, fp: np.ndarray, fn: np.ndarray, axis: int = -1) -> np.ndarray:
        tp, fp, fn = tp.sum(axis=axis), fp.sum(axis=axis), fn.sum(axis=axis)
        return 2 * tp / (2 * tp + fp + fn)

    theirs = bootstrap((tp, fp, fn), pooled_f1, paired=True, vectorized=True, method="percentile",
                       n_resamples=20000, rng=np.random.default_rng(2))
    expected = (theirs.confidence_interval.low, theirs.confidence_interval.high)
    assert bootstrap_f1s(units, ("mover",), samples=20000, seed=1)["mover"] == pytest.approx(expected, abs=0.01)
    generic = bootstrap_interval(units, statistic=lambda us: prf(*map(sum, zip(*((u["mover"].tp, u["mover"].fp,
                                                                                   u["mover"].fn) for u in us))))[2],
                                 samples=20000, seed=1)
    assert generic == pytest.approx(expected, abs=0.01)


def test_fast_enough_for_reports() -> None:
    # 1000 resamples of 14 documents, 5 roles: well under a second (vectorised).
    roles = ("mover", "source", "path", "destination", "direction")
    rng = np.random.default_rng(0)
    keys = (*roles, "trigger", *(f"unlinked:{r}" for r in roles))
    units = {f"doc{i}": {k: Counts(*map(int, rng.integers(0, 30, size=3))) for k in keys} for i in range(14)}
    start = time.perf_counter()
    intervals = bootstrap_f1s(units, roles, samples=1000, seed=13)
    assert time.perf_counter() - start < 0.5
    assert all(low <= high for low, high in intervals.values())


def test_refusals() -> None:
    with pytest.raises(CorpusError, match=r"^no units to resample"):
        bootstrap_f1s([], ROLES)
    with pytest.raises(ConfigError, match=r"^confidence must lie strictly between 0 and 1, got 95"):
        bootstrap_interval([{}], statistic=micro_f1, confidence=95)
    with pytest.raises(ConfigError, match=r"^samples must be at least 1, got 0"):
        bootstrap_f1s([{}], ROLES, samples=0)
