"""Per-record uncertainty: the two measures on hand-made distributions, then on small trained models."""

from __future__ import annotations

import math

import numpy as np
import pytest

from trainer.config import config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Record
from trainer.errors import ConfigError, NoUncertaintyError
from trainer.models.training import fit_extractor
from trainer.models.uncertainty import (
    MEASURES, RecordUncertainty, least_confidence, mean_entropy, record_uncertainty,
    uncertainty_parts,
)
from trainer.parsing.parse import parse_records

TRAIN_DOCS = ("amsel-pilgrim-1", "brannick-log-1", "fairbeck-diary-1")
EASY = "We walked to the village."
AMBIGUOUS = "We never reached the wells."  # negated: a motion verb the spec says is no event


# ---------------------------------------------------------------- the measures, by hand


def test_least_confidence_is_one_minus_the_least_sure_top_probability_scaled_by_k_over_k_minus_1():
    decisions = np.array([[0.9, 0.05, 0.05], [0.5, 0.3, 0.2], [1.0, 0.0, 0.0]])
    # least sure decision: top 0.5; (1 - 0.5) * 3 / 2 = 0.75
    assert least_confidence(decisions) == pytest.approx(0.75)


def test_least_confidence_bounds():
    assert least_confidence(np.array([[1.0, 0.0], [0.0, 1.0]])) == 0.0
    assert least_confidence(np.full((4, 3), 1 / 3)) == pytest.approx(1.0)
    assert least_confidence(np.zeros((0, 3))) == 0.0  # no decisions
    assert least_confidence(np.ones((5, 1))) == 0.0  # one label: nothing to doubt


def test_entropy_is_the_mean_token_entropy_over_log_k():
    decisions = np.array([[0.5, 0.5, 0.0, 0.0], [1.0, 0.0, 0.0, 0.0]])
    # entropies log 2 and 0, mean log(2)/2, over log 4: 0.25
    assert mean_entropy(decisions) == pytest.approx(0.25)
    assert mean_entropy(np.full((3, 9), 1 / 9)) == pytest.approx(1.0)
    assert mean_entropy(np.array([[0.0, 1.0]])) == 0.0
    assert mean_entropy(np.zeros((0, 2))) == 0.0
    assert mean_entropy(np.ones((2, 1))) == 0.0


def test_min_not_product_so_length_alone_does_not_raise_least_confidence():
    short = np.array([[0.95, 0.05]] * 3)
    long = np.array([[0.95, 0.05]] * 40)
    assert least_confidence(short) == least_confidence(long) == pytest.approx(0.1)
    assert 1 - math.prod(row.max() for row in long) > 0.8  # what the product would have said


def test_the_record_value_is_the_larger_part():
    assert RecordUncertainty(trigger=0.2, role=0.7).value == 0.7
    assert RecordUncertainty(trigger=0.4, role=0.0).value == 0.4


def test_measures_are_a_table():
    assert list(MEASURES) == ["least_confidence", "entropy"]


# ---------------------------------------------------------------- on trained models


def _config(tmp_path_factory, trigger: str, role: str):
    return config_from_dict({
        "name": f"{trigger}-{role}",
        "parser": {"cache_dir": str(tmp_path_factory.getbasetemp() / "uncertainty-cache")},
        "trigger_model": {"kind": trigger, "iterations": 50},
        "role_model": {"kind": role, "iterations": 50},
    })


@pytest.fixture(scope="module")
def training(demo_train):
    return read_corpus([demo_train / f"{name}.jsonl" for name in TRAIN_DOCS]).records


@pytest.fixture(scope="module")
def crf_model(nlp, training, tmp_path_factory):
    return fit_extractor(training, _config(tmp_path_factory, "crf", "crf"), nlp=nlp)


def sentences(*texts: str) -> list[Record]:
    return [Record(f"u{i}", "new-book", text) for i, text in enumerate(texts)]


@pytest.mark.slow
@pytest.mark.parametrize("measure", list(MEASURES))
def test_crf_uncertainty_is_in_range_and_higher_for_an_ambiguous_sentence(crf_model, nlp, demo_test, measure):
    held_out = read_corpus([demo_test]).records[:40]
    pool = sentences(EASY, AMBIGUOUS) + [r.with_events(None) for r in held_out]
    values = record_uncertainty(crf_model, pool, nlp=nlp, measure=measure)
    print(measure, {"easy": round(values[0], 3), "ambiguous": round(values[1], 3)})
    assert len(values) == len(pool)
    assert all(0.0 <= v <= 1.0 for v in values)
    assert values[1] > values[0]
    assert len(set(values)) > 10  # it tells sentences apart


@pytest.mark.slow
def test_least_confidence_separates_them_clearly(crf_model, nlp):
    easy, ambiguous = record_uncertainty(crf_model, sentences(EASY, AMBIGUOUS), nlp=nlp)
    assert easy < 0.2 < 0.3 < ambiguous  # measured: 0.045 and 0.470


@pytest.mark.slow
def test_parts_the_role_part_is_zero_without_a_predicted_trigger(crf_model, nlp):
    parts = uncertainty_parts(crf_model, sentences("Brother Wystan wept openly.", EASY), nlp=nlp)
    assert parts[0].role == 0.0  # no trigger predicted: no role decisions
    assert parts[1].role > 0.0
    assert [p.value for p in parts] == record_uncertainty(crf_model, sentences("Brother Wystan wept openly.", EASY), nlp=nlp)


@pytest.mark.slow
def test_same_inputs_same_numbers_and_events_are_ignored(crf_model, nlp):
    plain = sentences(EASY, AMBIGUOUS)
    with_events = [r.with_events(()) for r in plain]
    assert record_uncertainty(crf_model, plain, nlp=nlp) == record_uncertainty(crf_model, with_events, nlp=nlp)


@pytest.mark.slow
def test_logistic_stages_give_uncertainty_too(nlp, training, tmp_path_factory):
    # A small training set keeps the logistic fit fast; both the token tagger and the candidate linker are read.
    model = fit_extractor(training[:60], _config(tmp_path_factory, "logistic", "logistic"), nlp=nlp)
    parts = uncertainty_parts(model, sentences(EASY, AMBIGUOUS, "We left Caddow at dawn and rode to Quillon."),
                              nlp=nlp, measure="entropy")
    assert all(0.0 <= p.trigger <= 1.0 and 0.0 <= p.role <= 1.0 for p in parts)
    assert any(p.role > 0 for p in parts)


@pytest.mark.slow
def test_rule_models_have_no_uncertainty(nlp, training, tmp_path_factory):
    model = fit_extractor(training[:5], _config(tmp_path_factory, "rules", "rules"), nlp=nlp)
    with pytest.raises(NoUncertaintyError, match="rule models have no uncertainty") as caught:
        record_uncertainty(model, sentences(EASY), nlp=nlp)
    assert "trigger stage is a RuleTriggerFinder" in str(caught.value)
    assert caught.value.exit_code == 2


@pytest.mark.slow
def test_a_rule_role_stage_is_refused_too(nlp, training, tmp_path_factory):
    model = fit_extractor(training[:40], _config(tmp_path_factory, "crf", "rules"), nlp=nlp)
    with pytest.raises(NoUncertaintyError, match="the role stage is a RuleRoleLabeller; rule models have no uncertainty"):
        record_uncertainty(model, sentences(EASY, "We left Caddow at dawn and rode to Quillon."), nlp=nlp)


@pytest.mark.slow
def test_bad_arguments_are_refused_with_the_allowed_values(crf_model, nlp):
    records = sentences(EASY)
    with pytest.raises(ConfigError, match="measure='margin' is not an uncertainty measure") as caught:
        record_uncertainty(crf_model, records, nlp=nlp, measure="margin")
    assert "use one of: least_confidence, entropy" in str(caught.value)
    docs, _ = parse_records(nlp, records + records, crf_model.config.parser)
    with pytest.raises(ConfigError, match="1 records but 2 docs"):
        record_uncertainty(crf_model, records, docs)
