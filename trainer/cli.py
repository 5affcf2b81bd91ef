"""The ``itinerant`` command line: each command declares options and calls the library.

Only the package's own errors are caught: their message is printed and the
command exits with the error's code, with no traceback. Ctrl+C and SIGTERM
stop a command cleanly (exit 130 and 143). Anything else is a bug and keeps
its traceback.
"""

from __future__ import annotations

import functools
import signal
import sys
import threading
import time
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Callable, Iterator, Optional, Sequence, get_args, get_origin

import typer
import typer.core

from trainer.config import DEFAULT_BOOTSTRAP_SAMPLES, DEFAULT_MODE, DEFAULT_SEED, DEFAULT_TRIALS, READY_CONFIGS
from trainer.errors import ItinerantError

if TYPE_CHECKING:  # for annotations only: the command imports it when it runs
    from trainer.experiment.fitting import FitOutcome

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
ConfigOption = Annotated[Optional[Path], typer.Option("--config", "-c", help="Experiment config (TOML); left out: configs/default.toml, the recommended extractor.")]
AuxOption = Annotated[list[str], typer.Option(
    "--aux", metavar="CORPUS",
    help="Auxiliary corpus (JSONL file or folder, or packaged:demo) added to every training set and never scored; repeat for several.")]
AugmentOption = Annotated[Optional[bool], typer.Option(
    "--augment/--no-augment", help="Feature augmentation by corpus when training with auxiliary corpora (default: the config's).")]


def say(message: str = "") -> None:
    """Progress and summaries go to stderr so stdout stays clean for data."""
    typer.echo(message, err=True)


INTERRUPTED = 130  # the shell's exit status for a run stopped by Ctrl+C (128 + SIGINT)
TERMINATED = 143  # and by SIGTERM (128 + SIGTERM)
# Commands that can go on from where an interrupted run stopped, and how.
RESUMABLE = {"extract": "; run the same command with --resume to go on from where it stopped"}


SIGTERM_RECEIVED = "SIGTERM"  # the argument of the KeyboardInterrupt that SIGTERM raises while a command runs


def _terminate(signum: int, frame: object) -> None:
    # a KeyboardInterrupt, so every clean-up that Ctrl+C runs (workers stopped, partial outputs whole or removed)
    # runs for SIGTERM too
    raise KeyboardInterrupt(SIGTERM_RECEIVED)


@contextmanager
def sigterm_as_interrupt() -> Iterator[None]:
    """While a command runs, SIGTERM stops it as Ctrl+C does (workers stopped, no torn file) instead of killing
    this process alone, which would leave its worker processes running. An inherited ignored SIGTERM stays
    ignored, as Python keeps an ignored SIGINT; off the main thread (where no handler can be set) nothing changes."""
    if threading.current_thread() is not threading.main_thread() or signal.getsignal(signal.SIGTERM) != signal.SIG_DFL:
        yield
        return
    previous = signal.signal(signal.SIGTERM, _terminate)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def user_errors(command: Callable) -> Callable:
    """Turn the package's errors into a message and an exit code, and Ctrl+C or SIGTERM into a clean stop."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        try:
            with sigterm_as_interrupt():
                return command(*args, **kwargs)
        except ItinerantError as exc:
            typer.echo(f"error: {exc}", err=True)
            raise typer.Exit(exc.exit_code) from None
        except KeyboardInterrupt as exc:
            resume = RESUMABLE.get(command.__name__, "")
            terminated = exc.args == (SIGTERM_RECEIVED,)
            how = "terminated (SIGTERM)" if terminated else "interrupted"
            typer.echo(f"{how}: outputs are written whole or not at all, so no file is torn{resume}", err=True)
            raise typer.Exit(TERMINATED if terminated else INTERRUPTED) from None

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


def _roles(value: str | None) -> tuple[str, ...]:
    from trainer.corpus.records import DEFAULT_ROLES
    from trainer.errors import ConfigError
    from trainer.evaluation.scoring import check_roles

    if value is None:
        return DEFAULT_ROLES
    try:
        return check_roles([r.strip() for r in value.split(",") if r.strip()])
    except ConfigError as exc:
        raise ConfigError(f"--roles {value!r}: {exc.cause}", "name each role once, comma-separated, e.g. "
                          "--roles mover,destination (trigger, micro, macro and unlinked: are score names)") from None


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
    from trainer.experiment.checking import check_annotations

    outcome = check_annotations(files, _roles(roles), lemmas=lemmas, pipeline=pipeline)
    for problem in outcome.problems:
        typer.echo(str(problem))
    typer.echo(f"\n{outcome.statistics}")
    typer.echo(f"\n{outcome.errors} error(s) in {outcome.bad_records} record(s), {outcome.warnings} warning(s)")
    if outcome.failed(strict=strict):
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

    Exit codes: 0 written (listed losses included); 1 bad records in the input (each located), or losses with
    --fail-on-loss; 2 unusable input (missing, not UTF-8, not parseable as its format) or output.
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
    calibration: Annotated[Optional[str], typer.Option(help="Calibrate confidences on inner folds of the training docs: isotonic, platt or none (default: the config's [confidence]).")] = None,
    thresholds: Annotated[Optional[str], typer.Option(help="Choose decision thresholds on inner folds: f1, precision (see --target-precision) or none (default: the config's).")] = None,
    target_precision: Annotated[Optional[float], typer.Option(help="With --thresholds precision: the held-out precision each label's threshold must reach.")] = None,
) -> None:
    """Train an extractor on annotated records and write a model file with its digest.

    The model file is checked to be writable (and not an input) before training starts.
    """
    from trainer.experiment.fitting import fit_model
    from trainer.experiment.settings import Overrides, resolve_settings

    overrides = Overrides(auxiliary=tuple(aux), augment=augment, calibration=calibration, thresholds=thresholds,
                          target_precision=target_precision)
    settings = resolve_settings([config] if config else [], overrides)
    outcome = fit_model(corpus, output, settings, skip_bad=skip_bad, jobs=jobs, progress=say)
    for used in outcome.auxiliary:
        say(_auxiliary_line(used, augmented=outcome.augmented))
    for line in _training_notes(outcome):
        say(line)
    if outcome.held_out:
        thresholds = ", ".join(f"{label} {value:.3f}" for label, value in outcome.thresholds.items()) or "none"
        say(f"confidence: {', '.join(outcome.calibrated) or 'no label'} calibrated; thresholds: {thresholds}; "
            f"learned from held-out predictions on inner folds ("
            + ", ".join(f"{label} {count}" for label, count in outcome.held_out.items()) + ")")
    if outcome.unreached:
        say(f"warning: no threshold reached the target precision for {', '.join(outcome.unreached)} on held-out "
            "predictions; their threshold gives the best precision found")
    meta = outcome.metadata
    say(f"model written to {output} ({output.stat().st_size} bytes, {meta['training_seconds']} s); "
        f"digest in {output}.sha256")
    if outcome.skipped:
        raise typer.Exit(1)


def _training_notes(outcome: FitOutcome) -> list[str]:
    """What training did to the gold spans, and the trigger threshold it chose with its inner-fold F1."""
    notes = []
    if outcome.widened or outcome.dropped:
        notes.append(f"alignment: {outcome.widened} span(s) widened to token boundaries, {outcome.dropped} dropped")
    if outcome.departures:
        notes.append(f"annotation conventions differ from the auxiliary corpora's ({'; '.join(outcome.departures)}), "
                     f"so the features of the {_stages(outcome.augmented)} were augmented by corpus ([auxiliary] "
                     "augment_if_conventions_differ; docs/real-prose.md)"
                     + ("; they differ only in where spans start and end: if you score by overlap alone, "
                        "--no-augment may score higher by overlap" if outcome.boundaries_only else ""))
    if outcome.trigger_threshold is not None:
        notes.append(f"trigger threshold {outcome.trigger_threshold:.2f}, chosen on inner folds of the training docs; "
                     f"trigger F1 on their held-out docs {outcome.trigger_threshold_f1:.3f} (exact token ranges; an "
                     "early estimate: `itinerant crossval` measures it properly)")
    return notes


def _stages(stages: Sequence[str]) -> str:
    """``("triggers", "roles")`` as ``trigger and role stages``, ``("roles",)`` as ``role stage``."""
    return f"{' and '.join(s.removesuffix('s') for s in stages)} stage{'s' if len(stages) > 1 else ''}"


def _auxiliary_line(used: dict, *, augmented: list[str]) -> str:
    """What one auxiliary corpus brought to a training run (its entry in the model's metadata)."""
    outside = ", ".join(f"{role} {count}" for role, count in used["role_spans_left_out"].items())
    return (f"auxiliary corpus '{used['name']}' ({used['source']}): {used['records']} record(s) joined training, "
            f"{used['left_out_shared_with_target']} left out (doc or id shared with the training corpus)"
            + (f"; role spans outside the inventory left out: {outside}" if outside else "")
            + (f"; features augmented by corpus for the {_stages(augmented)}" if augmented else
               "; not augmented (if your annotation departs from its conventions, --augment lets yours win: "
               "docs/real-prose.md)"))


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
    resume: Annotated[bool, typer.Option(help="Continue an interrupted run from OUTPUT.partial (or OUTPUT, or the parts in OUTPUT.parts/ of a shared run) after checking the input is the same; for a library, skip finished books and continue torn ones.")] = False,
    skip_bad: Annotated[bool, typer.Option(help="JSONL input: leave out records with errors (listed).")] = False,
    progress: Annotated[Optional[bool], typer.Option(help="Show a progress bar (default: when stderr is a terminal).")] = None,
    compare: Annotated[bool, typer.Option(help="JSONL input with events: score the predictions against them.")] = False,
    jobs: Annotated[int, typer.Option("--jobs", "-j", help="Local worker processes: books of a library extracted at once, or parts of one long book (the output is the same).")] = 1,
    scheduler: Annotated[Optional[str], typer.Option(help="Dask scheduler address (e.g. tcp://host:8786): one task per book of a library, or per part of one book, on that cluster, whose workers must see the same paths.")] = None,
) -> None:
    """Apply a model to a book, a JSONL file or a whole library; offsets into a plain-text file are kept in each record's meta.

    Several inputs, a folder, or an output folder (existing, or named without an extension) make a library run.

    A library run writes one output per book; a book that fails is reported and the others go on.

    With --jobs or --scheduler, one book is cut into parts of whole paragraphs that the workers share; the output is the file a run in one process writes.

    Exit codes: 0 all written, 1 some books failed, 2 unusable input or output.
    """
    from trainer.experiment.extraction import ExtractOptions, extract as extract_run
    from trainer.models.library import names_a_library

    options = ExtractOptions(table=table, input_format=input_format, doc=doc, batch_size=batch_size, resume=resume,
                             skip_bad=skip_bad, compare=compare, jobs=jobs, scheduler=scheduler)
    show = sys.stderr.isatty() if progress is None else progress
    library = names_a_library(sources, output)
    with progress_bar(f"extracting {sources[0].name}", enabled=show and not library) as update, \
            library_progress(enabled=show and library) as on_book:
        outcome = extract_run(model, sources, output, options, on_progress=update, on_book=on_book)
    for problem in outcome.skipped:
        say(f"skipped {problem}")
    if outcome.library is not None:
        _library_summary(outcome.library, output)
    else:
        _book_summary(outcome.book, sources[0], output)
    if outcome.comparison is not None:
        from trainer.reports.markdown import score_markdown

        typer.echo(score_markdown(outcome.comparison))
    if outcome.table:
        say(f"event table{' of every book' if outcome.library else ''} written to {outcome.table}")
    if outcome.library is not None and outcome.library.failed:
        raise typer.Exit(1)


@contextmanager
def library_progress(*, enabled: bool):
    """Report each finished book: a bar of books done, words per second and time left, or a line per failure."""
    from trainer.models.library import FAILED

    if not enabled:
        yield lambda result, progress: say(f"failed: {result.error}") if result.status == FAILED else None
        return
    from rich.console import Console
    from rich.progress import BarColumn, Progress, ProgressColumn, TextColumn, TimeElapsedColumn
    from rich.text import Text

    class TimeLeft(ProgressColumn):
        """A countdown to the estimated end, unknown (-:--:--) before the first book and once it has run out."""

        def render(self, task) -> Text:
            if task.finished:
                return Text("left 00:00:00")
            finish = task.fields["finish"]
            left = None if finish is None else finish - time.perf_counter()
            return Text("left -:--:--" if left is None or left <= 0 else time.strftime("left %H:%M:%S", time.gmtime(left)))

    columns = (TextColumn("extracting"), BarColumn(), TextColumn("{task.completed:.0f}/{task.fields[books]} books"),
               TextColumn("{task.fields[rate]:,.0f} words/s"), TimeElapsedColumn(), TimeLeft())
    started, words = time.perf_counter(), [0]
    with Progress(*columns, console=Console(stderr=True)) as bar:
        task = bar.add_task("books", total=None, books="?", rate=0.0, finish=None)

        def update(result, progress) -> None:
            now = time.perf_counter()
            words[0] += result.words
            left = progress.seconds_left(now - started)
            bar.update(task, completed=progress.done, total=progress.books, books=progress.books,
                       rate=words[0] / max(now - started, 1e-9), finish=None if left is None else now + left)
            if result.status == FAILED:
                bar.console.print(f"failed: {result.error}", markup=False, highlight=False, soft_wrap=True)

        yield update


def _book_summary(book, source: Path, output: Path) -> None:
    resumed = f" (after {book.resumed} kept from the earlier run)" if book.resumed else ""
    say(f"{book.sentences} sentence(s){resumed}, {book.events} event(s), {book.roles} role(s) written to {output}")
    if not book.sentences and not book.skipped:
        _empty_book(source, output)


def _empty_book(source: Path, output: Path) -> None:
    """Warn that a book gave an empty output (one book or one of a library)."""
    say(f"warning: {source} holds no sentences (empty or blank lines only), so {output} is empty")


def _library_summary(summary, folder: Path) -> None:
    """What a library run did: books extracted, skipped and failed, and its throughput."""
    from trainer.models.library import DONE, SKIPPED

    done = [r for r in summary.results if r.status == DONE]
    words = sum(r.words for r in done)
    say(f"{len(done)} book(s) extracted, {summary.count(SKIPPED)} already done, {len(summary.failed)} failed; "
        f"{sum(r.sentences for r in done)} sentence(s), {sum(r.events for r in done)} event(s), "
        f"{words} word(s) in {summary.seconds:.1f} s ({words / max(summary.seconds, 1e-9):,.0f} words/s); written to {folder}/")
    for result in done:
        if not result.sentences and not result.resumed and not result.skipped:
            _empty_book(result.book.source, result.book.target)


FoldsOption = Annotated[Optional[int], typer.Option("--folds", "-k", help="Number of grouped folds (default: the config's).")]
SeedOption = Annotated[Optional[int], typer.Option(help="Seed for folds, bootstrap and tests (default: the config's).")]
ModeOption = Annotated[Optional[str], typer.Option(help="Scoring mode: exact or overlap (default: the config's).")]


def _test_docs(value: str | None) -> tuple[str, ...]:
    return tuple(d.strip() for d in value.split(",") if d.strip()) if value else ()


def _shares(value: str) -> list[float]:
    from trainer.errors import ConfigError

    try:
        return [float(x) for x in value.split(",") if x.strip()]
    except ValueError:
        raise ConfigError(f"--shares {value!r} is not a list of numbers", "e.g. --shares 0.25,0.5,0.75,1") from None


@app.command()
@user_errors
def crossval(
    corpus: Annotated[list[Path], typer.Argument(help="Annotated JSONL files or folders.")],
    config: Annotated[list[Path], typer.Option("--config", "-c", help="A config to compare; repeat for several (none: configs/default.toml).")] = [],
    output: Annotated[Path, typer.Option("--output", "-o", help="Report folder.")] = Path("runs/crossval"),
    folds: FoldsOption = None,
    repeats: Annotated[Optional[int], typer.Option(help="Repeat the K folds with other shuffles.")] = None,
    leave_one_doc_out: Annotated[bool, typer.Option("--leave-one-doc-out", help="One fold per doc.")] = False,
    leave_one_book_out: Annotated[bool, typer.Option("--leave-one-book-out", help="One fold per book, a doc name without its trailing chapter number (<book>-3, <book>_ch03): domain shift.")] = False,
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
    from trainer.experiment.crossval import crossval_experiment
    from trainer.experiment.settings import Overrides, resolve_settings
    from trainer.reports.markdown import markdown_summary

    overrides = Overrides(folds=folds, repeats=repeats, seed=seed, mode=mode, bootstrap_samples=bootstrap,
                          leave_one_doc_out=leave_one_doc_out, leave_one_book_out=leave_one_book_out,
                          test_docs=_test_docs(test_docs), auxiliary=tuple(aux), augment=augment)
    report = crossval_experiment(corpus, resolve_settings(config, overrides), output, test_paths=test, jobs=jobs,
                                 scheduler=scheduler, curve_shares=_shares(shares) if shares else (),
                                 skip_bad=skip_bad, progress=say)
    typer.echo(markdown_summary(report))
    say(f"report written to {output}/ (report.json, summary.md, report.html, predictions/)")


@app.command()
@user_errors
def curve(
    corpus: Annotated[list[Path], typer.Argument(help="Annotated JSONL files or folders.")],
    config: Annotated[list[Path], typer.Option("--config", "-c", help="A config; repeat for several (none: configs/default.toml).")] = [],
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
    from trainer.experiment.crossval import crossval_experiment
    from trainer.experiment.settings import Overrides, resolve_settings
    from trainer.reports.markdown import markdown_summary

    overrides = Overrides(folds=folds, seed=seed, mode=mode, auxiliary=tuple(aux), augment=augment)
    report = crossval_experiment(corpus, resolve_settings(config, overrides), output, jobs=jobs, scheduler=scheduler,
                                 curve_shares=_shares(shares), progress=say)
    typer.echo(markdown_summary(report))
    say(f"report with learning curve written to {output}/")


@app.command()
@user_errors
def score(
    gold: Annotated[Path, typer.Argument(help="Gold annotations (canonical JSONL).")],
    predictions: Annotated[Path, typer.Argument(help="Any system's predictions in the canonical JSONL format.")],
    mode: Annotated[str, typer.Option(help="exact or overlap.")] = DEFAULT_MODE,
    roles: Annotated[Optional[str], typer.Option("--roles", help="Score only these roles, comma-separated; spans of other roles are left out of both files and counted (default: mover,source,path,destination, and another role is an error).")] = None,
    seed: Annotated[int, typer.Option(help="Bootstrap seed.")] = DEFAULT_SEED,
    bootstrap: Annotated[int, typer.Option(help="Bootstrap samples per interval.")] = DEFAULT_BOOTSTRAP_SAMPLES,
    output: Annotated[Optional[Path], typer.Option("--output", "-o", help="Also write score.json into this folder.")] = None,
    allow_missing: Annotated[bool, typer.Option(
        help="Score gold records that have no prediction as missed (listed in the report) instead of stopping.")] = False,
) -> None:
    """Score predictions from any extractor against gold with itinerant's scorer."""
    from trainer.experiment.score import score_report
    from trainer.experiment.settings import Overrides, scoring_settings
    from trainer.reports.markdown import score_markdown

    settings = scoring_settings(Overrides(mode=mode, seed=seed, bootstrap_samples=bootstrap))
    report = score_report(gold, predictions, roles=_roles(roles), settings=settings, folder=output,
                          allow_missing=allow_missing, subset=roles is not None)
    for side, counts in report["left_out_roles"].items():
        if counts:
            say(f"left out of the {side} (not in --roles): " + ", ".join(f"{n} {r}" for r, n in counts.items()))
    typer.echo(score_markdown(report))


@app.command()
@user_errors
def contrast(
    run_a: Annotated[Path, typer.Argument(help="A report folder written by `itinerant crossval`.")],
    run_b: Annotated[Path, typer.Argument(help="Another report folder on the same corpus and folds.")],
    system_a: Annotated[Optional[str], typer.Option(help="Config name in run A (default: its first).")] = None,
    system_b: Annotated[Optional[str], typer.Option(help="Config name in run B (default: its first).")] = None,
    trials: Annotated[int, typer.Option(help="Randomization trials.")] = DEFAULT_TRIALS,
    seed: Annotated[int, typer.Option(help="Seed of the randomization.")] = DEFAULT_SEED,
) -> None:
    """Paired significance test (approximate randomization by document) between two saved runs."""
    from trainer.experiment.score import contrast_runs

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
    tolerance: Annotated[Optional[float], typer.Option(help="Allowed F1 drop (0 to 1) for every score, over the config's per-score tolerances.")] = None,
    role_tolerance: Annotated[list[str], typer.Option(help="Per-score tolerance, e.g. mover=0.03 (a score of the report); repeatable.")] = [],
    junit: Annotated[Optional[Path], typer.Option(help="Also write JUnit XML, one test case per score.")] = None,
    allow_mismatch: Annotated[bool, typer.Option(help="Compare even if corpus, roles, mode or folds differ.")] = False,
    accept: Annotated[bool, typer.Option("--accept", help="Record this report as the new baseline instead of gating.")] = False,
) -> None:
    """Fail (exit 1) when extraction quality fell below the baseline; exit 2 when the inputs cannot be compared."""
    from trainer.experiment.gating import GateRequest, run_gate
    from trainer.gate.compare import markdown_table

    outcome = run_gate(GateRequest(report, baseline, config=config, system=system, rule=rule, tolerance=tolerance,
                                   role_tolerances=tuple(role_tolerance), junit=junit, allow_mismatch=allow_mismatch,
                                   accept=accept))
    if outcome.accepted is not None:
        typer.echo(f"baseline for config '{outcome.accepted['system']}' written to {baseline}")
        return
    typer.echo(markdown_table(outcome.result))
    if not outcome.passed:
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
    min_confidence: Annotated[Optional[float], typer.Option(
        metavar="P", help="Extracted records: leave out events and role spans whose confidence is below P (0 to 1).")] = None,
) -> None:
    """Turn events into an ordered itinerary per doc, and optionally a GeoJSON map of the route."""
    from trainer.experiment.itineraries import itinerary_files

    wanted = [m.strip() for m in movers.split(",") if m.strip()] if movers else None
    outcome = itinerary_files(records, output, movers=wanted, carry_mover=carry_mover, gazetteer=gazetteer,
                              geojson=geojson, skip_bad=skip_bad, min_confidence=min_confidence)
    if outcome.skipped_note:
        say(outcome.skipped_note)
    route, mapped = outcome.itinerary, outcome.mapped
    say(f"{len(route.rows)} event(s) in {len(route.docs)} doc(s) written to {output}"
        + (f"; {route.left_out} left out by the mover filter" if route.left_out else ""))
    if route.min_confidence is not None:
        say(f"confidence floor {route.min_confidence:g}: {route.below_floor} event(s) and "
            f"{route.roles_below_floor} role span(s) of kept events left out"
            if route.with_confidence else
            f"note: no event carries a confidence (gold annotations?): the floor {route.min_confidence:g} left out nothing")
    if mapped is not None:
        for note in mapped.notes:
            say(f"note: {note}")
        say(f"GeoJSON written to {geojson}; {mapped.resolved_mentions} place mention(s) resolved, "
            f"{len(mapped.unresolved)} name(s) unresolved" + (f": {', '.join(mapped.unresolved)}" if mapped.unresolved else ""))
    if outcome.skipped:
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
    from trainer.experiment.suggesting import suggest_to_file

    outcome = suggest_to_file(model, unlabeled, output, count=n, measure=measure, diversity=diversity)
    say(f"{outcome.suggested} of {outcome.candidates} unannotated record(s) suggested, pre-annotated, written to {output}")
    if outcome.suggested < min(outcome.asked, outcome.candidates):
        from trainer.annotation.suggest import NEAR_DUPLICATE_JACCARD

        say(f"note: {outcome.asked} asked for; the others are near duplicates of records already chosen (the same "
            f"words, or at least {NEAR_DUPLICATE_JACCARD:.0%} of their words shared), which a batch never holds twice")


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


@app.command()
@user_errors
def demo(
    data: Annotated[Path, typer.Option(help="The demo corpus folder.")] = DEMO_DATA,
    configs: Annotated[Path, typer.Option(help="Folder of the ready configs.")] = READY_CONFIGS,
    output: Annotated[Path, typer.Option("--output", "-o", help="Where the demo writes its results.")] = Path("runs/demo"),
) -> None:
    """Run the main job on the demo corpus: check, compare extractors by cross-validation, train, extract."""
    from trainer.experiment.crossval import crossval_experiment
    from trainer.experiment.settings import resolve_settings
    from trainer.reports.markdown import markdown_summary

    say(f"== 1. checking the annotations in {data}")
    check([data / "train", data / "test"], roles=None, lemmas=True, pipeline=None, strict=False)
    say("\n== 2. comparing the default, logistic and rule extractors by 5-fold cross-validation grouped by journal")
    configs_used = [configs / "default.toml", configs / "logistic.toml", configs / "rules.toml"]
    report = crossval_experiment([data / "train"], resolve_settings(configs_used), output / "crossval", progress=say)
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
