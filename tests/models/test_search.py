"""Hyperparameter search: inner folds from the training records only, best candidate kept."""

from __future__ import annotations

import pytest

from trainer.config import ModelConfig, config_from_dict
from trainer.corpus.records import Record
from trainer.errors import ConfigError
from trainer.models.search import f1_of_sets, inner_folds, search_stage


def records(docs):
    return [Record(f"{d}-{i}", d, "x", events=()) for d in docs for i in range(2)]


def test_inner_folds_never_split_a_doc_and_cover_every_record_once():
    recs = records(["a", "b", "c", "d", "e"])
    folds = inner_folds(recs)
    assert len(folds) == 3
    held = [i for _, test in folds for i in test]
    assert sorted(held) == list(range(len(recs)))
    for train, test in folds:
        assert {recs[i].doc for i in train}.isdisjoint({recs[i].doc for i in test})


def test_search_keeps_the_best_candidate_and_reports_every_score():
    config = ModelConfig(kind="logistic", grid={"regularisation": [10.0, 1.0, 0.1]})
    seen_docs = set()

    def evaluate(candidate, train, test):
        seen_docs.update(recs[i].doc for i in train + test)
        return {10.0: 0.5, 1.0: 0.9, 0.1: 0.7}[candidate.regularisation]

    recs = records(["a", "b", "c"])
    best, results = search_stage(config, recs, [None] * len(recs), evaluate)
    assert best.regularisation == 1.0
    assert [r["mean_f1"] for r in results] == [0.5, 0.9, 0.7]
    assert seen_docs == {"a", "b", "c"}  # only the records it was given: the outer test docs never enter


def test_no_grid_or_one_doc_leaves_the_config_unchanged():
    config = ModelConfig(kind="logistic")
    assert search_stage(config, records(["a", "b"]), [None] * 4, lambda *a: 1 / 0) == (config, [])
    gridded = ModelConfig(kind="logistic", grid={"regularisation": [1.0]})
    assert search_stage(gridded, records(["a"]), [None] * 2, lambda *a: 1 / 0) == (gridded, [])


def test_f1_of_sets_pools_counts():
    assert f1_of_sets([{1, 2}, {3}], [{1}, {3, 4}]) == pytest.approx(2 * 2 / (3 + 3))


def test_search_grid_is_validated_in_the_config():
    with pytest.raises(ConfigError, match="'role_model.grid.gamma' is not a setting the grid can tune"):
        config_from_dict({"role_model": {"grid": {"gamma": [1]}}})
    with pytest.raises(ConfigError, match="'trigger_model.threshold' must lie in"):
        config_from_dict({"trigger_model": {"grid": {"threshold": [0.5, 2.0]}}})
    with pytest.raises(ConfigError, match="'role_model.grid.C' is no longer a config key") as caught:
        config_from_dict({"role_model": {"grid": {"C": [1.0]}}})
    assert "write 'role_model.grid.regularisation (= 1 / C)' instead" in str(caught.value)


@pytest.mark.slow
def test_search_candidates_in_parallel_give_the_serial_result(nlp, demo_train):
    from joblib import parallel_config

    from trainer.corpus.reader import read_corpus
    from trainer.models.training import fit_extractor

    records = read_corpus([demo_train / f"{d}.jsonl" for d in ("amsel-pilgrim-1", "quarne-salt-1", "varrow-uplands-1")]).records
    config = config_from_dict({"parser": {"use_cache": False}, "trigger_model": {"kind": "logistic", "grid": {"regularisation": [10.0, 1.0]}},
                               "role_model": {"kind": "rules"}})
    serial = fit_extractor(records, config, nlp=nlp).extractor.search_results_
    with parallel_config(n_jobs=2):
        parallel = fit_extractor(records, config, nlp=nlp).extractor.search_results_
    assert serial == parallel
    assert [r["params"] for r in serial["trigger_model"]] == [{"regularisation": 10.0}, {"regularisation": 1.0}]
