"""Extraction runs: a model applied to one book (optionally scored against its gold events) or to a whole library."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Sequence

from trainer.config import check_batch_size, check_jobs
from trainer.corpus.convert.table import table_separator
from trainer.errors import ConfigError


@dataclass
class ExtractOptions:
    """How to read the inputs and run: ``jobs`` and ``scheduler`` share the books of a library among workers, or the
    parts of one long book."""

    table: Path | None = None
    input_format: str | None = None
    doc: str | None = None
    batch_size: int = 256
    resume: bool = False
    skip_bad: bool = False
    compare: bool = False
    jobs: int = 1
    scheduler: str | None = None


INPUT_FORMATS = ("text", "jsonl")


def check_options(options: ExtractOptions) -> None:
    """Refuse, before anything is read, options no run can use."""
    if options.input_format is not None and options.input_format not in INPUT_FORMATS:
        raise ConfigError(f"--input-format {options.input_format!r} is not an input format",
                          f"use one of: {', '.join(INPUT_FORMATS)} (or leave it out: by the file's extension)")
    check_batch_size(options.batch_size)
    check_jobs(options.jobs)
    if options.table is not None:
        table_separator(options.table)
    if options.doc is not None and not options.doc.strip():
        raise ConfigError("--doc is empty: every record needs a document name", "name the document, or leave --doc out "
                          "for the file's name")


@dataclass
class ExtractOutcome:
    """One book's summary (``book``) or a library's (``library``), plus the comparison with gold when asked for."""

    output: Path
    book: Any = None  # trainer.models.apply.ExtractionSummary
    library: Any = None  # trainer.models.library.LibrarySummary
    comparison: dict[str, Any] | None = None
    table: Path | None = None
    skipped: list[Any] = field(default_factory=list)


def extract(model: Path | str, sources: Sequence[Path | str], output: Path | str,
            options: ExtractOptions = ExtractOptions(), *,
            on_progress: Callable[[int, float], None] | None = None,
            on_book: Callable[..., None] | None = None) -> ExtractOutcome:
    """Apply a model file to one input file (``output`` a file) or to a library of books (``output`` a folder).

    Several inputs, a folder, or an output folder (existing, or named without
    an extension) make a library run (:func:`trainer.models.library.extract_library`,
    ``on_book`` called per finished book); otherwise one file is extracted
    (:func:`trainer.models.apply.extract_file`, ``on_progress`` called per batch),
    scored against its own events with ``compare``.
    """
    from trainer.models.library import extract_library, names_a_library

    check_options(options)
    model, sources, output = Path(model), [Path(s) for s in sources], Path(output)
    if names_a_library(sources, output):
        if options.doc or options.compare:
            raise ConfigError("--doc and --compare work on one input file, not a library",
                              "extract that book on its own, with -o naming a .jsonl file")
        summary = extract_library(model, sources, output, jobs=options.jobs, scheduler=options.scheduler,
                                  resume=options.resume, batch_size=options.batch_size, skip_bad=options.skip_bad,
                                  input_format=options.input_format, table=options.table, on_book=on_book)
        skipped = [problem for result in summary.results for problem in result.skipped]
        return ExtractOutcome(output, library=summary, table=summary.table, skipped=skipped)
    return _extract_book(model, sources[0], output, options, on_progress)


def _extract_book(model: Path, source: Path, output: Path, options: ExtractOptions,
                  on_progress: Callable[[int, float], None] | None) -> ExtractOutcome:
    from trainer.models.apply import check_source, extract_file
    from trainer.models.book_parts import extract_in_parts, remove_parts, shares_the_book
    from trainer.models.persist import digest_path
    from trainer.models.training import load_extractor
    from trainer.outputs import check_output, output_lock

    fmt = options.input_format or ("jsonl" if source.suffix.lower() == ".jsonl" else "text")
    if options.compare and fmt != "jsonl":
        raise ConfigError("--compare needs JSONL input whose records carry events", "drop --compare for plain text")
    check_source(source)
    inputs = [model, digest_path(model), source]
    check_output(output, inputs=inputs, what="extraction output")
    if options.table:
        check_output(options.table, inputs=[*inputs, output], what="event table")
    trained, _ = load_extractor(model)
    if options.compare:
        from trainer.experiment.score import gold_records

        gold_records(source, roles=trained.roles, skip_bad=options.skip_bad, skippable=True)  # refused before anything is written
    if shares_the_book(output, jobs=options.jobs, scheduler=options.scheduler, resume=options.resume):
        summary = extract_in_parts(model, source, output, input_format=fmt, doc_name=options.doc or source.stem,
                                   jobs=options.jobs, scheduler=options.scheduler, resume=options.resume,
                                   batch_size=options.batch_size, skip_bad=options.skip_bad, on_progress=on_progress)
    else:
        with output_lock(output):
            if not options.resume:
                remove_parts(output)
            summary = extract_file(trained, source, output, input_format=fmt, doc_name=options.doc,
                                   batch_size=options.batch_size, resume=options.resume, skip_bad=options.skip_bad,
                                   on_progress=on_progress)
    comparison = None
    if options.compare:
        from trainer.evaluation.summary import EvaluationSettings
        from trainer.experiment.score import score_report

        # Records skipped above count as missed.
        comparison = score_report(source, output, roles=trained.roles, settings=EvaluationSettings(), allow_missing=True,
                                  skip_bad=options.skip_bad)
    if options.table:
        from trainer.corpus.convert import convert_file

        convert_file(output, options.table, from_format="jsonl", to_format="table", roles=trained.roles)
    return ExtractOutcome(output, book=summary, comparison=comparison, table=options.table,
                          skipped=list(summary.skipped))
