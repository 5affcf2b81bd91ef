"""The simulated annotation study (bench/annotation_study.py): suggested batches against random ones.

What is asserted, and why (numbers measured with the defaults below on
2026-12-03, see docs/retraining.md): on this small corpus uncertainty
sampling is not reliably better than random batches. Measured role micro F1
(exact), mean over rounds 1-4: uncertainty 0.607; random 0.620, 0.648 and
0.611 for seeds 1-3 (mean 0.626, standard deviation 0.019; an earlier run,
before later feature changes, had uncertainty 0.633 against 0.609). So the
test asserts that it is *not clearly worse*: its mean may fall below the
random mean by at most 0.03, about one and a half standard deviations of
the random runs. Both strategies must also learn: the last round beats the
start model (measured 0.557 -> 0.619 and 0.557 -> 0.643), by at least 0.02 here.
"""

from __future__ import annotations

import pytest

from tests.conftest import load_bench

pytestmark = pytest.mark.slow

MARGIN = 0.03
MIN_GAIN = 0.02


def load_study():
    return load_bench("annotation_study")


def test_suggested_batches_are_not_worse_than_random_ones_and_both_learn(tmp_path_factory):
    study = load_study()
    result = study.run_study(cache_dir=tmp_path_factory.mktemp("study-cache"))
    print(f"\n{result.table()}\n({result.seconds:.0f} s)")

    uncertainty = result.f1[study.UNCERTAINTY]
    random_mean = result.random_mean()
    assert result.labelled == [111, 136, 161, 186, 211]
    assert len(uncertainty) == len(random_mean) == 5
    assert uncertainty[0] == random_mean[0]  # the start model is shared
    assert result.mean_over_rounds(uncertainty) >= result.mean_over_rounds(random_mean) - MARGIN
    assert uncertainty[-1] >= uncertainty[0] + MIN_GAIN
    assert random_mean[-1] >= random_mean[0] + MIN_GAIN
    # Trigger F1 is kept per round beside role F1, with the same shared start.
    triggers = result.trigger_f1[study.UNCERTAINTY]
    assert len(triggers) == 5 and all(0.0 < f1 <= 1.0 for f1 in triggers)
    assert triggers[0] == result.random_mean(result.trigger_f1)[0]


def test_the_real_prose_study_names_the_books_when_the_held_out_one_is_unknown():
    study = load_study()
    with pytest.raises(SystemExit, match="no book 'atlantis'.*burton-pilgrimage, clark-journals"):
        study.run_real_prose_study("atlantis")
