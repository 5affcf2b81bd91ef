"""Calibration maps and decision thresholds learned from held-out predictions (trainer.models.calibration)."""

from __future__ import annotations

import numpy as np
import pytest

from trainer.models.calibration import Calibrator, ConfidencePolicy, HeldOut, choose_threshold, held_out_points

# Four held-out predictions, highest confidence first, and 4 gold instances (figures worked by hand below).
CONFIDENCE = [0.9, 0.8, 0.7, 0.6]
CORRECT = [True, True, False, True]


def test_held_out_points_match_token_ranges_and_roles_of_correct_triggers() -> None:
    gold_triggers = [[(1, 2), (5, 6)]]
    gold_roles = [[[(0, 1, "mover"), (3, 4, "destination")], [(7, 8, "source")]]]
    predicted_triggers = [[(1, 2, 0.9), (9, 10, 0.4)]]
    predicted_roles = [[[(0, 1, "mover", 0.8), (3, 5, "destination", 0.7)], [(7, 8, "source", 0.6)]]]
    points = held_out_points(gold_triggers, gold_roles, predicted_triggers, predicted_roles,
                             ("mover", "source", "destination"))
    assert (points["trigger"].confidence, points["trigger"].correct, points["trigger"].gold) == ([0.9, 0.4], [True, False], 2)
    assert (points["mover"].correct, points["mover"].gold) == ([True], 1)
    assert points["destination"].correct == [False]  # (3, 5) is not the gold (3, 4)
    assert points["source"].correct == [False]  # right span, but on a trigger that is not in the gold
    assert points["source"].gold == 1


def test_the_f1_threshold_is_the_best_held_out_f1() -> None:
    # Worked by hand: keeping >= 0.9: F1 = 2*1/(1+4) = 0.4; >= 0.8: 4/6; >= 0.7: 4/7; >= 0.6: 6/8 = 0.75 (best).
    assert choose_threshold(CONFIDENCE, CORRECT, 4, objective="f1") == 0.6


def test_the_precision_threshold_gives_the_most_recall_at_the_target() -> None:
    # Precision keeping >= 0.9, 0.8, 0.7, 0.6: 1, 1, 2/3, 3/4.
    assert choose_threshold(CONFIDENCE, CORRECT, 4, objective="precision", target_precision=0.9) == 0.8
    assert choose_threshold(CONFIDENCE, CORRECT, 4, objective="precision", target_precision=0.7) == 0.6
    # Unreachable target: the best precision there is (3/4 at 0.6 for this order of right and wrong).
    assert choose_threshold(CONFIDENCE, [False, True, True, True], 4, objective="precision",
                            target_precision=0.95) == 0.6
    assert choose_threshold(CONFIDENCE, CORRECT, 4, objective="none") is None


def test_isotonic_calibration_pools_adjacent_violators() -> None:
    # Pool-adjacent-violators by hand (common practice; Zadrozny and Elkan 2002): outcomes 1, 0, 1, 1 at rising
    # confidences violate monotonicity in the first two, which pool to their mean 0.5.
    calibrator = Calibrator("isotonic").fit([0.2, 0.4, 0.6, 0.8], [True, False, True, True])
    assert calibrator.transform([0.2, 0.4, 0.6, 0.8]).tolist() == pytest.approx([0.5, 0.5, 1.0, 1.0])
    assert calibrator.transform([0.0, 1.0]).tolist() == pytest.approx([0.5, 1.0])  # clipped at the ends


def test_platt_scaling_leaves_calibrated_confidences_nearly_unchanged_and_fixes_overconfidence() -> None:
    rng = np.random.default_rng(0)
    confidence = rng.uniform(0.05, 0.95, 20000)
    correct = rng.uniform(size=confidence.size) < confidence
    calibrated = Calibrator("platt").fit(confidence, correct).transform([0.2, 0.5, 0.8])
    assert calibrated == pytest.approx([0.2, 0.5, 0.8], abs=0.03)
    # An overconfident stage: right only half as often as it says.
    half = rng.uniform(size=confidence.size) < confidence / 2
    assert Calibrator("platt").fit(confidence, half).transform([0.8])[0] == pytest.approx(0.4, abs=0.05)


def test_a_label_always_right_or_always_wrong_maps_to_a_constant() -> None:
    assert Calibrator("isotonic").fit([0.3, 0.6], [True, True]).transform([0.1, 0.9]).tolist() == [1.0, 1.0]


def test_the_policy_calibrates_then_drops_triggers_with_their_roles_and_roles_below_their_threshold() -> None:
    points = {"trigger": HeldOut(CONFIDENCE, CORRECT, 4), "mover": HeldOut([0.9, 0.2], [True, False], 1)}
    policy = ConfidencePolicy.learn(points, calibration="none", objective="precision", target_precision=0.9)
    assert policy.thresholds == {"trigger": 0.8, "mover": 0.9}
    triggers = [[(0, 1, 0.85), (4, 5, 0.5)]]
    roles = [[[(2, 3, "mover", 0.95), (6, 7, "mover", 0.5)], [(8, 9, "mover", 0.99)]]]
    kept_triggers, kept_roles = policy.apply(triggers, roles)
    assert kept_triggers == [[(0, 1, 0.85)]]
    assert kept_roles == [[[(2, 3, "mover", 0.95)]]]


@pytest.fixture(scope="module")
def calibrated(nlp, demo_train, demo_test, tmp_path_factory):
    """The quick-profile models trained on the demo corpus with and without a precision policy."""
    from trainer.config import config_from_dict
    from trainer.corpus.reader import read_corpus
    from trainer.models.training import fit_extractor
    from trainer.parsing.parse import parse_records

    cache = str(tmp_path_factory.mktemp("calibration") / "cache")
    base = {"parser": {"cache_dir": cache}, "trigger_model": {"kind": "logistic"}, "role_model": {"kind": "logistic"}}
    policy = {**base, "confidence": {"calibration": "isotonic", "thresholds": "precision", "target_precision": 0.9}}
    train = read_corpus([demo_train]).records
    test = read_corpus([demo_test]).records
    train_docs, _ = parse_records(nlp, train, config_from_dict(base).parser)
    test_docs, _ = parse_records(nlp, test, config_from_dict(base).parser)
    plain = fit_extractor(train, config_from_dict(base), nlp=nlp, docs=train_docs)
    strict = fit_extractor(train, config_from_dict(policy), nlp=nlp, docs=train_docs)
    return plain, strict, test, test_docs


@pytest.mark.slow
def test_a_model_keeps_its_policy_and_applies_it_to_every_prediction(calibrated) -> None:
    plain, strict, test, test_docs = calibrated
    assert plain.extractor.confidence_ is None
    policy = strict.extractor.confidence_
    assert set(policy.calibrators) == {"trigger", "mover", "source", "path", "destination"}
    assert all(n > 0 for n in policy.held_out.values())
    predicted = strict.extractor.predict(test, test_docs)
    confidences = [e.confidence for r in predicted for e in r.events]
    rounding = 5e-5  # records carry confidences rounded to 4 places
    assert confidences and min(confidences) >= policy.thresholds["trigger"] - rounding
    for record in predicted:
        for event in record.events:
            for role in event.roles:
                assert role.confidence >= policy.thresholds.get(role.role, 0.0) - rounding
    # Aiming at 90% precision keeps fewer triggers than the plain model, never more.
    plain_count = sum(len(r.events) for r in plain.extractor.predict(test, test_docs))
    assert len(confidences) <= plain_count


@pytest.mark.slow
def test_a_model_file_from_before_calibration_still_predicts(calibrated) -> None:
    plain, _, test, test_docs = calibrated
    expected = plain.extractor.predict(test, test_docs)
    del plain.extractor.confidence_  # as unpickled from a file written before the attribute existed
    assert plain.extractor.predict(test, test_docs) == expected


def test_the_threshold_sweep_keeps_ties_together() -> None:
    from trainer.models.calibration import threshold_sweep

    thresholds, kept, right = threshold_sweep([0.8, 0.9, 0.5, 0.8], [False, True, False, True])
    assert (thresholds.tolist(), kept.tolist(), right.tolist()) == ([0.9, 0.8, 0.5], [1, 3, 4], [1, 2, 2])
    assert [a.tolist() for a in threshold_sweep([], [])] == [[], [], []]
