"""Cross-validation runs: parse once per run, serial = parallel = Dask, no doc on both sides."""

from __future__ import annotations

import pytest

from trainer.config import config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.evaluation import crossval as crossval_module
from trainer.evaluation.crossval import run_crossval
from trainer.evaluation.curve import learning_curve
from trainer.evaluation.folds import grouped_kfold
from trainer.evaluation.summary import summarise
from trainer.parsing import cache as cache_module
from trainer.reports.json_report import report_dict

pytestmark = pytest.mark.slow

DOCS = ("amsel-pilgrim-1", "brannick-log-1", "quarne-salt-1")


@pytest.fixture(scope="module")
def small(demo_train):
    records = read_corpus([demo_train / f"{d}.jsonl" for d in DOCS]).records
    configs = [config_from_dict({"name": "crf", "parser": {"use_cache": False},
                                 "trigger_model": {"iterations": 15}, "role_model": {"iterations": 15}}),
               config_from_dict({"name": "rules", "parser": {"use_cache": False},
                                 "trigger_model": {"kind": "rules"}, "role_model": {"kind": "rules"}})]
    return records, configs, grouped_kfold([r.doc for r in records], 2, seed=3)


def metrics(run):
    data = report_dict(run, summarise(run), corpus_files=[])
    data.pop("versions")
    return data


@pytest.fixture(scope="module")
def serial(small, nlp):
    records, configs, plans = small
    return run_crossval(records, configs, plans, nlp=nlp)


def test_each_text_is_parsed_once_per_run_across_folds_configs_and_curve(small, nlp, monkeypatch):
    records, configs, plans = small
    calls = []
    real = cache_module.parse_texts

    def counting(model, texts, **kwargs):
        calls.append(len(texts))
        return real(model, texts, **kwargs)

    monkeypatch.setattr(cache_module, "parse_texts", counting)
    run = run_crossval(records, configs, plans, nlp=nlp)
    learning_curve(records, configs, plans, shares=(0.5, 1.0), docs=run.docs)
    assert calls == [len({r.text for r in records})]  # one parser call, each distinct text once


def test_no_doc_is_on_both_sides_of_a_fold(serial):
    for system in serial.systems:
        for fold in system.folds:
            plan = serial.plans[fold.repeat]
            train_docs, test_docs = plan.folds[fold.fold]
            assert {r.doc for r in fold.predicted} <= set(test_docs)
            assert set(train_docs).isdisjoint(test_docs)


def test_parallel_and_serial_give_identical_metric_json(small, nlp, serial):
    records, configs, plans = small
    parallel = run_crossval(records, configs, plans, nlp=nlp, docs=serial.docs, jobs=2)
    assert metrics(parallel) == metrics(serial)


def test_dask_cluster_gives_the_same_result(small, nlp, serial):
    distributed = pytest.importorskip("dask.distributed")
    # A local Dask cluster started by the test itself (processes, like a real cluster's workers).
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        records, configs, plans = small
        run = run_crossval(records, configs, plans, nlp=nlp, docs=serial.docs, scheduler=cluster.scheduler_address)
    assert metrics(run) == metrics(serial)


def test_unknown_scheduler_package_message(monkeypatch, small, nlp, serial):
    import builtins

    real_import = builtins.__import__

    def no_dask(name, *args, **kwargs):
        if name.startswith("dask"):
            raise ImportError(name)
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_dask)
    from trainer.errors import ConfigError

    with pytest.raises(ConfigError, match="itinerant\\[cluster\\]"):
        crossval_module._dispatch([], jobs=1, scheduler="tcp://127.0.0.1:1", progress=None)
