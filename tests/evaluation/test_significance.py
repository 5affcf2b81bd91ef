"""Paired approximate randomization: hand cases, scipy's exact permutation test, one path for every F1."""

from __future__ import annotations

import numpy as np
import pytest
from evaluation_samples import ROLES
from scipy.stats import permutation_test

from trainer.errors import ConfigError, CorpusError
from trainer.evaluation.scoring import Counts, f1_names, scores_from_counts
from trainer.evaluation.significance import compare_f1s, holm, paired_randomization


def total_tp(units: list) -> float:
    return float(sum(u["mover"].tp for u in units))


def micro_f1(units: list) -> float:
    return scores_from_counts(units, ROLES).micro.f1


def two_systems(n: int, seed: int) -> tuple[list[dict[str, Counts]], list[dict[str, Counts]]]:
    """Per-unit counts of two systems on the same gold (tp + fn equal per unit and key)."""
    rng = np.random.default_rng(seed)
    a, b = [], []
    for _ in range(n):
        unit_a, unit_b = {}, {}
        for key in ("mover", "destination", "trigger"):
            gold = int(rng.integers(1, 8))
            tp_a, tp_b = int(rng.integers(0, gold + 1)), int(rng.integers(0, gold + 1))
            unit_a[key] = Counts(tp_a, int(rng.integers(0, 4)), gold - tp_a)
            unit_b[key] = Counts(tp_b, int(rng.integers(0, 4)), gold - tp_b)
        a.append(unit_a)
        b.append(unit_b)
    return a, b


def test_hand_case_exact_enumeration() -> None:
    # A finds 1 per unit, B none; a swap flips that unit's sign, so the difference is a sum of three +-1s.
    # |difference| = 3 only when no unit or every unit is swapped: 2 of the 8 swap patterns, p = 2/8.
    a = [{"mover": Counts(1, 0, 0)}] * 3
    b = [{"mover": Counts(0, 0, 1)}] * 3
    assert paired_randomization(a, b, statistic=total_tp, exact=True) == (3.0, 0.25)
    observed, p = paired_randomization(a, b, statistic=total_tp, trials=9999, seed=13)
    assert observed == 3.0
    assert p == pytest.approx(0.25, abs=0.02)
    assert (p * 10000) % 1 == pytest.approx(0.0)  # p = (count + 1) / (trials + 1)


def test_identical_systems_are_not_different() -> None:
    a, _ = two_systems(5, seed=1)
    assert paired_randomization(a, a, statistic=micro_f1, trials=99) == (0.0, 1.0)
    assert paired_randomization(a, a, statistic=micro_f1, exact=True) == (0.0, 1.0)


def test_exact_mode_equals_scipy_permutation_test() -> None:
    # Reference: scipy.stats.permutation_test(permutation_type="samples"), which for paired samples swaps
    # x_i and y_i; with 2**8 = 256 <= n_resamples it enumerates every swap pattern exactly. Its two-sided
    # p-value, 2 * min(P(D <= d), P(D >= d)), equals P(|D| >= |d|) here because swapping every unit
    # negates the difference, so the null distribution is symmetric.
    a, b = two_systems(8, seed=5)  # A ahead by 0.228 micro F1; exact p = 16/256 = 0.0625
    units = a + b

    def difference(x: np.ndarray, y: np.ndarray) -> float:
        return micro_f1([units[i] for i in x]) - micro_f1([units[i] for i in y])

    reference = permutation_test((np.arange(8), np.arange(8, 16)), difference, permutation_type="samples",
                                 vectorized=False, n_resamples=9999, alternative="two-sided")
    observed, p = paired_randomization(a, b, statistic=micro_f1, exact=True)
    assert observed == pytest.approx(reference.statistic)
    assert p == pytest.approx(reference.pvalue, abs=1e-12)
    assert p == 16 / 256
    # The randomized test estimates the same p-value: Monte Carlo SE at 9999 trials is at most 0.005.
    # (compare_f1s draws the same swaps as paired_randomization, checked below, and is vectorised.)
    ids = [f"doc{i}" for i in range(8)]
    _, p_random = compare_f1s(dict(zip(ids, a)), dict(zip(ids, b)), ROLES, trials=9999, seed=13)["micro"]
    assert p_random == pytest.approx(p, abs=0.02)


def test_vectorised_helper_equals_the_generic_test() -> None:
    a, b = two_systems(6, seed=7)
    ids = [f"doc{i}" for i in range(6)]
    fast = compare_f1s(dict(zip(ids, a)), dict(zip(ids, b)), ROLES, exact=True)
    assert list(fast) == list(f1_names(ROLES))
    for name in ("micro", "macro", "mover", "destination", "trigger", "unlinked:micro"):
        def statistic(units: list, n: str = name) -> float:
            return scores_from_counts(units, ROLES).f1s()[n]

        assert fast[name] == pytest.approx(paired_randomization(a, b, statistic=statistic, exact=True), abs=1e-12)
    random_fast = compare_f1s(dict(zip(ids, a)), dict(zip(ids, b)), ROLES, trials=300, seed=3)
    assert random_fast["micro"] == pytest.approx(paired_randomization(a, b, statistic=micro_f1, trials=300, seed=3),
                                                 abs=1e-12)


def test_refusals() -> None:
    a, b = two_systems(3, seed=1)
    with pytest.raises(CorpusError, match=r"^system A has 3 units but system B has 2"):
        paired_randomization(a, b[:2], statistic=micro_f1)
    with pytest.raises(CorpusError, match=r"^the systems were scored on different units: \['x'\]"):
        compare_f1s({"d": a[0], "x": a[1]}, {"d": b[0]}, ROLES)
    with pytest.raises(CorpusError, match=r"^systems A and B count different gold instances in unit\(s\) \['d'\]"):
        compare_f1s({"d": {"mover": Counts(1, 0, 0)}}, {"d": {"mover": Counts(0, 0, 0)}}, ROLES)
    with pytest.raises(ConfigError, match=r"^exact=True enumerates 2\*\*21 swaps; at most 20 units allowed"):
        paired_randomization(a * 7, b * 7, statistic=micro_f1, exact=True)


# ---------------------------------------------------------------- Holm's correction


def test_holm_worked_example_four_hypotheses() -> None:
    # Web example (not a handbook): GeeksforGeeks, "Holm-Bonferroni method",
    # https://www.geeksforgeeks.org/data-science/holm-bonferroni-method/ (read through a stored copy), lists
    # H1..H4 = 0.01, 0.04, 0.03, 0.005 at alpha 0.05 and rejects H4 and H1 only; a stored copy of an older text of
    # the Wikipedia article "Holm–Bonferroni method" gives the same four values (as 0.01, 0.03, 0.04, 0.005) and the
    # same decisions. Sorted: 0.005 < 0.05/4, 0.01 < 0.05/3, 0.03 > 0.05/2. The adjusted values are derived here by
    # Holm's (1979) rule, min(1, max_j<=i (m-j+1) p_(j)), not read in either text:
    # 4 x 0.005 = 0.02, 3 x 0.01 = 0.03, max(0.03, 2 x 0.03) = 0.06, max(0.06, 1 x 0.04) = 0.06.
    adjusted = holm([0.01, 0.04, 0.03, 0.005])
    assert adjusted == pytest.approx([0.03, 0.06, 0.06, 0.02])
    assert [p <= 0.05 for p in adjusted] == [True, False, False, True]


def test_holm_matches_navarro_textbook_table_five_p_values() -> None:
    # Published worked example: D. Navarro, "Learning statistics with R: A tutorial for psychology students and
    # other beginners", version 0.6 (CC BY-SA), section 14.5.4 "Holm corrections", the table of "the calculations
    # of a Holm correction for a collection of five p-values" (columns raw p, rank j, p x j, Holm p).
    # Online: https://learningstatisticswithr.com/book/anova.html#holm-corrections . Read in the book's source,
    # https://github.com/djnavarro/rbook (commit 6e42f1d040c757e3d1e51ad357af8a7a1cd555d1),
    # original/tex/chapter14_anova.tex lines 726-735 and, identically, bookdown/05.14-anova.Rmd (version 0.6.1).
    # raw p .001 .005 .019 .022 .103 -> p x j .005 .020 .057 .044 .103 -> Holm p .005 .020 .057 .057 .103
    # (.022 x 2 = .044 is below the previous .057, so it takes .057: the step-down running maximum).
    raw = [0.001, 0.005, 0.019, 0.022, 0.103]
    published = [0.005, 0.020, 0.057, 0.057, 0.103]
    assert holm(raw) == pytest.approx(published, abs=1e-12)
    # Derived, not from the book: the same p-values in reverse input order give the same values, reversed.
    assert holm(raw[::-1]) == pytest.approx(published[::-1], abs=1e-12)
    assert [p <= 0.05 for p in holm(raw)] == [True, True, False, False, False]


def test_holm_equals_statsmodels_multipletests() -> None:
    # Reference library: statsmodels.stats.multitest.multipletests(method="holm") (in the test extra).
    multitest = pytest.importorskip("statsmodels.stats.multitest")
    rng = np.random.default_rng(5)
    for m in (1, 2, 3, 7, 20):
        p = np.round(rng.uniform(0, 0.2, m), 4)  # rounding makes ties, which must not change the result
        reject, expected, _, _ = multitest.multipletests(p, alpha=0.05, method="holm")
        assert holm(list(p)) == pytest.approx(list(expected), abs=1e-12)
        assert [a <= 0.05 for a in holm(list(p))] == list(reject)


def test_holm_keeps_order_never_lowers_and_caps_at_one() -> None:
    assert holm([]) == []
    assert holm([0.04]) == [0.04]  # a single test is not corrected
    assert holm([0.6, 0.3, 0.01]) == pytest.approx([0.6, 0.6, 0.03])  # 3 x 0.01, 2 x 0.3, max(0.6, 1 x 0.6)
    assert holm([0.6, 0.7, 0.01]) == pytest.approx([1.0, 1.0, 0.03])  # 2 x 0.6 = 1.2 is capped at 1
    with pytest.raises(ConfigError, match="p-values must lie in"):
        holm([0.5, 1.5])


def test_a_run_holm_adjusts_each_score_over_its_pairs_of_configs() -> None:
    from types import SimpleNamespace

    from trainer.evaluation.summary import EvaluationSettings, compare_systems
    from trainer.evaluation.scoring import CorpusCounts, UNLINKED, TRIGGER

    def system(name: str, tps: list[int]):
        by_record = {f"r{i}": {**{role: Counts(tp, 3 - tp, 3 - tp) for role in ROLES}, TRIGGER: Counts(tp, 0, 3 - tp),
                               **{UNLINKED + role: Counts(tp, 0, 3 - tp) for role in ROLES}} for i, tp in enumerate(tps)}
        counts = CorpusCounts("exact", ROLES, by_record, {f"r{i}": f"d{i}" for i in range(len(tps))})
        return SimpleNamespace(name=name, counts=counts, scores=SimpleNamespace(roles=ROLES))

    systems = [system("a", [3, 3, 2, 3, 3, 3]), system("b", [0, 1, 0, 1, 0, 0]), system("c", [1, 1, 0, 2, 1, 0])]
    comparisons = compare_systems(systems, EvaluationSettings(trials=999, seed=3))
    assert [(c.a, c.b) for c in comparisons] == [("a", "b"), ("a", "c"), ("b", "c")]
    for name in comparisons[0].tests:
        raw = [c.tests[name][1] for c in comparisons]
        assert [c.holm[name] for c in comparisons] == holm(raw)
        assert all(c.holm[name] >= c.tests[name][1] for c in comparisons)
