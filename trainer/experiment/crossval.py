"""Running a cross-validation: several configs trained and tested on the same document folds.

Every sentence is parsed once per run (through the parse cache) and the same
parses serve all folds and all configs. Each config yields held-out
predictions for every annotated record, from the full pipeline and with the
gold triggers given, plus per-fold timings. Scoring is a separate step
(:mod:`trainer.evaluation.summary`), so predictions can be rescored later; the run's
records are in :mod:`trainer.evaluation.runs`.
"""

from __future__ import annotations

import time
import warnings
from dataclasses import replace
from pathlib import Path
from typing import Any, Sequence

from joblib import Parallel, delayed, parallel_config
from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import ExperimentConfig, check_jobs
from trainer.corpus.reader import Corpus, expand_paths, read_corpus
from trainer.corpus.records import Record
from trainer.errors import ConfigError, CorpusError, OutputError
from trainer.evaluation.breakdown import fold_name
from trainer.evaluation.extrapolate import extrapolate_curve, extrapolation_report
from trainer.evaluation.folds import FoldPlan, fixed_split, grouped_kfold, leave_one_book_out, leave_one_doc_out
from trainer.evaluation.runs import CrossvalRun, FoldOutput, Progress, SystemRun
from trainer.evaluation.summary import summarise
from trainer.experiment.settings import FoldOptions, RunSettings, unique_names
from trainer.features.extract import Featurizer
from trainer.models.explain import span_explanations
from trainer.models.training import ParsedAuxiliary, build_extractor, parse_auxiliary, parser_for, with_auxiliary
from trainer.outputs import check_output, output_lock
from trainer.parsing.parse import parse_records
from trainer.reports.folder import write_report_folder


def _run_fold(config: ExperimentConfig, featurizer: Featurizer, repeat: int, index: int, train: list[Record],
              train_docs: list[Doc], test: list[Record], test_docs: list[Doc],
              domains: list[str] | None, target_records: int, explain: bool = False) -> FoldOutput:
    started = time.perf_counter()
    extractor = build_extractor(config, featurizer=featurizer).fit(train, train_docs, domains=domains)
    trained_at = time.perf_counter()
    predicted = extractor.predict(test, test_docs)
    given = extractor.predict(test, test_docs, gold_triggers=True)
    predicted_at = time.perf_counter()
    return FoldOutput(config.name, repeat, index, predicted, given, trained_at - started,
                      predicted_at - trained_at, target_records,
                      span_explanations(extractor, test_docs, predicted) if explain else {},
                      [d.describe() for d in extractor.departures_])


def run_crossval(
    records: Sequence[Record],
    configs: Sequence[ExperimentConfig],
    plans: Sequence[FoldPlan],
    *,
    nlp: Language | None = None,
    docs: Sequence[Doc] | None = None,
    auxiliary: dict[str, ParsedAuxiliary] | None = None,
    jobs: int = 1,
    scheduler: str | None = None,
    progress: Progress | None = None,
    explain: bool = False,
) -> CrossvalRun:
    """Train every config on every fold's training docs and predict its held-out docs.

    ``explain`` also keeps, for every predicted span, the features that weighed most for it
    (:func:`trainer.models.explain.span_explanations`), for the HTML report.

    Each config's auxiliary corpora (``[auxiliary] corpora``) join every one of
    its training folds and are never scored; pass ``auxiliary`` to reuse them parsed.

    All configs must use the same parser pipeline, so one parse of each record
    serves them all; pass ``docs`` (one per annotated record, in order) to reuse
    parses made earlier. ``jobs`` runs the (config, fold) trainings in parallel
    worker processes with joblib; ``scheduler`` (a Dask scheduler address) sends
    them to a Dask cluster instead. Results are the same either way.
    """
    names = unique_names(configs)
    pipelines = {c.parser.pipeline for c in configs}
    if len(pipelines) > 1:
        raise ConfigError(f"configs use different parsers: {sorted(pipelines)}",
                          "compare configs that share [parser] pipeline; run one crossval per parser")
    annotated = [r for r in records if r.is_annotated]
    nlp = nlp or parser_for(configs[0])
    started = time.perf_counter()
    if docs is None:
        docs, stats = parse_records(nlp, annotated, configs[0].parser, scheduler=scheduler)
        parsed, cached = stats.parsed, stats.cached
        stats_note = f"note: parse cache not written ({stats.unwritable}); going on without it" if stats.unwritable else ""
    else:
        parsed, cached, stats_note = 0, len(docs), ""
    if auxiliary is None:
        auxiliary = parse_auxiliary([s for c in configs for s in c.auxiliary.corpora], target=annotated, nlp=nlp,
                                    parser=configs[0].parser, roles=configs[0].roles, scheduler=scheduler)
    parse_seconds = time.perf_counter() - started
    featurizers = {c.name: Featurizer.from_config(c.features, nlp) for c in configs}
    by_doc: dict[str, list[int]] = {}
    for i, record in enumerate(annotated):
        by_doc.setdefault(record.doc, []).append(i)

    def pick(doc_names: Sequence[str]) -> list[int]:
        return sorted(i for d in doc_names for i in by_doc.get(d, []))

    tasks = []
    for config in configs:
        for plan in plans:
            for index, (train_names, test_names) in enumerate(plan.folds):
                train_ids, test_ids = pick(train_names), pick(test_names)
                train, train_docs, domains = with_auxiliary([annotated[i] for i in train_ids],
                                                            [docs[i] for i in train_ids], config, auxiliary)
                tasks.append(delayed(_run_fold)(
                    config, featurizers[config.name], plan.repeat, index, train, train_docs,
                    [annotated[i] for i in test_ids], [docs[i] for i in test_ids], domains, len(train_ids), explain))
    if progress:
        progress(f"{len(annotated)} records parsed ({cached} from cache) in {parse_seconds:.1f} s; "
                 f"{len(tasks)} training runs ({len(configs)} config(s) x {sum(len(p.folds) for p in plans)} fold(s))")
        if stats_note:
            progress(stats_note)
        for parsed_aux in auxiliary.values():
            aux = parsed_aux.corpus
            progress(f"auxiliary corpus '{aux.name}' ({aux.source}): {len(aux.records)} record(s) join every training "
                     f"fold of the configs naming it, {aux.left_out} left out (doc or id shared with the corpus)")
    outputs = _dispatch(tasks, jobs=jobs, scheduler=scheduler, progress=progress)
    systems = [SystemRun(name, config, [o for o in outputs if o.config == name]) for name, config in zip(names, configs)]
    return CrossvalRun(annotated, list(plans), systems, parse_seconds, parsed, cached, list(docs), auxiliary)


# joblib's process pool (loky) replaces a worker whose memory has grown by more than 300 MB since its first
# task, and says so with this warning when tasks are still waiting. The worker sends its fold's result back
# before that check, so nothing is lost or run twice; a fold with an auxiliary corpus can grow a worker that much.
WORKER_REPLACED = "A worker stopped while some jobs were given to the executor"


def _dispatch(tasks: list, *, jobs: int, scheduler: str | None, progress: Progress | None) -> list[FoldOutput]:
    """Run the training tasks serially, in local worker processes, or on a Dask cluster; order is kept."""
    if scheduler:
        try:
            from dask.distributed import Client
        except ImportError:
            raise ConfigError("a Dask scheduler was given but dask.distributed is not installed",
                              "install it with `pip install 'itinerant[cluster]'` (or `pip install 'dask[distributed]'`)") from None
        if progress:
            progress(f"sending {len(tasks)} training runs to the Dask scheduler at {scheduler}")
        with Client(scheduler), parallel_config(backend="dask"):
            return Parallel(n_jobs=-1)(tasks)
    if jobs > 1:
        with warnings.catch_warnings():
            warnings.filterwarnings("ignore", message=WORKER_REPLACED, category=UserWarning)
            return Parallel(n_jobs=jobs, prefer="processes", verbose=10 if progress else 0)(tasks)
    return _serial(tasks, progress)


def _serial(tasks: list, progress: Progress | None) -> list[FoldOutput]:
    outputs = []
    for number, (function, args, kwargs) in enumerate(tasks, start=1):
        output = function(*args, **kwargs)
        outputs.append(output)
        if progress:
            held_out = {"repeat": output.repeat, "fold": output.fold, "docs": sorted({r.doc for r in output.predicted})}
            progress(f"[{number}/{len(tasks)}] {output.config} {fold_name(held_out)}: "
                     f"trained on {output.train_records} records in {output.train_seconds:.1f} s"
                     + ("; features augmented by corpus where the conventions differ" if output.departures else ""))
    return outputs


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


def read_run_corpus(corpus_paths: Sequence[Path], roles: tuple[str, ...], *, test_paths: Sequence[Path] = (),
                    skip_bad: bool = False) -> tuple[Corpus, list[str]]:
    """The corpus (plus held-out test files) and the doc names of the test files."""
    corpus = read_corpus(corpus_paths, roles=roles, skip_bad=skip_bad)
    if not test_paths:
        return corpus, []
    test = read_corpus(test_paths, roles=roles, skip_bad=skip_bad)
    shared = sorted({r.id for r in corpus.records} & {r.id for r in test.records})
    if shared:
        raise CorpusError(f"{len(shared)} record id(s) are both in the corpus and in the test files, e.g. {shared[:5]}",
                          "a held-out test file must not repeat training records")
    combined = Corpus(corpus.records + test.records, corpus.files + test.files, corpus.skipped + test.skipped,
                      corpus.warnings + test.warnings)
    return combined, sorted({r.doc for r in test.records})


def check_outside(folder: Path, inputs: Sequence[Path]) -> None:
    """Refuse an input that lies inside the report folder, whose files (predictions among them) a run replaces."""
    inside = folder.resolve()
    for path in inputs:
        if path.exists() and inside in Path(path).resolve().parents:
            raise OutputError(f"{path}: this input lies inside the report folder {folder}, whose files the run replaces",
                              "write the report to another folder (-o), or move the input out of it")


def crossval_experiment(corpus_paths: Sequence[Path | str], settings: RunSettings, folder: Path | str, *,
                        test_paths: Sequence[Path] = (), jobs: int = 1, scheduler: str | None = None,
                        curve_shares: Sequence[float] = (), skip_bad: bool = False,
                        progress: Progress | None = None) -> dict[str, Any]:
    """Cross-validate every config of ``settings`` on the same folds (and a learning curve at ``curve_shares``),
    write the report folder and return the report data.

    The folder is checked and locked before anything is read, so a second run to it is refused at once.
    """
    from trainer.experiment.curve import check_shares, learning_curve

    check_jobs(jobs)
    if curve_shares:
        check_shares(curve_shares)
    corpus_paths, folder = [Path(p) for p in corpus_paths], Path(folder)
    check_output(folder, inputs=[*corpus_paths, *settings.config_paths, *test_paths], folder=True, what="report folder")
    check_outside(folder, [*corpus_paths, *settings.config_paths, *test_paths])
    with output_lock(folder):
        started = time.perf_counter()
        corpus, test_docs = read_run_corpus(corpus_paths, settings.roles, test_paths=test_paths, skip_bad=skip_bad)
        options = replace(settings.folds, test_docs=tuple(test_docs)) if test_docs else settings.folds
        records, unreviewed = corpus.training_records()
        if unreviewed and progress:
            progress(f"left out {len(unreviewed)} unreviewed pre-annotated record(s) (provenance 'predicted')")
        plans = plan_folds(records, options)
        evaluation = settings.evaluation
        run = run_crossval(records, settings.configs, plans, jobs=jobs, scheduler=scheduler, progress=progress,
                           explain=True)
        summary = summarise(run, evaluation)
        curve = None
        if curve_shares:
            curve = learning_curve(records, settings.configs, plans, shares=curve_shares, settings=evaluation,
                                   jobs=jobs, scheduler=scheduler, docs=run.docs, progress=progress, full_run=run)
            curve["extrapolation"] = extrapolation_report(extrapolate_curve(curve, seed=evaluation.seed))
        files = [str(p) for p in expand_paths(list(corpus_paths) + list(test_paths))]
        return write_report_folder(folder, run, summary, corpus_files=files, seconds=time.perf_counter() - started,
                                   learning_curve=curve)
