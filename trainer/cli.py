"""The ``itinerant`` command line: each command declares options and calls the library.

Only the package's own errors are caught: their message is printed and the
command exits with the error's code, with no traceback. Anything else is a bug
and keeps its traceback.
"""

from __future__ import annotations

import functools
import sys
import time
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Callable, Optional, get_args, get_origin

import typer
import typer.core

from trainer.errors import ItinerantError, UnreadableInputError

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Train, evaluate and apply extractors of motion events (trigger, mover, source, path, destination) in travel prose.",
)

# Help placeholders in words rather than Python type names (<list[Path]>, <bool>): a flag shows none.
PLACEHOLDERS: dict[type, str] = {Path: "PATH", int: "N", float: "NUMBER", str: "TEXT", bool: ""}


def _placeholder(self, ctx) -> str:
    annotation = self.type_descriptor.annotation
    element = get_args(annotation)[0] if get_origin(annotation) is list else annotation
    return PLACEHOLDERS.get(element, "VALUE")


for _param_class in (typer.core.TyperOption, typer.core.TyperArgument):
    if hasattr(_param_class, "display_type"):  # typer versions that print a placeholder per parameter
        _param_class.display_type = _placeholder


def _version(value: bool) -> None:
    if value:
        from importlib.metadata import version

        typer.echo(f"itinerant {version('itinerant')}")
        raise typer.Exit(0)


@app.callback()
def _main(
    version: Annotated[bool, typer.Option("--version", callback=_version, is_eager=True, help="Print the version and exit.")] = False,
) -> None:
    """Train, evaluate and apply extractors of motion events (trigger, mover, source, path, destination) in travel prose."""


RolesOption = Annotated[
    Optional[str], typer.Option("--roles", help="Comma-separated role inventory (default: mover,source,path,destination).")
]
ConfigOption = Annotated[Optional[Path], typer.Option("--config", "-c", help="Experiment config (TOML); defaults apply when left out.")]
AuxOption = Annotated[list[str], typer.Option(
    "--aux", metavar="CORPUS",
    help="Auxiliary corpus (JSONL file or folder, or packaged:demo) added to every training set and never scored; repeat for several.")]
AugmentOption = Annotated[Optional[bool], typer.Option(
    "--augment/--no-augment", help="Feature augmentation by corpus when training with auxiliary corpora (default: the config's).")]


def say(message: str = "") -> None:
    """Progress and summaries go to stderr so stdout stays clean for data."""
    typer.echo(message, err=True)


def user_errors(command: Callable) -> Callable:
    """Turn the package's errors into a message and an exit code."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        try:
            return command(*args, **kwargs)
        except ItinerantError as exc:
            typer.echo(f"error: {exc}", err=True)
            raise typer.Exit(exc.exit_code) from None

    return wrapper


@contextmanager
def progress_bar(label: str, *, enabled: bool):
    """A progress bar on stderr (share read, sentences, rate, time left); yields its update function."""
    if not enabled:
        yield None
        return
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn, TimeRemainingColumn

    columns = (TextColumn("{task.description}"), BarColumn(), TextColumn("{task.percentage:>3.0f}%"),
               TextColumn("{task.fields[sentences]} sentences, {task.fields[rate]:.0f}/s"),
               TimeElapsedColumn(), TextColumn("left"), TimeRemainingColumn())
    started = time.perf_counter()
    with Progress(*columns, console=Console(stderr=True)) as bar:
        task = bar.add_task(label, total=1.0, sentences=0, rate=0.0)

        def update(sentences: int, share: float) -> None:
            rate = sentences / max(time.perf_counter() - started, 1e-9)
            bar.update(task, completed=share, sentences=sentences, rate=rate)

        yield update


def _roles(value: str | None):
    from trainer.corpus.records import DEFAULT_ROLES

    return tuple(r.strip() for r in value.split(",") if r.strip()) if value else DEFAULT_ROLES


@app.command()
@user_errors
def check(
    files: Annotated[list[Path], typer.Argument(help="Canonical JSONL files or folders of them.")],
    roles: RolesOption = None,
    lemmas: Annotated[bool, typer.Option(help="Lemmatise triggers with the spaCy pipeline for the statistics.")] = True,
    pipeline: Annotated[Optional[str], typer.Option(help="spaCy pipeline for trigger lemmas.")] = None,
    strict: Annotated[bool, typer.Option(help="Treat warnings as errors (exit 1).")] = False,
) -> None:
    """Validate annotation files: every problem as file:line: field: message, then corpus statistics.

    Exit codes: 0 clean, 1 errors found, 2 a file could not be read.
    """
    from trainer.corpus.reader import expand_paths
    from trainer.corpus.stats import corpus_stats
    from trainer.corpus.validate import check_files

    inventory = _roles(roles)
    result = check_files(expand_paths(files), inventory)
    for problem in result.problems:
        typer.echo(str(problem))
    records = [r for _, _, r in result.records]
    lemmatize = None
    with_triggers = [r for r in records if r.events]  # only triggers are lemmatised: no events, no parser
    if lemmas and with_triggers:
        from trainer.config import DEFAULT_PIPELINE
        from trainer.parsing.pipeline import load_pipeline, trigger_lemmatizer

        lemmatize = trigger_lemmatizer(load_pipeline(pipeline or DEFAULT_PIPELINE, groups=["lexical"]), with_triggers)
    typer.echo("")
    typer.echo(corpus_stats(records, roles=inventory, lemmatize=lemmatize).to_text())
    errors, warnings = len(result.errors), len(result.warnings)
    typer.echo(f"\n{errors} error(s) in {result.bad_records} record(s), {warnings} warning(s)")
    if errors or (strict and warnings):
        raise typer.Exit(1)


@app.command()
@user_errors
def convert(
    source: Annotated[Path, typer.Argument(help="Input file; its format comes from the extension (.jsonl, .csv/.tsv, .cols/.bio, .xml, .txt).")],
    output: Annotated[Path, typer.Option("--output", "-o", help="Output file; its format comes from the extension (.jsonl, .csv/.tsv, .cols/.bio).")],
    input_format: Annotated[Optional[str], typer.Option("--input-format", help="Read as this format whatever the extension: jsonl, columns, table, isospace or inline.")] = None,
    output_format: Annotated[Optional[str], typer.Option("--output-format", help="Write as this format whatever the extension: jsonl, columns or table.")] = None,
    fail_on_loss: Annotated[bool, typer.Option("--fail-on-loss", help="Exit 1 when anything could not be carried over (the file is still written).")] = False,
    roles: RolesOption = None,
) -> None:
    """Convert between the canonical JSONL and other formats; everything not carried over is listed.

    Exit codes: 0 written (listed losses included), 1 losses with --fail-on-loss, 2 unusable input or output.
    """
    from trainer.corpus.convert import convert_file

    result = convert_file(source, output, from_format=input_format, to_format=output_format, roles=_roles(roles))
    for loss in result.losses:
        typer.echo(f"not carried over: {loss}")
    say(f"{len(result.records)} record(s) written to {output}; {len(result.losses)} loss(es)")
    if result.losses and fail_on_loss:
        raise typer.Exit(1)


@app.command()
@user_errors
def fit(
    corpus: Annotated[list[Path], typer.Argument(help="Annotated JSONL files or folders.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="Model file to write (a pickle; see docs/models.md).")],
    config: ConfigOption = None,
    skip_bad: Annotated[bool, typer.Option(help="Leave out records with errors (each is listed) instead of refusing the corpus.")] = False,
    jobs: Annotated[int, typer.Option("--jobs", "-j", help="Worker processes for a hyperparameter search's candidates.")] = 1,
    aux: AuxOption = [],
    augment: AugmentOption = None,
) -> None:
    """Train an extractor on annotated records and write a model file with its digest.

    The model file is checked to be writable (and not an input) before training starts.
    """
    from trainer.config import add_auxiliary, load_config
    from trainer.corpus.auxiliary import check_sources, local_paths
    from trainer.corpus.reader import expand_paths
    from trainer.models.persist import digest_path
    from trainer.outputs import check_output, output_lock

    cfg = add_auxiliary(load_config(config), aux, augment)
    check_sources(cfg.auxiliary.corpora)
    auxiliary = local_paths(cfg.auxiliary.corpora)
    inputs = [*corpus, *expand_paths(corpus), *([config] if config else []), *auxiliary, *expand_paths(auxiliary)]
    check_output(output, inputs=inputs, what="model file")
    check_output(digest_path(output), inputs=inputs, what="model digest file")
    with output_lock(output):
        _fit_locked(corpus, output, cfg, skip_bad, jobs)


def _fit_locked(corpus: list[Path], output: Path, cfg, skip_bad: bool, jobs: int) -> None:
    """The training part of ``fit``, run while the output's lock is held."""
    from joblib import parallel_config

    from trainer.corpus.reader import read_corpus, skipped_summary
    from trainer.models.training import fit_extractor, save_extractor

    data = read_corpus(corpus, roles=cfg.roles, skip_bad=skip_bad)
    if data.skipped:
        say(skipped_summary(data))
    annotated, unreviewed = data.training_records()
    if unreviewed:
        say(f"left out {len(unreviewed)} pre-annotated record(s) nobody has reviewed (provenance 'predicted'): "
            f"{', '.join(unreviewed[:10])}{' ...' if len(unreviewed) > 10 else ''}")
    say(f"training '{cfg.name}' on {len(annotated)} annotated record(s) from {len({r.doc for r in annotated})} doc(s)")
    started = time.perf_counter()
    with parallel_config(n_jobs=jobs):
        trained = fit_extractor(annotated, cfg)
    for aux in trained.auxiliary:
        say(f"auxiliary corpus '{aux['name']}' ({aux['source']}): {aux['records']} record(s) joined training, "
            f"{aux['left_out_shared_with_target']} left out (doc or id shared with the training corpus)"
            f"{'; features augmented by corpus' if cfg.auxiliary.augment else ''}")
    meta = save_extractor(trained, output, records=annotated, training_seconds=time.perf_counter() - started)
    alignment = trained.alignment
    if alignment and (alignment.widened or alignment.dropped):
        say(f"alignment: {alignment.widened} span(s) widened to token boundaries, {alignment.dropped} dropped")
    say(f"model written to {output} ({meta['payload_bytes']} bytes, {meta['training_seconds']} s); digest in {output}.sha256")
    if data.skipped:
        raise typer.Exit(1)


@app.command()
@user_errors
def extract(
    model: Annotated[Path, typer.Argument(help="Model file written by `itinerant fit`.")],
    sources: Annotated[list[Path], typer.Argument(help="Books: plain text (.txt) or canonical JSONL (.jsonl) files, or folders of them.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="For one input file, a file (canonical JSONL with predicted events and confidences); for a library, a folder getting one <book>.jsonl per book.")],
    table: Annotated[Optional[Path], typer.Option(help="Also write a flat table of events (.csv or .tsv); for a library, one table of every book.")] = None,
    input_format: Annotated[Optional[str], typer.Option("--input-format", help="text or jsonl (default: by extension).")] = None,
    doc: Annotated[Optional[str], typer.Option(help="Document name for plain text (default: the file name).")] = None,
    batch_size: Annotated[int, typer.Option(help="Sentences per batch.")] = 256,
    resume: Annotated[bool, typer.Option(help="Continue an interrupted run from OUTPUT.partial (or OUTPUT) after checking the input is the same; for a library, skip finished books and continue a torn one.")] = False,
    skip_bad: Annotated[bool, typer.Option(help="JSONL input: leave out records with errors (listed).")] = False,
    progress: Annotated[Optional[bool], typer.Option(help="Show a progress bar (default: when stderr is a terminal).")] = None,
    compare: Annotated[bool, typer.Option(help="JSONL input with events: score the predictions against them.")] = False,
    jobs: Annotated[int, typer.Option("--jobs", "-j", help="Library: books extracted at once, in local worker processes.")] = 1,
    scheduler: Annotated[Optional[str], typer.Option(help="Library: Dask scheduler address (e.g. tcp://host:8786); one task per book on that cluster, whose workers must see the same paths.")] = None,
) -> None:
    """Apply a model to a book, a JSONL file or a whole library; offsets into a plain-text file are kept in each record's meta.

    Several inputs, a folder, or an output folder (existing, or named without an extension) make a library run.

    A library run writes one output per book; a book that fails is reported and the others go on.

    Exit codes: 0 all written, 1 some books failed, 2 unusable input or output.
    """
    from trainer.errors import ConfigError
    from trainer.models.apply import check_source, extract_file
    from trainer.models.library import names_a_library
    from trainer.models.persist import digest_path
    from trainer.models.training import load_extractor
    from trainer.outputs import check_output

    show = sys.stderr.isatty() if progress is None else progress
    if names_a_library(sources, output):
        if doc or compare:
            raise ConfigError("--doc and --compare work on one input file, not a library",
                              "extract that book on its own, with -o naming a .jsonl file")
        _extract_library(model, sources, output, table=table, input_format=input_format, batch_size=batch_size,
                         resume=resume, skip_bad=skip_bad, show=show, jobs=jobs, scheduler=scheduler)
        return
    source = sources[0]
    fmt = input_format or ("jsonl" if source.suffix == ".jsonl" else "text")
    if compare and fmt != "jsonl":
        raise ConfigError("--compare needs JSONL input whose records carry events", "drop --compare for plain text")
    check_source(source)
    inputs = [model, digest_path(model), source]
    check_output(output, inputs=inputs, what="extraction output")
    if table:
        check_output(table, inputs=[*inputs, output], what="event table")
    trained, _ = load_extractor(model)
    with progress_bar(f"extracting {source.name}", enabled=show) as update:
        summary = extract_file(trained, source, output, input_format=fmt, doc_name=doc, batch_size=batch_size,
                               resume=resume, skip_bad=skip_bad, on_progress=update)
    for problem in summary.skipped:
        say(f"skipped {problem}")
    resumed = f" (after {summary.resumed} kept from the earlier run)" if summary.resumed else ""
    say(f"{summary.sentences} sentence(s){resumed}, {summary.events} event(s), {summary.roles} role(s) written to {output}")
    if compare:
        from trainer.evaluation.summary import EvaluationSettings
        from trainer.reports.markdown import score_markdown
        from trainer.reports.runs import score_report

        typer.echo(score_markdown(score_report(source, output, roles=trained.roles, settings=EvaluationSettings(),
                                               allow_missing=True)))  # records skipped above count as missed
    if table:
        from trainer.corpus.convert import convert_file

        convert_file(output, table, from_format="jsonl", to_format="table", roles=trained.roles)
        say(f"event table written to {table}")


@contextmanager
def library_progress(*, enabled: bool):
    """Report each finished book: a bar of books done, words per second and time left, or a line per failure."""
    from trainer.models.library import FAILED, SKIPPED

    if not enabled:
        yield lambda result, done, total: say(f"failed: {result.error}") if result.status == FAILED else None
        return
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    columns = (TextColumn("extracting"), BarColumn(), TextColumn("{task.completed:.0f}/{task.fields[books]} books"),
               TextColumn("{task.fields[rate]:,.0f} words/s"), TimeElapsedColumn(), TextColumn("left {task.fields[left]}"))
    started, words, worked = time.perf_counter(), [0], [0]
    with Progress(*columns, console=Console(stderr=True)) as bar:
        task = bar.add_task("books", total=None, books="?", rate=0.0, left="-:--:--")

        def update(result, done: int, total: int) -> None:
            elapsed = time.perf_counter() - started
            words[0] += result.words
            worked[0] += result.status != SKIPPED
            left = elapsed / worked[0] * (total - done) if worked[0] else 0.0
            bar.update(task, completed=done, total=total, books=total, rate=words[0] / max(elapsed, 1e-9),
                       left=time.strftime("%H:%M:%S", time.gmtime(left)))
            if result.status == FAILED:
                bar.console.print(f"failed: {result.error}", markup=False, highlight=False, soft_wrap=True)

        yield update


def _extract_library(model: Path, sources: list[Path], folder: Path, *, table: Path | None, input_format: str | None,
                     batch_size: int, resume: bool, skip_bad: bool, show: bool, jobs: int, scheduler: str | None) -> None:
    """The library part of ``extract``: every book into FOLDER, failures counted (exit 1 when any)."""
    from trainer.models.library import DONE, SKIPPED, extract_library

    with library_progress(enabled=show) as on_book:
        summary = extract_library(model, sources, folder, jobs=jobs, scheduler=scheduler, resume=resume,
                                  batch_size=batch_size, skip_bad=skip_bad, input_format=input_format, table=table,
                                  on_book=on_book)
    for result in summary.results:
        for problem in result.skipped:
            say(f"skipped {problem}")
    done = [r for r in summary.results if r.status == DONE]
    words = sum(r.words for r in done)
    say(f"{len(done)} book(s) extracted, {summary.count(SKIPPED)} already done, {len(summary.failed)} failed; "
        f"{sum(r.sentences for r in done)} sentence(s), {sum(r.events for r in done)} event(s), "
        f"{words} word(s) in {summary.seconds:.1f} s ({words / max(summary.seconds, 1e-9):,.0f} words/s); written to {folder}/")
    if summary.table:
        say(f"event table of every book written to {summary.table}")
    if summary.failed:
        raise typer.Exit(1)


FoldsOption = Annotated[Optional[int], typer.Option("--folds", "-k", help="Number of grouped folds (default: the config's).")]
SeedOption = Annotated[Optional[int], typer.Option(help="Seed for folds, bootstrap and tests (default: the config's).")]
ModeOption = Annotated[Optional[str], typer.Option(help="Scoring mode: exact or overlap (default: the config's).")]


def _settings(configs: list[Path], mode: str | None, seed: int | None, samples: int | None):
    """Evaluation settings from the first config, with command-line overrides."""
    from trainer.config import load_config
    from trainer.evaluation.summary import EvaluationSettings

    evaluation = load_config(configs[0] if configs else None).evaluation
    return EvaluationSettings(mode=mode or evaluation.mode, seed=evaluation.seed if seed is None else seed,
                              bootstrap_samples=samples or evaluation.bootstrap_samples,
                              bootstrap_unit=evaluation.bootstrap_unit)


def _fold_options(configs: list[Path], folds: int | None, repeats: int | None, seed: int | None,
                  leave_one_out: bool, test_docs: str | None, by_book: bool = False):
    from trainer.config import load_config
    from trainer.reports.runs import FoldOptions

    evaluation = load_config(configs[0] if configs else None).evaluation
    return FoldOptions(folds=folds or evaluation.folds, repeats=repeats or evaluation.repeats,
                       seed=evaluation.seed if seed is None else seed, leave_one_doc_out=leave_one_out,
                       leave_one_book_out=by_book,
                       test_docs=tuple(d.strip() for d in test_docs.split(",") if d.strip()) if test_docs else ())


def _shares(value: str) -> list[float]:
    from trainer.errors import ConfigError

    try:
        return [float(x) for x in value.split(",") if x.strip()]
    except ValueError:
        raise ConfigError(f"--shares {value!r} is not a list of numbers", "e.g. --shares 0.25,0.5,0.75,1") from None


@contextmanager
def _report_folder_lock(folder: Path, inputs: list[Path]):
    """Check a report folder and hold its lock for the whole run, so a second run to it is refused at once."""
    from trainer.outputs import check_output, output_lock

    check_output(folder, inputs=inputs, folder=True, what="report folder")
    with output_lock(folder):
        yield


@app.command()
@user_errors
def crossval(
    corpus: Annotated[list[Path], typer.Argument(help="Annotated JSONL files or folders.")],
    config: Annotated[list[Path], typer.Option("--config", "-c", help="A config to compare; repeat for several.")] = [],
    output: Annotated[Path, typer.Option("--output", "-o", help="Report folder.")] = Path("runs/crossval"),
    folds: FoldsOption = None,
    repeats: Annotated[Optional[int], typer.Option(help="Repeat the K folds with other shuffles.")] = None,
    leave_one_doc_out: Annotated[bool, typer.Option("--leave-one-doc-out", help="One fold per doc.")] = False,
    leave_one_book_out: Annotated[bool, typer.Option("--leave-one-book-out", help="One fold per book (docs named <book>-<n>): domain shift.")] = False,
    test_docs: Annotated[Optional[str], typer.Option(help="Fixed split: comma-separated docs to test on.")] = None,
    test: Annotated[list[Path], typer.Option("--test", help="Fixed split: held-out test files (train on CORPUS).")] = [],
    mode: ModeOption = None,
    seed: SeedOption = None,
    bootstrap: Annotated[Optional[int], typer.Option(help="Bootstrap samples per interval.")] = None,
    shares: Annotated[Optional[str], typer.Option(help="Also a learning curve at these shares of training docs.")] = None,
    jobs: Annotated[int, typer.Option("--jobs", "-j", help="Parallel worker processes for folds and configs.")] = 1,
    scheduler: Annotated[Optional[str], typer.Option(help="Dask scheduler address (e.g. tcp://host:8786): run the trainings on that cluster.")] = None,
    skip_bad: Annotated[bool, typer.Option(help="Leave out records with errors (listed) instead of refusing.")] = False,
    aux: AuxOption = [],
    augment: AugmentOption = None,
) -> None:
    """Cross-validate one or more configs on the same document folds and write a report folder."""
    from trainer.reports.markdown import markdown_summary
    from trainer.reports.runs import crossval_report

    with _report_folder_lock(output, [*corpus, *config, *test]):
        report = crossval_report(
            corpus, config, output,
            fold_options=_fold_options(config, folds, repeats, seed, leave_one_doc_out, test_docs, leave_one_book_out),
            settings=_settings(config, mode, seed, bootstrap), test_paths=test, jobs=jobs, scheduler=scheduler,
            curve_shares=_shares(shares) if shares else (), skip_bad=skip_bad, progress=say, auxiliary=aux, augment=augment)
    typer.echo(markdown_summary(report))
    say(f"report written to {output}/ (report.json, summary.md, report.html, predictions/)")


@app.command()
@user_errors
def curve(
    corpus: Annotated[list[Path], typer.Argument(help="Annotated JSONL files or folders.")],
    config: Annotated[list[Path], typer.Option("--config", "-c", help="A config; repeat for several.")] = [],
    output: Annotated[Path, typer.Option("--output", "-o", help="Report folder.")] = Path("runs/curve"),
    shares: Annotated[str, typer.Option(help="Shares of each fold's training docs.")] = "0.25,0.5,0.75,1",
    folds: FoldsOption = None,
    mode: ModeOption = None,
    seed: SeedOption = None,
    jobs: Annotated[int, typer.Option("--jobs", "-j", help="Parallel worker processes.")] = 1,
    scheduler: Annotated[Optional[str], typer.Option(help="Dask scheduler address: run the trainings on that cluster.")] = None,
    aux: AuxOption = [],
    augment: AugmentOption = None,
) -> None:
    """Learning curve: F1 per role as each fold's training docs grow; written with a full cross-validation report."""
    from trainer.reports.markdown import markdown_summary
    from trainer.reports.runs import crossval_report

    with _report_folder_lock(output, [*corpus, *config]):
        report = crossval_report(corpus, config, output, fold_options=_fold_options(config, folds, None, seed, False, None),
                                 settings=_settings(config, mode, seed, None), jobs=jobs, scheduler=scheduler,
                                 curve_shares=_shares(shares), progress=say, auxiliary=aux, augment=augment)
    typer.echo(markdown_summary(report))
    say(f"report with learning curve written to {output}/")


@app.command()
@user_errors
def score(
    gold: Annotated[Path, typer.Argument(help="Gold annotations (canonical JSONL).")],
    predictions: Annotated[Path, typer.Argument(help="Any system's predictions in the canonical JSONL format.")],
    mode: Annotated[str, typer.Option(help="exact or overlap.")] = "exact",
    roles: RolesOption = None,
    seed: Annotated[int, typer.Option(help="Bootstrap seed.")] = 13,
    bootstrap: Annotated[int, typer.Option(help="Bootstrap samples per interval.")] = 1000,
    output: Annotated[Optional[Path], typer.Option("--output", "-o", help="Also write score.json into this folder.")] = None,
    allow_missing: Annotated[bool, typer.Option(
        help="Score gold records that have no prediction as missed (listed in the report) instead of stopping.")] = False,
) -> None:
    """Score predictions from any extractor against gold with itinerant's scorer."""
    from trainer.evaluation.summary import EvaluationSettings
    from trainer.reports.markdown import score_markdown
    from trainer.reports.runs import score_report

    settings = EvaluationSettings(mode=mode, seed=seed, bootstrap_samples=bootstrap)
    report = score_report(gold, predictions, roles=_roles(roles), settings=settings, folder=output,
                          allow_missing=allow_missing)
    typer.echo(score_markdown(report))


@app.command()
@user_errors
def contrast(
    run_a: Annotated[Path, typer.Argument(help="A report folder written by `itinerant crossval`.")],
    run_b: Annotated[Path, typer.Argument(help="Another report folder on the same corpus and folds.")],
    system_a: Annotated[Optional[str], typer.Option(help="Config name in run A (default: its first).")] = None,
    system_b: Annotated[Optional[str], typer.Option(help="Config name in run B (default: its first).")] = None,
    trials: Annotated[int, typer.Option(help="Randomization trials.")] = 9999,
    seed: Annotated[int, typer.Option(help="Seed of the randomization.")] = 13,
) -> None:
    """Paired significance test (approximate randomization by document) between two saved runs."""
    from trainer.reports.runs import contrast_runs

    result = contrast_runs(run_a, run_b, system_a=system_a, system_b=system_b, trials=trials, seed=seed)
    a, b = result["a"], result["b"]
    typer.echo(f"A = {a['system']} ({a['run']}), B = {b['system']} ({b['run']}), {result['mode']} match\n")
    typer.echo("| score | F1(A) | F1(B) | A − B | p |\n|---|---:|---:|---:|---:|")
    for name, test in result["tests"].items():
        typer.echo(f"| {name} | {a['f1'][name]:.3f} | {b['f1'][name]:.3f} | {test['difference']:+.3f} | {test['p_value']:.4f} |")


@app.command()
@user_errors
def gate(
    report: Annotated[Path, typer.Argument(help="A report folder (or its report.json) from `itinerant crossval`.")],
    baseline: Annotated[Path, typer.Option(help="The committed baseline JSON.")],
    config: Annotated[Optional[Path], typer.Option("--config", "-c", help="Take the gate settings (its gate table) from this config.")] = None,
    system: Annotated[Optional[str], typer.Option(help="Config name in the report to gate (default: the baseline's); with --accept, the config to record.")] = None,
    rule: Annotated[Optional[str], typer.Option(help="drop (absolute F1 drop) or interval (below the baseline's CI).")] = None,
    tolerance: Annotated[Optional[float], typer.Option(help="Allowed F1 drop for every score.")] = None,
    role_tolerance: Annotated[list[str], typer.Option(help="Per-score tolerance, e.g. mover=0.03; repeatable.")] = [],
    junit: Annotated[Optional[Path], typer.Option(help="Also write JUnit XML, one test case per score.")] = None,
    allow_mismatch: Annotated[bool, typer.Option(help="Compare even if corpus, roles, mode or folds differ.")] = False,
    accept: Annotated[bool, typer.Option("--accept", help="Record this report as the new baseline instead of gating.")] = False,
) -> None:
    """Fail (exit 1) when extraction quality fell below the baseline; exit 2 when the inputs cannot be compared."""
    from dataclasses import replace

    from trainer.config import load_config
    from trainer.gate.compare import (GateInputError, accept_baseline, check_baseline, compare, gate_config_of,
                                      load_report, markdown_table, read_json)
    from trainer.gate.junit import junit_xml
    from trainer.outputs import check_output, write_text

    if junit:
        check_output(junit, inputs=[report, baseline], what="JUnit file")
    if accept:
        check_output(baseline, inputs=[report, report / "report.json"], what="baseline")
    data = load_report(report)
    base = None if accept else read_json(baseline, "baseline")
    if base is not None:
        check_baseline(base)
    settings = load_config(config).gate if config else gate_config_of(data, system or (base or {}).get("system"))
    overrides = {}
    for item in role_tolerance:
        name, _, value = item.partition("=")
        try:
            overrides[name.strip()] = float(value)
        except ValueError:
            raise GateInputError(f"--role-tolerance {item!r} is not NAME=NUMBER", "e.g. --role-tolerance mover=0.03") from None
        if not 0 <= overrides[name.strip()] <= 1:
            raise GateInputError(f"--role-tolerance {item!r}: the tolerance must lie in [0, 1]", "e.g. --role-tolerance mover=0.03")
    settings = replace(settings, rule=rule or settings.rule,
                       tolerance=settings.tolerance if tolerance is None else tolerance,
                       role_tolerances={**settings.role_tolerances, **overrides})
    if settings.rule not in ("drop", "interval"):
        raise GateInputError(f"--rule {settings.rule!r} is not a gate rule", "use drop or interval")
    if accept:
        written = accept_baseline(report, baseline, system=system, config=settings)
        typer.echo(f"baseline for config '{written['system']}' written to {baseline}")
        return
    result = compare(data, base, settings, allow_mismatch=allow_mismatch, system=system)
    typer.echo(markdown_table(result))
    if junit:
        write_text(junit, junit_xml(result))
    if not result.passed:
        raise typer.Exit(1)


@app.command()
@user_errors
def itinerary(
    records: Annotated[list[Path], typer.Argument(help="Extracted or gold records (canonical JSONL files or folders).")],
    output: Annotated[Path, typer.Option("--output", "-o", help="Itinerary table (.csv or .tsv).")],
    movers: Annotated[Optional[str], typer.Option(help="Keep events of these movers: first_person and/or names, comma-separated.")] = None,
    carry_mover: Annotated[bool, typer.Option(help="Give events without a mover the previous event's mover.")] = False,
    gazetteer: Annotated[Optional[Path], typer.Option(help="Places table: name, latitude, longitude, alternatives.")] = None,
    geojson: Annotated[Optional[Path], typer.Option(help="Write the route as GeoJSON (needs --gazetteer).")] = None,
    skip_bad: Annotated[bool, typer.Option(help="Leave out records with errors (listed) instead of refusing.")] = False,
) -> None:
    """Turn events into an ordered itinerary per doc, and optionally a GeoJSON map of the route."""
    from trainer.annotation.geo import build_geojson, read_gazetteer, write_geojson
    from trainer.annotation.itinerary import build_itinerary, write_itinerary
    from trainer.corpus.reader import expand_paths, read_corpus, skipped_summary
    from trainer.errors import ConfigError
    from trainer.outputs import check_output

    if bool(gazetteer) != bool(geojson):
        raise ConfigError("--gazetteer and --geojson go together", "give both to write a map, or neither")
    inputs = [*records, *expand_paths(records), *([gazetteer] if gazetteer else [])]
    check_output(output, inputs=inputs, what="itinerary table")
    if geojson:
        check_output(geojson, inputs=[*inputs, output], what="GeoJSON file")
    corpus = read_corpus(records, skip_bad=skip_bad)
    if corpus.skipped:
        say(skipped_summary(corpus))
    wanted = [m.strip() for m in movers.split(",") if m.strip()] if movers else None
    route = build_itinerary(corpus.records, movers=wanted, carry_mover=carry_mover)
    write_itinerary(route, output)
    say(f"{len(route.rows)} event(s) in {len(route.docs)} doc(s) written to {output}"
        + (f"; {route.left_out} left out by the mover filter" if route.left_out else ""))
    if gazetteer and geojson:
        mapped = build_geojson(route, read_gazetteer(gazetteer))
        write_geojson(mapped, geojson)
        for note in mapped.notes:
            say(f"note: {note}")
        say(f"GeoJSON written to {geojson}; {mapped.resolved_mentions} place mention(s) resolved, "
            f"{len(mapped.unresolved)} name(s) unresolved" + (f": {', '.join(mapped.unresolved)}" if mapped.unresolved else ""))
    if corpus.skipped:
        raise typer.Exit(1)


@app.command()
@user_errors
def suggest(
    model: Annotated[Path, typer.Argument(help="Model file written by `itinerant fit`.")],
    unlabeled: Annotated[Path, typer.Argument(help="Unannotated sentences: JSONL (records without events) or plain text.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="The batch to annotate, pre-annotated (canonical JSONL).")],
    n: Annotated[int, typer.Option("--count", "-n", min=1, help="How many records to suggest.")] = 50,
    measure: Annotated[str, typer.Option(help="least_confidence or entropy.")] = "least_confidence",
    diversity: Annotated[float, typer.Option(help="Weight of the spread over docs and trigger lemmas, 0 to 1.")] = 0.5,
) -> None:
    """Pick the sentences the model is least sure of (spread over docs and triggers), pre-annotated for correction."""
    from trainer.annotation.suggest import suggest_batch
    from trainer.corpus.jsonl import write_jsonl
    from trainer.corpus.reader import read_corpus
    from trainer.models.persist import digest_path
    from trainer.models.training import load_extractor, parser_for
    from trainer.outputs import check_output
    from trainer.parsing.text import iter_paragraphs, sentence_records

    check_output(output, inputs=[model, digest_path(model), unlabeled], what="batch file")
    if not unlabeled.is_file():
        raise UnreadableInputError(f"{unlabeled}: {'is a folder, not a file' if unlabeled.is_dir() else 'no such file'}",
                                   "name a .jsonl or .txt file of unannotated sentences")
    trained, _ = load_extractor(model)
    nlp = parser_for(trained.config)
    if unlabeled.suffix == ".jsonl":
        records = [r for r in read_corpus([unlabeled], roles=trained.roles).records if not r.is_annotated]
        docs = None
    else:
        pairs = list(sentence_records(nlp, iter_paragraphs(unlabeled), doc_name=unlabeled.stem, source=str(unlabeled)))
        records, docs = [r for r, _ in pairs], [d for _, d in pairs]
    digest = digest_path(model).read_text(encoding="ascii").split()[0][:12]
    batch = suggest_batch(trained, records, n, measure=measure, diversity=diversity, nlp=nlp, docs=docs,
                          model_name=f"{model.name} sha256:{digest}")
    write_jsonl(batch, output)
    say(f"{len(batch)} of {len(records)} unannotated record(s) suggested, pre-annotated, written to {output}")


@app.command()
@user_errors
def merge(
    corpus: Annotated[list[Path], typer.Argument(help="The annotated corpus (JSONL files or folders).")],
    batch: Annotated[list[Path], typer.Option("--batch", "-b", help="A corrected batch; repeatable.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="The merged corpus (may be the corpus file itself).")],
    roles: RolesOption = None,
) -> None:
    """Merge corrected batches into the corpus; conflicts are listed and never resolved silently (exit 1)."""
    from trainer.annotation.merge import merge_files

    result = merge_files(corpus, batch, output, roles=_roles(roles))
    for conflict in result.conflicts:
        typer.echo(f"conflict: {conflict}")
    say(f"{len(result.added)} added, {len(result.updated)} updated, {len(result.unchanged)} unchanged; "
        f"{len(result.conflicts)} conflict(s); written to {output}")
    if result.conflicts:
        raise typer.Exit(1)


@app.command()
@user_errors
def review(
    file: Annotated[Path, typer.Argument(help="A batch from `itinerant suggest`, or any canonical JSONL file, to read and correct.")],
    port: Annotated[int, typer.Option(help="Port on 127.0.0.1 (0: any free port).")] = 8471,
    open_browser: Annotated[bool, typer.Option("--open/--no-open", help="Open the page in the default browser.")] = True,
    roles: RolesOption = None,
) -> None:
    """Correct annotations in the browser, one sentence at a time; every change is checked and saved at once."""
    from trainer.annotation.review.app import serve

    serve(file, port=port, open_browser=open_browser, roles=_roles(roles),
          on_ready=lambda url: say(f"reviewing {file} at {url} (only this computer can reach it); Ctrl+C stops"))


@app.command()
@user_errors
def explain(
    model: Annotated[Path, typer.Argument(help="A model file written by `itinerant fit` (its digest is checked).")],
    top: Annotated[int, typer.Option(help="Features listed per label and side, and transitions listed.")] = 10,
) -> None:
    """List what a model learned: the strongest features for and against each label, and CRF transitions."""
    from trainer.models.explain import explain_model, explanation_text

    typer.echo(explanation_text(explain_model(model, top=top)))


@app.command()
@user_errors
def agree(
    files: Annotated[list[Path], typer.Argument(help="Two or more annotators' JSONL files (or folders) of the same sentences.")],
    output: Annotated[Optional[Path], typer.Option("--output", "-o", help="Also write agreement.json, agreement.html and disagreements.tsv into this folder.")] = None,
    roles: RolesOption = None,
) -> None:
    """Agreement between annotators: F1 of one against another, Cohen's (or Fleiss') kappa, and the disagreements."""
    from trainer.annotation.agreement import agreement_files
    from trainer.outputs import check_output
    from trainer.reports.agreement import agreement_markdown, write_agreement

    if output:
        check_output(output, inputs=files, folder=True, what="agreement folder")
    result = agreement_files(files, roles=_roles(roles))
    typer.echo(agreement_markdown(result))
    if output:
        say(f"written: {', '.join(str(p) for p in write_agreement(result, output))}")


DEMO_DATA = Path(__file__).resolve().parent.parent / "demo_annotations"
DEMO_CONFIGS = Path(__file__).resolve().parent.parent / "configs"


@app.command()
@user_errors
def demo(
    data: Annotated[Path, typer.Option(help="The demo corpus folder.")] = DEMO_DATA,
    configs: Annotated[Path, typer.Option(help="Folder of the ready configs.")] = DEMO_CONFIGS,
    output: Annotated[Path, typer.Option("--output", "-o", help="Where the demo writes its results.")] = Path("runs/demo"),
) -> None:
    """Run the main job on the demo corpus: check, compare extractors by cross-validation, train, extract."""
    from trainer.reports.markdown import markdown_summary
    from trainer.reports.runs import crossval_report

    say(f"== 1. checking the annotations in {data}")
    check([data / "train", data / "test"], roles=None, lemmas=True, pipeline=None, strict=False)
    say("\n== 2. comparing the default, logistic and rule extractors by 5-fold cross-validation grouped by journal")
    configs_used = [configs / "default.toml", configs / "logistic.toml", configs / "rules.toml"]
    report = crossval_report([data / "train"], configs_used, output / "crossval", progress=say)
    typer.echo(markdown_summary(report))
    say(f"report: {output / 'crossval' / 'report.html'} (also report.json, summary.md, predictions/)")
    say("\n== 3. training the default extractor on all training journals")
    model = output / "model.itin"
    fit([data / "train"], output=model, config=configs / "default.toml", skip_bad=False, jobs=1)
    say("\n== 4. extracting motion events from the unannotated chapter")
    chapter = data / "unannotated" / "delacott-survey-3.txt"
    extract(model, [chapter], output=output / "chapter.jsonl", table=output / "chapter-events.tsv",
            input_format="text", doc=None, batch_size=256)
    say(f"\nall results are in {output}/")


if __name__ == "__main__":
    app()
