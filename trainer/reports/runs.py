"""Whole evaluation runs, from files to a report folder: what the CLI's evaluation commands call.

Each function reads its inputs, runs the evaluation library and writes a
report folder (see ``docs/reports.md``), returning the report data.
"""

from __future__ import annotations

import json
import time
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Sequence

from trainer.config import SCORING_MODES, ExperimentConfig, add_auxiliary, load_config
from trainer.corpus.auxiliary import check_sources
from trainer.corpus.reader import Corpus, expand_paths, fingerprint, read_corpus
from trainer.corpus.records import Record
from trainer.errors import ConfigError, CorpusError, UnreadableInputError
from trainer.evaluation.bootstrap import bootstrap_f1s, interval_warning
from trainer.evaluation.breakdown import breakdown
from trainer.evaluation.confidence import confidence_report
from trainer.evaluation.error_analysis import error_analysis
from trainer.evaluation.folds import FoldPlan, fixed_split, grouped_kfold, leave_one_book_out, leave_one_doc_out
from trainer.evaluation.scoring import count_corpus, missing_predictions
from trainer.evaluation.significance import compare_f1s
from trainer.evaluation.summary import EvaluationSettings, summarise
from trainer.outputs import check_output
from trainer.reports.folder import REPORT_JSON, write_report_folder
from trainer.reports.json_report import dump_json, library_versions

if TYPE_CHECKING:  # scoring and contrasting saved runs load neither the parser nor the models
    from trainer.evaluation.crossval import Progress


@dataclass
class FoldOptions:
    """How to split the corpus: K grouped folds (repeated), one doc out at a time, or a fixed split."""

    folds: int = 5
    repeats: int = 1
    seed: int = 13
    leave_one_doc_out: bool = False
    leave_one_book_out: bool = False
    test_docs: tuple[str, ...] = ()


def plan_folds(records: Sequence[Record], options: FoldOptions) -> list[FoldPlan]:
    """The fold plans for these records (docs never split)."""
    docs = [r.doc for r in records]
    if options.test_docs:
        unknown = sorted(set(options.test_docs) - set(docs))
        if unknown:
            raise ConfigError(f"test doc(s) {unknown} are not in the corpus", f"choose from: {', '.join(sorted(set(docs)))}")
        return [fixed_split(sorted(set(docs) - set(options.test_docs)), options.test_docs)]
    if options.leave_one_doc_out:
        return [leave_one_doc_out(docs)]
    if options.leave_one_book_out:
        return [leave_one_book_out(docs)]
    return grouped_kfold(docs, options.folds, seed=options.seed, repeats=options.repeats)


def load_inputs(corpus_paths: Sequence[Path], config_paths: Sequence[Path], *, test_paths: Sequence[Path] = (),
                skip_bad: bool = False, auxiliary: Sequence[str] = (),
                augment: bool | None = None) -> tuple[list[ExperimentConfig], Corpus, list[str]]:
    """Configs (defaults when none; ``auxiliary`` corpora added to each), the corpus (plus held-out test files),
    and the doc names of the test files."""
    configs = [add_auxiliary(load_config(p), auxiliary, augment) for p in config_paths or [None]]
    check_sources([source for c in configs for source in c.auxiliary.corpora])
    roles = configs[0].roles
    if any(c.roles != roles for c in configs):
        raise ConfigError("configs use different role inventories", "compare configs with the same [corpus] roles")
    corpus = read_corpus(corpus_paths, roles=roles, skip_bad=skip_bad)
    if not test_paths:
        return configs, corpus, []
    test = read_corpus(test_paths, roles=roles, skip_bad=skip_bad)
    shared = sorted({r.id for r in corpus.records} & {r.id for r in test.records})
    if shared:
        raise CorpusError(f"{len(shared)} record id(s) are both in the corpus and in the test files, e.g. {shared[:5]}",
                          "a held-out test file must not repeat training records")
    combined = Corpus(corpus.records + test.records, corpus.files + test.files, corpus.skipped + test.skipped,
                      corpus.warnings + test.warnings)
    return configs, combined, sorted({r.doc for r in test.records})


def crossval_report(
    corpus_paths: Sequence[Path], config_paths: Sequence[Path], folder: Path, *, fold_options: FoldOptions | None = None,
    settings: EvaluationSettings | None = None, test_paths: Sequence[Path] = (), jobs: int = 1,
    scheduler: str | None = None, curve_shares: Sequence[float] = (), skip_bad: bool = False,
    progress: Progress | None = None, auxiliary: Sequence[str] = (), augment: bool | None = None,
) -> dict[str, Any]:
    """Cross-validate every config on the same folds and write the report folder.

    ``auxiliary`` corpora (and ``augment``) are added to every config's own ``[auxiliary]`` settings.
    """
    from trainer.evaluation.crossval import run_crossval
    from trainer.evaluation.curve import learning_curve
    from trainer.evaluation.extrapolate import extrapolate_curve, extrapolation_report

    check_output(folder, inputs=[*corpus_paths, *config_paths, *test_paths], folder=True, what="report folder")
    started = time.perf_counter()
    configs, corpus, test_docs = load_inputs(corpus_paths, config_paths, test_paths=test_paths, skip_bad=skip_bad,
                                             auxiliary=auxiliary, augment=augment)
    evaluation = configs[0].evaluation
    options = fold_options or FoldOptions(folds=evaluation.folds, repeats=evaluation.repeats, seed=evaluation.seed)
    if test_docs:
        options.test_docs = tuple(test_docs)
    settings = settings or EvaluationSettings(mode=evaluation.mode, bootstrap_samples=evaluation.bootstrap_samples,
                                              bootstrap_unit=evaluation.bootstrap_unit, seed=evaluation.seed)
    records, unreviewed = corpus.training_records()
    if unreviewed and progress:
        progress(f"left out {len(unreviewed)} unreviewed pre-annotated record(s) (provenance 'predicted')")
    plans = plan_folds(records, options)
    run = run_crossval(records, configs, plans, jobs=jobs, scheduler=scheduler, progress=progress, explain=True)
    summary = summarise(run, settings)
    curve = None
    if curve_shares:
        curve = learning_curve(records, configs, plans, shares=curve_shares, settings=settings, jobs=jobs,
                               scheduler=scheduler, docs=run.docs, progress=progress, full_run=run)
        curve["extrapolation"] = extrapolation_report(extrapolate_curve(curve, seed=settings.seed))
    files = [str(p) for p in expand_paths(list(corpus_paths) + list(test_paths))]
    return write_report_folder(folder, run, summary, corpus_files=files, seconds=time.perf_counter() - started,
                               learning_curve=curve)


def score_report(gold_path: Path, pred_path: Path, *, roles: Sequence[str], settings: EvaluationSettings,
                 folder: Path | None = None, allow_missing: bool = False) -> dict[str, Any]:
    """Score any system's predictions (canonical JSONL) against gold with the same scorer as cross-validation.

    Annotated gold records with no predicted record are refused, naming them,
    unless ``allow_missing``: then they count as misses and the report lists them.
    """
    if folder is not None:
        check_output(folder, inputs=[gold_path, pred_path], folder=True, what="score folder")
    gold = read_corpus([gold_path], roles=tuple(roles)).records
    predicted = read_corpus([pred_path], roles=tuple(roles)).records
    missing = missing_predictions(gold, predicted)
    if missing and not allow_missing:
        named = ", ".join(repr(i) for i in missing[:5]) + (f" and {len(missing) - 5} more" if len(missing) > 5 else "")
        raise CorpusError(f"{pred_path}: {len(missing)} annotated gold record(s) of {gold_path} have no prediction: "
                          f"{named}", "predict every gold record, or pass --allow-missing (allow_missing=True) "
                          "to count their gold instances as missed")
    by_mode = {mode: count_corpus(gold, predicted, roles=roles, mode=mode) for mode in SCORING_MODES}
    counts = by_mode[settings.mode]
    scores = counts.scores()
    docs = len(set(counts.doc_of.values()))
    confidence = confidence_report(gold, predicted, roles=roles, mode=settings.mode)
    report = {
        "schema": "itinerant.score-report",
        "schema_version": 2,
        "gold": {"file": str(gold_path), "fingerprint": fingerprint(gold), "records": len(gold)},
        "predictions": {"file": str(pred_path), "records": len(predicted)},
        "missing_predictions": {"count": len(missing), "ids": missing},
        "settings": settings.to_dict(),
        "versions": library_versions(),
        "scores": scores.to_dict(),
        "intervals": {k: [round(lo, 6), round(hi, 6)] for k, (lo, hi) in bootstrap_f1s(
            counts.units(by=settings.bootstrap_unit), roles, samples=settings.bootstrap_samples,
            seed=settings.seed, confidence=settings.confidence).items()},
        "interval_docs": docs,
        "interval_warning": interval_warning(docs),
        **breakdown(by_mode),
        "calibration": confidence["calibration"],
        "thresholds": confidence["thresholds"],
        "errors": error_analysis(gold, predicted, roles=roles).to_dict(),
    }
    if folder is not None:
        folder.mkdir(parents=True, exist_ok=True)
        dump_json(report, folder / "score.json")
    return report


def _saved_run(folder: Path) -> dict[str, Any]:
    try:
        data = json.loads((folder / REPORT_JSON).read_text(encoding="utf-8"))
    except (FileNotFoundError, NotADirectoryError):
        raise UnreadableInputError(f"{folder}: no {REPORT_JSON} here", "name a folder written by `itinerant crossval`") from None
    except (OSError, ValueError, RecursionError) as exc:
        raise UnreadableInputError(f"{folder / REPORT_JSON}: cannot be read as a report ({exc})",
                                   "rerun the cross-validation") from None
    if not isinstance(data, dict):
        raise UnreadableInputError(f"{folder / REPORT_JSON}: not a report (expected a JSON object)", "rerun the cross-validation")
    return data


def contrast_runs(folder_a: Path, folder_b: Path, *, system_a: str | None = None, system_b: str | None = None,
                  trials: int = 9999, seed: int = 13) -> dict[str, Any]:
    """A paired test between one config of each of two saved runs, on their saved held-out predictions."""
    report_a, report_b = _saved_run(folder_a), _saved_run(folder_b)
    if report_a["corpus"]["fingerprint"] != report_b["corpus"]["fingerprint"]:
        raise CorpusError("the two runs were made on different corpora (fingerprints differ)",
                          "contrast runs made on the same annotated records")
    if report_a["settings"]["mode"] != report_b["settings"]["mode"]:
        raise CorpusError(f"the runs use different scoring modes ({report_a['settings']['mode']} vs "
                          f"{report_b['settings']['mode']})", "rerun one of them with the other's --mode")
    roles = tuple(report_a["roles"])
    gold = read_corpus(report_a["corpus"]["files"], roles=roles).annotated()
    if fingerprint(gold) != report_a["corpus"]["fingerprint"]:
        raise CorpusError("the corpus files named in the report have changed since the run",
                          "rerun the cross-validation on the current files")
    mode = report_a["settings"]["mode"]
    picked = []
    for folder, report, name in ((folder_a, report_a, system_a), (folder_b, report_b, system_b)):
        system = next((s for s in report["systems"] if name in (None, s["name"])), None)
        if system is None:
            raise ConfigError(f"{folder}: no config named {name!r}", f"choose from: {[s['name'] for s in report['systems']]}")
        predicted = read_corpus([folder / system["predictions"]], roles=roles).records
        picked.append((system["name"], count_corpus(gold, predicted, roles=roles, mode=mode)))
    (name_a, counts_a), (name_b, counts_b) = picked
    tests = compare_f1s(counts_a.units(by="doc"), counts_b.units(by="doc"), roles, trials=trials, seed=seed)
    return {
        "a": {"run": str(folder_a), "system": name_a, "f1": counts_a.scores().f1s()},
        "b": {"run": str(folder_b), "system": name_b, "f1": counts_b.scores().f1s()},
        "mode": mode,
        "tests": {name: {"difference": round(d, 6), "p_value": round(p, 6)} for name, (d, p) in tests.items()},
    }
