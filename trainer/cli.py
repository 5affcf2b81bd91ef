"""The ``itinerant`` command line: each command declares options and calls the library.

Only the package's own errors are caught: their message is printed and the
command exits with the error's code, with no traceback. Anything else is a bug
and keeps its traceback.
"""

from __future__ import annotations

import functools
import sys
import time
from pathlib import Path
from typing import Annotated, Callable, Optional

import typer

from trainer.errors import ItinerantError

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Train, evaluate and apply extractors of motion events (trigger, mover, source, path, destination) in travel prose.",
)

RolesOption = Annotated[
    Optional[str], typer.Option("--roles", help="Comma-separated role inventory (default: mover,source,path,destination).")
]
ConfigOption = Annotated[Optional[Path], typer.Option("--config", "-c", help="Experiment config (TOML); defaults apply when left out.")]


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
    if lemmas and records:
        from trainer.config import DEFAULT_PIPELINE
        from trainer.parsing.pipeline import load_pipeline, trigger_lemmatizer

        lemmatize = trigger_lemmatizer(load_pipeline(pipeline or DEFAULT_PIPELINE, groups=["lexical"]), records)
    typer.echo("")
    typer.echo(corpus_stats(records, roles=inventory, lemmatize=lemmatize).to_text())
    errors, warnings = len(result.errors), len(result.warnings)
    typer.echo(f"\n{errors} error(s) in {result.bad_records} record(s), {warnings} warning(s)")
    if errors or (strict and warnings):
        raise typer.Exit(1)


@app.command()
@user_errors
def convert(
    source: Annotated[Path, typer.Argument(help="Input file.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="Output file.")],
    from_format: Annotated[str, typer.Option("--from", help="Input format: jsonl, columns, table, isospace, inline.")] = "jsonl",
    to_format: Annotated[str, typer.Option("--to", help="Output format: jsonl, columns, table.")] = "jsonl",
    roles: RolesOption = None,
) -> None:
    """Convert between the canonical JSONL and other formats; everything not carried over is listed."""
    from trainer.corpus.convert import convert_file

    result = convert_file(source, output, from_format=from_format, to_format=to_format, roles=_roles(roles))
    for loss in result.losses:
        typer.echo(f"not carried over: {loss}")
    say(f"{len(result.records)} record(s) written to {output}; {len(result.losses)} loss(es)")
    if result.losses:
        raise typer.Exit(1)


@app.command()
@user_errors
def fit(
    corpus: Annotated[list[Path], typer.Argument(help="Annotated JSONL files or folders.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="Model file to write (a pickle; see docs/models.md).")],
    config: ConfigOption = None,
    skip_bad: Annotated[bool, typer.Option(help="Leave out records with errors (each is listed) instead of refusing the corpus.")] = False,
) -> None:
    """Train an extractor on annotated records and write a model file with its digest."""
    from trainer.config import load_config
    from trainer.corpus.reader import read_corpus, skipped_summary
    from trainer.models.training import fit_extractor, save_extractor

    cfg = load_config(config)
    data = read_corpus(corpus, roles=cfg.roles, skip_bad=skip_bad)
    if data.skipped:
        say(skipped_summary(data))
    annotated = data.annotated()
    say(f"training '{cfg.name}' on {len(annotated)} annotated record(s) from {len(data.docs)} doc(s)")
    started = time.perf_counter()
    trained = fit_extractor(annotated, cfg)
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
    source: Annotated[Path, typer.Argument(help="Plain text (.txt) or canonical JSONL (.jsonl) to extract from.")],
    output: Annotated[Path, typer.Option("--output", "-o", help="Canonical JSONL with predicted events and confidences.")],
    table: Annotated[Optional[Path], typer.Option(help="Also write a flat table of events (.csv or .tsv).")] = None,
    input_format: Annotated[Optional[str], typer.Option("--input-format", help="text or jsonl (default: by extension).")] = None,
    doc: Annotated[Optional[str], typer.Option(help="Document name for plain text (default: the file name).")] = None,
    batch_size: Annotated[int, typer.Option(help="Sentences per batch.")] = 256,
) -> None:
    """Apply a model to a book or a JSONL file; offsets into a plain-text file are kept in each record's meta."""
    from trainer.models.apply import extract_file
    from trainer.models.training import load_extractor

    trained, _ = load_extractor(model)
    fmt = input_format or ("jsonl" if source.suffix == ".jsonl" else "text")
    summary = extract_file(trained, source, output, input_format=fmt, doc_name=doc, batch_size=batch_size)
    say(f"{summary.sentences} sentence(s), {summary.events} event(s), {summary.roles} role(s) written to {output}")
    if table:
        from trainer.corpus.convert import convert_file

        convert_file(output, table, from_format="jsonl", to_format="table", roles=trained.roles)
        say(f"event table written to {table}")


DEMO_DATA = Path(__file__).resolve().parent.parent / "demo_annotations"
DEMO_CONFIGS = Path(__file__).resolve().parent.parent / "configs"


@app.command()
@user_errors
def demo(
    data: Annotated[Path, typer.Option(help="The demo corpus folder.")] = DEMO_DATA,
    configs: Annotated[Path, typer.Option(help="Folder of the ready configs.")] = DEMO_CONFIGS,
    output: Annotated[Path, typer.Option("--output", "-o", help="Where the demo writes its results.")] = Path("runs/demo"),
) -> None:
    """Run the main job on the demo corpus: check, train, extract from the unannotated chapter."""
    say(f"== 1. checking the annotations in {data}")
    check([data / "train", data / "test"], roles=None, lemmas=True, pipeline=None, strict=False)
    say("\n== 2. training the default extractor")
    model = output / "model.itin"
    fit([data / "train"], output=model, config=configs / "default.toml", skip_bad=False)
    say("\n== 3. extracting motion events from the unannotated chapter")
    chapter = data / "unannotated" / "delacott-survey-3.txt"
    extract(model, chapter, output=output / "chapter.jsonl", table=output / "chapter-events.tsv",
            input_format="text", doc=None, batch_size=256)
    say(f"\nresults are in {output}/")


def main() -> None:  # pragma: no cover - console entry point
    app()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
