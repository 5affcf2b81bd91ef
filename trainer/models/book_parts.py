"""One long book shared among workers: cut into parts, each part extracted apart, the parts joined in order.

A part is a run of whole paragraphs of about :data:`PART_CHARS` characters
(plain text) or :data:`PART_RECORDS` records (JSONL). The parser reads a
book paragraph by paragraph and the extractor sentence by sentence, so a part
holds exactly the records a run over the whole book writes for those
paragraphs; joined in order, with the sentence ids of plain text renumbered to
run on from one part to the next, they give the very file a run in one process
writes.

The parts are written to ``<output>.parts/``, each as
:func:`trainer.models.apply.extract_file` writes a file (its own partial file
and input note, the note naming the part's range), so an interrupted run
resumes part by part with ``resume``. The cut depends only on the input, not
on the number of workers, so a resumed run may use another number. When every
part is done they are joined into ``<output>`` (through its partial file, as
always) and the folder is removed.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path
from typing import Iterable, Iterator, Sequence

from trainer.corpus.jsonl import not_utf8
from trainer.errors import ItinerantError, OutputError, WorkerLostError
from trainer.models.apply import ExtractionSummary, Progress, input_note, input_note_path, partial_path
from trainer.models.library import DONE, FAILED, Book, BookResult, Part, book_size, extract_part, run_books
from trainer.outputs import WRITE_ERRNOS, output_lock, publish, write_failed, write_text
from trainer.parsing.text import iter_paragraphs, sentence_id

PART_CHARS = 50_000  # plain text: a part ends at the first paragraph that begins after this many characters
PART_RECORDS = 1_000  # JSONL: records per part
PARTS_SUFFIX = ".parts"


def parts_folder(target: Path) -> Path:
    """Where the parts of ``target`` are written while a shared run goes on: ``<target>.parts/``."""
    return target.with_name(target.name + PARTS_SUFFIX)


def book_parts(source: Path, input_format: str, *, part_chars: int = PART_CHARS,
               part_records: int = PART_RECORDS) -> list[Part]:
    """The parts of a book, in order: whole paragraphs of about ``part_chars`` characters, or ``part_records`` records.

    Reads a text book once (a book that is not UTF-8 is refused here, before any
    worker starts); a JSONL book is only counted in lines, as its records are
    checked by the worker reading them.
    """
    if input_format == "text":
        starts, size = [0], 0
        try:
            for offset, paragraph in iter_paragraphs(source):
                if size >= part_chars:
                    starts.append(offset)
                    size = 0
                size += len(paragraph)
        except UnicodeDecodeError:
            raise not_utf8(source) from None
    else:
        with open(source, "rb") as handle:
            lines = sum(1 for _ in handle)
        starts = list(range(1, max(lines, 1) + 1, part_records))
    return [Part(first, end) for first, end in zip(starts, [*starts[1:], None])]


def shares_the_book(target: Path, *, jobs: int, scheduler: str | None, resume: bool) -> bool:
    """Whether one book's extraction is shared among workers in parts.

    With ``resume``, a run is continued as it was begun: in parts when a parts
    folder is there, in one process when a partial or finished output of one
    is; otherwise parts are used when more than one worker, or a cluster, is asked for.
    """
    if resume and parts_folder(target).is_dir():
        return True
    if resume and (partial_path(target).exists() or target.exists()):
        return False
    return jobs > 1 or scheduler is not None


def extract_in_parts(
    model_path: Path, source: Path, target: Path, *, input_format: str, doc_name: str, jobs: int = 1,
    scheduler: str | None = None, resume: bool = False, batch_size: int = 256, skip_bad: bool = False,
    on_progress: Progress | None = None, parts: Sequence[Part] | None = None,
) -> ExtractionSummary:
    """Extract one book as :func:`trainer.models.apply.extract_file` does, its parts shared among workers.

    ``jobs`` local worker processes, or the Dask cluster at ``scheduler``; the
    output is the same file either way. ``parts`` (default :func:`book_parts`)
    cuts the book. The first part that fails stops the run with its error; the
    parts already done are kept for ``resume``. ``on_progress`` hears, after
    each part, the sentences written and the share of parts done.
    """
    source, target = Path(source), Path(target)
    folder = parts_folder(target)
    with output_lock(target):
        if not resume:
            remove_parts(target)  # an earlier interrupted run's parts
        parts = list(parts) if parts is not None else book_parts(source, input_format)
        whole = Book(source, target, input_format, doc_name)
        books = part_books(whole, parts)
        try:  # each part's run makes the folder when it locks its file
            results = _run_parts(model_path, books, jobs, scheduler, resume, batch_size, skip_bad, on_progress)
        except BaseException:
            if folder.is_dir() and not any(folder.iterdir()):  # nothing was kept: leave no empty folder behind
                folder.rmdir()
            raise
        return join_parts(whole, books, results)


def part_books(book: Book, parts: Sequence[Part]) -> list[Book]:
    """One task per part of ``book``, each written to its own file in the book's parts folder."""
    folder = parts_folder(book.target)
    return [Book(book.source, folder / f"part-{n:05d}.jsonl", book.input_format, book.doc_name, part)
            for n, part in enumerate(parts, start=1)]


def join_parts(book: Book, parts: Sequence[Book], results: dict[Path, BookResult]) -> ExtractionSummary:
    """Join the finished parts into the book's output, write its side file and remove the parts folder."""
    summary = _join(parts, results, book.target, book.doc_name if book.input_format == "text" else None)
    note = input_note(book.source, book.input_format, book.doc_name)
    write_text(input_note_path(book.target), json.dumps(note, sort_keys=True) + "\n")
    shutil.rmtree(parts_folder(book.target))
    return summary


LIBRARY_CUT_BYTES = 2 * PART_CHARS  # a book of a library is cut into parts only above this size


def library_tasks(books: Sequence[Book], *, jobs: int, scheduler: str | None,
                  resume: bool) -> list[tuple[Book, list[Book]]]:
    """Each book of a library with the tasks that extract it: the book itself, or its parts.

    A book is cut (:func:`book_parts`) when several workers or a cluster share
    the library and it is larger than :data:`LIBRARY_CUT_BYTES`, so a few long
    books keep many workers busy; with ``resume``, as its interrupted run began
    (:func:`shares_the_book`). A book that cannot be cut (unreadable, not
    UTF-8) stays whole, and its own task reports why.
    """
    plan = []
    for book in books:
        tasks = [book]
        if shares_the_book(book.target, jobs=jobs, scheduler=scheduler, resume=resume) and (
                parts_folder(book.target).is_dir() or book_size(book.source) > LIBRARY_CUT_BYTES):
            try:
                parts = book_parts(book.source, book.input_format)
            except (ItinerantError, OSError):
                parts = []
            if len(parts) > 1:
                tasks = part_books(book, parts)
        if tasks == [book] and not resume:
            remove_parts(book.target)
        plan.append((book, tasks))
    return plan


def book_results(plan: Sequence[tuple[Book, list[Book]]], runs: Iterable[BookResult]) -> Iterator[BookResult]:
    """Each book's result as it finishes, from the results of its tasks: a cut book when its last part is done.

    The parts are joined then (:func:`join_parts`); a book one of whose parts
    failed fails with that part's error and keeps its parts for ``resume``.
    """
    owner = {task.target: (book, tasks) for book, tasks in plan for task in tasks}
    finished: dict[Path, dict[Path, BookResult]] = {}
    for result in runs:
        book, tasks = owner[result.book.target]
        if tasks == [book]:
            yield result
            continue
        got = finished.setdefault(book.target, {})
        got[result.book.target] = result
        if len(got) == len(tasks):
            yield _joined(book, tasks, got)


def _joined(book: Book, tasks: Sequence[Book], results: dict[Path, BookResult]) -> BookResult:
    failed = [results[task.target] for task in tasks if results[task.target].status == FAILED]
    if failed:
        return BookResult(book, FAILED, error=failed[0].error)
    try:
        summary = join_parts(book, tasks, results)
    except ItinerantError as exc:
        return BookResult(book, FAILED, error=str(exc))
    return BookResult(book, DONE, sentences=summary.sentences, events=summary.events, roles=summary.roles,
                      words=sum(r.words for r in results.values()), resumed=summary.resumed,
                      skipped=list(summary.skipped))


def _run_parts(model_path: Path, books: Sequence[Book], jobs: int, scheduler: str | None, resume: bool,
               batch_size: int, skip_bad: bool, on_progress: Progress | None) -> dict[Path, BookResult]:
    """Each part's result, by its file; the first error stops the run."""
    options = {"resume": resume, "batch_size": batch_size, "skip_bad": skip_bad}
    results: dict[Path, BookResult] = {}
    for result in run_books(extract_part, str(Path(model_path).absolute()), books, options, jobs=jobs,
                            scheduler=scheduler):
        if result.status == FAILED:  # only a worker that died gives a result rather than its error
            raise WorkerLostError(f"{books[0].source}: a worker process extracting part of it ended abruptly (killed, "
                                  f"or out of memory?); the parts done are kept in {books[0].target.parent}",
                                  "run the same command with --resume to finish it")
        results[result.book.target] = result
        if on_progress:
            on_progress(sum(r.sentences + r.resumed for r in results.values()), len(results) / len(books))
    return results


def _join(books: Sequence[Book], results: dict[Path, BookResult], target: Path,
          renumber_doc: str | None) -> ExtractionSummary:
    """Write the parts, in order, into ``target`` through its partial file; plain-text sentence ids run on."""
    summary = ExtractionSummary()
    partial = partial_path(target)
    number = 0
    try:
        with open(partial, "w", encoding="utf-8", newline="\n") as out:
            for book in books:
                result = results[book.target]
                written = 0
                with open(book.target, encoding="utf-8") as part:
                    for local, line in enumerate(part, start=1):
                        number += 1
                        written += 1
                        out.write(line if renumber_doc is None else _renumbered(line, renumber_doc, local, number))
                if result.status == DONE:
                    summary.sentences += result.sentences
                    summary.resumed += result.resumed
                    summary.events += result.events
                    summary.roles += result.roles
                    summary.skipped.extend(result.skipped)
                else:  # found finished by a resumed run: all of it was kept
                    summary.resumed += written
            publish(out, partial, target)
    except OSError as exc:
        partial.unlink(missing_ok=True)  # a torn join is of no use; the parts are kept
        if exc.errno in WRITE_ERRNOS:
            raise write_failed(target, exc) from None
        raise OutputError(f"{target}: its parts could not be joined ({exc.strerror or exc})",
                          "run the same command with --resume: a part whose file is gone is extracted again") from None
    return summary


def _renumbered(line: str, doc_name: str, local: int, number: int) -> str:
    """A part's record line with its sentence id (the line's first field) made the book's ``number``-th."""
    head = '{"id": '
    old, new = head + json.dumps(sentence_id(doc_name, local), ensure_ascii=False), sentence_id(doc_name, number)
    if not line.startswith(old):
        raise AssertionError(f"part record {local} does not start with its id: {line[:80]!r}")
    return head + json.dumps(new, ensure_ascii=False) + line[len(old):]


def remove_parts(target: Path) -> None:
    """Drop the parts an interrupted shared run left beside ``target`` (a new run in one process replaces them)."""
    if parts_folder(target).is_dir():
        shutil.rmtree(parts_folder(target))
