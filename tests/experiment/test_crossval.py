"""Cross-validation runs: parse once per run, serial = parallel = Dask, no doc on both sides."""

from __future__ import annotations

import pytest

from trainer.config import config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.experiment import crossval as crossval_module
from trainer.experiment.crossval import run_crossval
from trainer.experiment.curve import learning_curve
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


def test_local_workers_hide_only_the_pool_s_worker_replaced_warning(monkeypatch):
    import inspect
    import warnings

    from joblib.externals.loky import process_executor

    # The message as joblib's loky pool (the reference library) words it when its memory guard replaces a worker.
    assert "A worker stopped while some jobs were given to the " in inspect.getsource(process_executor)

    class WarningPool:
        def __init__(self, **kwargs):
            pass

        def __call__(self, tasks):
            warnings.warn(crossval_module.WORKER_REPLACED + ". This can be caused by a too short worker timeout "
                          "or by a memory leak.", UserWarning)
            warnings.warn("something else went wrong", UserWarning)
            return [function(*args, **kwargs) for function, args, kwargs in tasks]

    monkeypatch.setattr(crossval_module, "Parallel", WarningPool)
    tasks = [(lambda n: n * 2, (n,), {}) for n in range(3)]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        assert crossval_module._dispatch(tasks, jobs=2, scheduler=None, progress=None) == [0, 2, 4]
    assert [str(w.message) for w in caught] == ["something else went wrong"]


def test_report_scores_per_doc_and_book_pool_to_the_overall_counts_and_warn_about_three_docs(serial):
    from trainer.evaluation.breakdown import pooled_totals
    from trainer.evaluation.scoring import Counts

    data = metrics(serial)
    for system in data["systems"]:
        assert system["interval_docs"] == 3 and "only 3 doc(s)" in system["interval_warning"]
        assert system["matching"]["exact"]["micro"] == {k: system["scores"]["micro"][k]
                                                         for k in system["matching"]["exact"]["micro"]}
        assert list(system["per_doc"]) == list(DOCS)
        assert list(system["per_book"]) == ["amsel-pilgrim", "brannick-log", "quarne-salt"]
        for mode in ("exact", "overlap"):
            pooled = system["matching"][mode]
            for key in ("mover", "source", "path", "destination", "micro", "trigger"):
                score = pooled["roles"].get(key) or pooled[key]
                total = Counts(score["tp"], score["fp"], score["fn"])
                assert pooled_totals(system["per_doc"], mode, key) == total
                assert pooled_totals(system["per_book"], mode, key) == total
                folds = {f"fold {f['fold']}": f for f in system["per_fold"]}
                assert pooled_totals(folds, mode, key) == total
        assert system["matching"]["overlap"]["micro"]["tp"] >= system["matching"]["exact"]["micro"]["tp"]


def test_learning_curve_always_ends_at_the_full_training_set_with_intervals_for_every_score(small, nlp, serial):
    records, configs, plans = small
    curve = learning_curve(records, configs, plans, shares=(0.5,), docs=serial.docs, full_run=serial)
    assert curve["shares"] == [0.5, 1.0]
    full = {s.name: s for s in summarise(serial).systems}
    for name, points in curve["systems"].items():
        assert [p["share"] for p in points] == [0.5, 1.0]
        assert points[-1]["f1"] == {k: round(v, 6) for k, v in full[name].scores.f1s().items()}
        for point in points:
            assert set(point["intervals"]) == set(point["f1"])  # every role, micro, macro, trigger, unlinked
            assert all(0 <= low <= high <= 1 for low, high in point["intervals"].values())
            assert "only 3 doc(s)" in point["interval_warning"]


def test_learning_curve_refuses_a_full_run_of_other_configs(small, serial):
    from dataclasses import replace

    from trainer.errors import ConfigError

    records, configs, plans = small
    for run in (replace(serial, systems=serial.systems[:1]), replace(serial, systems=serial.systems[::-1])):
        with pytest.raises(ConfigError, match="the full run holds configs"):
            learning_curve(records, configs, plans, shares=(0.5,), docs=serial.docs, full_run=run)


def test_explained_run_keeps_the_features_behind_every_learned_predicted_span(small, nlp, serial):
    records, configs, plans = small
    run = run_crossval(records, configs, plans, nlp=nlp, docs=serial.docs, explain=True)
    crf, rules = run.systems
    explained = crf.explanations()
    spans = {(r.id, label, a, b) for r in crf.predictions() for e in r.events or ()
             for label, (a, b) in [("trigger", e.trigger), *((x.role, x.span) for x in e.roles)]}
    keys = {(rid, *key) for rid, found in explained.items() for key in found}
    assert keys and keys <= spans
    assert len(keys) > 0.9 * len(spans)  # every span but those whose features all weigh against its label
    assert all(w > 0 for found in explained.values() for features in found.values() for _, w in features)
    assert rules.explanations() == {}  # rules learn no weights
    assert [r.events for r in crf.predictions()] == [r.events for r in serial.systems[0].predictions()]


def test_serial_progress_names_what_each_fold_holds_out(small, nlp, serial):
    from trainer.evaluation.folds import leave_one_book_out

    records, configs, _ = small
    lines: list[str] = []
    run_crossval(records, configs[1:], [leave_one_book_out([r.doc for r in records])], nlp=nlp, docs=serial.docs,
                 progress=lines.append)
    trained = [line for line in lines if "trained on" in line]
    # one fold per book; each book has one doc here, so each fold is named by the doc it held out
    assert [line.split(": trained")[0] for line in trained] == [
        "[1/3] rules repeat 0 fold 0 (amsel-pilgrim-1)", "[2/3] rules repeat 0 fold 1 (brannick-log-1)",
        "[3/3] rules repeat 0 fold 2 (quarne-salt-1)"]


def test_serial_progress_says_when_a_fold_augmented_its_features_because_the_conventions_differ():
    from trainer.evaluation.runs import FoldOutput
    from trainer.experiment.crossval import _serial

    departure = "the rules' mover precision 0.27 against 0.90, z -13.9"
    departed = FoldOutput("default", 0, 1, [], [], 2.0, 1.0, 80, {}, [departure])
    agreed = FoldOutput("default", 0, 2, [], [], 3.0, 1.0, 90)
    lines: list[str] = []
    _serial([(lambda: departed, (), {}), (lambda: agreed, (), {})], lines.append)
    assert lines == ["[1/2] default repeat 0 fold 1: trained on 80 records in 2.0 s; features augmented by corpus "
                     "where the conventions differ", "[2/2] default repeat 0 fold 2: trained on 90 records in 3.0 s"]


def test_a_report_folder_written_again_keeps_only_the_new_run_s_prediction_files(small, nlp, serial, tmp_path):
    from dataclasses import replace

    from trainer.reports.folder import write_report_folder

    records, configs, plans = small
    write_report_folder(tmp_path, serial, summarise(serial), corpus_files=[], seconds=1.0)
    assert sorted(p.name for p in (tmp_path / "predictions").iterdir()) == [
        "crf.gold-triggers.jsonl", "crf.jsonl", "rules.gold-triggers.jsonl", "rules.jsonl"]
    rules_only = replace(serial, systems=[s for s in serial.systems if s.name == "rules"])
    write_report_folder(tmp_path, rules_only, summarise(rules_only), corpus_files=[], seconds=1.0)
    assert sorted(p.name for p in (tmp_path / "predictions").iterdir()) == ["rules.gold-triggers.jsonl", "rules.jsonl"]
