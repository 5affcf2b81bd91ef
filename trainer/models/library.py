"""Extraction over a library: many books (plain text and JSONL, files and folders) into one folder.

Each book is extracted by :func:`trainer.models.apply.extract_file` into
``<folder>/<book>.jsonl``, exactly as a run on that one file would write it,
so the files do not depend on how the books were shared out: one after the
other here, over local worker processes (``jobs``), or as one task per book on
a Dask cluster (``scheduler``; the workers must see the same paths, e.g. on a
shared disk). When workers share the library, a long book is cut into parts,
one task each, joined when the last is done (:mod:`trainer.models.book_parts`).
Each worker loads the model file itself, checked against its digest, once per process.

A book that cannot be extracted (unreadable, not UTF-8, bad records) is
reported with its error and counted; the others go on. With ``resume``, a
book whose output is complete and was made from the same input (its
``.input`` side file) is skipped, a torn one is continued from its partial
file, and the rest are extracted.
"""

from __future__ import annotations

import json
import os
import signal
import time
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from multiprocessing import get_context
from pathlib import Path
from typing import Any, Callable, Iterator, Sequence

from trainer.config import check_batch_size, check_jobs
from trainer.errors import ConfigError, ItinerantError, ModelFileError, OutputError, UnreadableInputError
from trainer.outputs import check_output, output_lock

BOOK_SUFFIXES = {".txt": "text", ".jsonl": "jsonl"}
DONE, SKIPPED, FAILED = "extracted", "already done", "failed"


@dataclass(frozen=True)
class Part:
    """A range of a book: plain-text paragraphs whose character offset is in ``[first, end)``, or JSONL records
    whose number (from 1) is; ``end`` None runs to the end of the input."""

    first: int
    end: int | None = None

    def __str__(self) -> str:
        return f"{self.first}-{'' if self.end is None else self.end}"


WHOLE = Part(0)


@dataclass(frozen=True)
class Book:
    """One input file (or one part of it) and where its records go; ``doc`` names its documents (default: the file's
    stem)."""

    source: Path
    target: Path
    input_format: str
    doc: str | None = None
    part: Part = WHOLE

    @property
    def doc_name(self) -> str:
        return self.doc or self.source.stem


@dataclass
class BookResult:
    """What happened to one book (``words``: words of the sentences written by this run)."""

    book: Book
    status: str
    sentences: int = 0
    events: int = 0
    roles: int = 0
    words: int = 0
    resumed: int = 0
    skipped: list[str] = field(default_factory=list)
    error: str | None = None


@dataclass
class LibrarySummary:
    """Every book's result, in book order, and the combined table if one was written."""

    results: list[BookResult]
    table: Path | None = None
    seconds: float = 0.0

    @property
    def failed(self) -> list[BookResult]:
        return [r for r in self.results if r.status == FAILED]

    def count(self, status: str) -> int:
        return sum(r.status == status for r in self.results)


@dataclass
class LibraryProgress:
    """How far a library run has come, in books and in bytes of input, from which the time left is estimated."""

    books: int
    size: int
    done: int = 0
    size_done: int = 0
    size_worked: int = 0  # bytes of the books this run extracted (not those found finished, nor failed ones)

    def add(self, result: BookResult, size: int) -> None:
        """Count one finished book of ``size`` bytes."""
        self.done += 1
        self.size_done += size
        if result.status == DONE:
            self.size_worked += size

    def seconds_left(self, elapsed: float) -> float | None:
        """Seconds until the last book is done at the rate (bytes per second) of the books extracted so far.

        None before the first book is extracted. The rate counts only finished
        books, so while several run at once it is low and the estimate long.
        """
        if not self.size_worked:
            return None
        return elapsed * (self.size - self.size_done) / self.size_worked


BookDone = Callable[[BookResult, LibraryProgress], None]  # a finished book, and the run's progress after it


def names_a_library(inputs: Sequence[Path], output: Path) -> bool:
    """Whether an ``extract`` call is a library run: several inputs, a folder in or out, or an output without extension.

    One input file with an output file name (``out.jsonl``) is a single extraction into that file.
    """
    single = len(inputs) == 1 and not Path(inputs[0]).is_dir()
    return not single or output.is_dir() or (not output.exists() and not output.suffix)


def find_books(inputs: Sequence[Path], folder: Path, *, input_format: str | None = None) -> list[Book]:
    """The books named by files and folders (folders searched for .txt and .jsonl files), in path order.

    Outputs are named after the books (``<stem>.jsonl`` in ``folder``); two books with one name are refused.
    """
    sources: list[Path] = []
    for path in map(Path, inputs):
        if path.is_dir():
            sources.extend(sorted(p for p in path.rglob("*") if p.is_file() and p.suffix.lower() in BOOK_SUFFIXES
                                  and not p.name.startswith(".")))
        elif path.is_file():
            sources.append(path)
        else:
            raise UnreadableInputError(f"{path}: no such file or folder", "check the input paths")
    if not sources:
        raise UnreadableInputError(f"no .txt or .jsonl books in {', '.join(map(str, inputs))}",
                                   "name book files or folders holding them")
    books: dict[str, Book] = {}
    for source in sources:
        fmt = input_format or BOOK_SUFFIXES.get(source.suffix.lower(), "text")
        book = Book(source, folder / f"{source.stem}.jsonl", fmt)
        if book.target.name in books and not _same(books[book.target.name].source, source):
            raise ConfigError(f"{books[book.target.name].source} and {source} would both be written to {book.target}",
                              "rename one of the books, or extract them into different folders")
        books.setdefault(book.target.name, book)
    return list(books.values())


def book_size(source: Path) -> int:
    """A book's size in bytes (0 if it cannot be read; its extraction then reports why)."""
    try:
        return source.stat().st_size
    except OSError:
        return 0


def _same(a: Path, b: Path) -> bool:
    return a.resolve() == b.resolve()


_LOADED: dict[tuple[str, str], Any] = {}  # model file and digest -> (trained extractor, parser), one per process


def _model(model_path: str) -> tuple[Any, Any]:
    from trainer.models.persist import digest_path
    from trainer.models.training import load_extractor, parser_for

    key = (model_path, digest_path(Path(model_path)).read_text(encoding="ascii").split()[0])
    if key not in _LOADED:
        trained, _ = load_extractor(model_path)
        _LOADED.clear()
        _LOADED[key] = (trained, parser_for(trained.config))
    return _LOADED[key]


def _written_words(target: Path, skip: int) -> int:
    """Words of the sentences in an output after its first ``skip`` records (those this run wrote)."""
    with open(target, encoding="utf-8") as handle:
        return sum(len(json.loads(line)["text"].split()) for number, line in enumerate(handle) if number >= skip)


def finished(book: Book) -> bool:
    """Whether the book's output is complete and was made from this very input (its side file says so)."""
    from trainer.models.apply import input_note, input_note_path

    try:
        recorded = json.loads(input_note_path(book.target).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return book.target.is_file() and recorded == input_note(book.source, book.input_format, book.doc_name, book.part)


def extract_part(model_path: str, book: Book, *, resume: bool = False, batch_size: int = 256,
                 skip_bad: bool = False) -> BookResult:
    """Extract one book, or the part of one that ``book.part`` names; errors are raised."""
    from trainer.models.apply import extract_file

    if resume and finished(book):
        return BookResult(book, SKIPPED)
    with open(book.source, "rb") as handle:
        handle.read(1)
    trained, nlp = _model(model_path)
    summary = extract_file(trained, book.source, book.target, input_format=book.input_format,
                           doc_name=book.doc_name, batch_size=batch_size, nlp=nlp, skip_bad=skip_bad,
                           resume=resume, part=book.part)
    return BookResult(book, DONE, sentences=summary.sentences, events=summary.events, roles=summary.roles,
                      words=_written_words(book.target, summary.resumed), resumed=summary.resumed,
                      skipped=list(summary.skipped))


def extract_book(model_path: str, book: Book, *, resume: bool = False, batch_size: int = 256,
                 skip_bad: bool = False) -> BookResult:
    """Extract one book; its errors come back in the result, never raised (a library goes on without it)."""
    try:
        return extract_part(model_path, book, resume=resume, batch_size=batch_size, skip_bad=skip_bad)
    except ItinerantError as exc:
        return BookResult(book, FAILED, error=str(exc))
    except OSError as exc:
        return BookResult(book, FAILED, error=f"{book.source}: cannot be read ({exc.strerror or exc})")


Task = Callable[..., BookResult]  # extract_book or extract_part: (model path, book, **options)


def _serial(task: Task, model_path: str, books: Sequence[Book], options: dict[str, Any]) -> Iterator[BookResult]:
    try:
        for book in books:
            yield task(model_path, book, **options)
    finally:
        _LOADED.clear()  # the caller's process keeps neither the model nor the parser after the run


# Native thread pools a worker must keep to one thread (OpenMP: the trigger stage's trees; BLAS: NumPy).
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def single_threaded() -> None:
    """Make this worker process use one thread for native code, as Dask's nannies make theirs.

    Each worker extracts one book at a time; left alone, scikit-learn's OpenMP
    code would start a thread per core in every worker, and N workers on N
    cores would contend for them (measured: ``--jobs 2`` took 31.2 s against
    33.8 s for ``--jobs 1``, with 61.5 s of CPU against 34.8 s). The
    variables cover libraries loaded later; ``threadpoolctl`` those loaded already.
    """
    from threadpoolctl import threadpool_limits

    os.environ.update({name: "1" for name in THREAD_VARIABLES})
    threadpool_limits(limits=1)


def _worker_start() -> None:
    """A local worker: one thread for native code, and Ctrl+C left to the parent, which stops the workers itself
    (a worker of its own would print a traceback of the interruption)."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    single_threaded()


LOST_WORKER = ("the worker process extracting it ended abruptly (killed, or out of memory?); its partial output "
               "is kept: rerun with --resume to finish it")


def _processes(task: Task, model_path: str, books: Sequence[Book], options: dict[str, Any],
               jobs: int) -> Iterator[BookResult]:
    """Books extracted in ``jobs`` local worker processes; a worker that dies fails the books it had, not the run."""
    # spawn, not fork: the parent may run a progress thread, and each worker loads its own parser anyway
    pool = ProcessPoolExecutor(max_workers=jobs, mp_context=get_context("spawn"), initializer=_worker_start)
    try:
        pending = {pool.submit(task, model_path, book, **options): book for book in books}
        while pending:
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for future in done:
                book = pending.pop(future)
                try:
                    yield future.result()
                except BrokenProcessPool:
                    yield BookResult(book, FAILED, error=f"{book.source}: {LOST_WORKER}")
    except BaseException:  # Ctrl+C or a closed generator: stop the workers now, not after their books
        for process in list((getattr(pool, "_processes", None) or {}).values()):  # no public way before Python 3.14
            process.terminate()
        pool.shutdown(wait=True, cancel_futures=True)
        raise
    pool.shutdown(wait=True)


def _cluster(task: Task, model_path: str, books: Sequence[Book], options: dict[str, Any],
             scheduler: str) -> Iterator[BookResult]:
    try:
        from dask.distributed import Client, as_completed
    except ImportError:
        raise ConfigError("a Dask scheduler was given but dask.distributed is not installed",
                          "install it with `pip install 'itinerant[cluster]'`") from None
    try:
        client = Client(scheduler, timeout="20s")
    except (OSError, TimeoutError) as exc:
        raise ConfigError(f"no Dask scheduler answers at {scheduler} ({exc})",
                          "start one (`dask scheduler` and `dask worker ADDRESS`) or check the address") from None
    with client:
        futures = [client.submit(task, model_path, book, pure=False, **options) for book in books]
        for future in as_completed(futures):
            yield future.result()


def run_books(task: Task, model_path: str, books: Sequence[Book], options: dict[str, Any], *, jobs: int = 1,
              scheduler: str | None = None) -> Iterator[BookResult]:
    """``task(model_path, book, **options)`` for every book, results in the order they finish: on the Dask cluster
    at ``scheduler``, in ``jobs`` local worker processes, or one after the other in this process."""
    if scheduler:
        return _cluster(task, model_path, books, options, scheduler)
    if jobs > 1 and len(books) > 1:
        return _processes(task, model_path, books, options, jobs)
    return _serial(task, model_path, books, options)


def extract_library(
    model_path: Path | str, inputs: Sequence[Path], folder: Path, *, jobs: int = 1, scheduler: str | None = None,
    resume: bool = False, batch_size: int = 256, skip_bad: bool = False, input_format: str | None = None,
    table: Path | None = None, on_book: BookDone | None = None,
) -> LibrarySummary:
    """Extract every book of ``inputs`` into ``folder`` (one ``<book>.jsonl`` each), optionally in parallel.

    ``jobs`` local worker processes, or one task per book on the Dask cluster at
    ``scheduler``; the files are the same either way. ``table`` also writes one
    table (.csv or .tsv) of the events of every book extracted, in book order.
    ``on_book`` hears of each book as it finishes, with the run's :class:`LibraryProgress`.
    """
    from trainer.models.book_parts import book_results, library_tasks
    from trainer.models.persist import digest_path, read_metadata

    started = time.perf_counter()
    model_path, folder = Path(model_path), Path(folder)
    check_jobs(jobs)
    check_batch_size(batch_size)
    if folder.suffix and not folder.is_dir():
        raise OutputError(f"{folder}: a library is written to a folder, one file per book, but this names a file",
                          "name a folder for -o (e.g. -o extracted), or give one input file")
    check_output(folder, inputs=[model_path, *inputs], folder=True, what="output folder")
    for source in map(Path, inputs):
        if source.is_dir() and source.resolve() in (folder.resolve(), *folder.resolve().parents):
            raise OutputError(f"{folder}: the output folder lies inside the input folder {source}, which is searched "
                              "for books at any depth, so a later run would read the outputs as books",
                              "write the library to a folder outside the books' folder")
    books = find_books(inputs, folder, input_format=input_format)
    meta, _ = read_metadata(model_path)  # checked against its digest here, before any worker starts
    if meta.get("kind") != "itinerant-extractor" or not meta.get("roles"):
        raise ModelFileError(f"{model_path}: not an extractor written by `itinerant fit`",
                             "name a file written by `itinerant fit`")
    every_input = [model_path, digest_path(model_path), *(b.source for b in books)]
    for book in books:
        check_output(book.target, inputs=every_input, what="book output")
    if table:
        check_output(table, inputs=[*every_input, *(b.target for b in books)], what="event table")
    folder.mkdir(parents=True, exist_ok=True)
    options = {"resume": resume, "batch_size": batch_size, "skip_bad": skip_bad}
    model = str(model_path.absolute())
    with output_lock(folder):
        plan = library_tasks(books, jobs=jobs, scheduler=scheduler, resume=resume)
        runs = book_results(plan, run_books(extract_book, model, [task for _, tasks in plan for task in tasks],
                                            options, jobs=jobs, scheduler=scheduler))
        by_target: dict[Path, BookResult] = {}
        sizes = {book.target: book_size(book.source) for book in books}
        progress = LibraryProgress(len(books), sum(sizes.values()))
        for result in runs:
            by_target[result.book.target] = result
            progress.add(result, sizes[result.book.target])
            if on_book:
                on_book(result, progress)
        summary = LibrarySummary([by_target[b.target] for b in books])
        if table:
            summary.table = _write_table(summary, table, tuple(meta["roles"]))
    summary.seconds = time.perf_counter() - started
    return summary


def _write_table(summary: LibrarySummary, table: Path, roles: tuple[str, ...]) -> Path:
    """One table of every extracted book's events, in book order (the format `extract --table` writes for one)."""
    from trainer.corpus.convert.table import write_table
    from trainer.corpus.reader import iter_records

    records = (record for result in summary.results if result.status != FAILED
               for record in iter_records(result.book.target, roles=roles))
    write_table(records, table, roles=roles)
    return table
