"""One long book shared among workers: the parts are cut at paragraph (or record) boundaries, and joined they give
the very file a run in one process writes, serially, on worker processes, resumed after an interruption, and on a
Dask cluster."""

from __future__ import annotations

import json
import pickle
from pathlib import Path

import pytest
from typer.testing import CliRunner

from tests.conftest import DEMO
from trainer.cli import app
from trainer.errors import CorpusError, UnreadableInputError
from trainer.models.apply import extract_file, input_note_path, partial_path
from trainer.models.book_parts import (book_parts, extract_in_parts, parts_folder, remove_parts,
                                       shares_the_book)
from trainer.models.library import Part
from trainer.models.training import load_extractor
from trainer.parsing.text import paragraphs, read_text_file

CHAPTER = DEMO / "unannotated" / "delacott-survey-3.txt"
LETTERS = DEMO / "test" / "lisle-letters-1.jsonl"
runner = CliRunner()


def make_book(path: Path, copies: int = 2) -> Path:
    """A plain-text book: the demo chapter's paragraphs ``copies`` times over, with a blank line between them."""
    chapter = [p for _, p in paragraphs(read_text_file(CHAPTER))]
    path.write_text("\n\n".join(chapter * copies) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def trained(rules_model_file):
    return load_extractor(rules_model_file)[0]


def serial_run(trained, nlp, source: Path, target: Path, **options) -> tuple[bytes, bytes]:
    extract_file(trained, source, target, nlp=nlp, **options)
    return target.read_bytes(), input_note_path(target).read_bytes()


def test_a_text_is_cut_at_the_paragraphs_that_begin_after_the_size_and_jsonl_by_record_counts(tmp_path):
    book = tmp_path / "b.txt"
    book.write_text("aaaa\n\nbbbbbb\n\ncc\n\ndddd\n", encoding="utf-8")  # paragraphs at 0, 6, 14, 18
    assert book_parts(book, "text", part_chars=4) == [Part(0, 6), Part(6, 14), Part(14, None)]
    assert book_parts(book, "text", part_chars=10) == [Part(0, 14), Part(14, None)]
    assert book_parts(book, "text", part_chars=100) == [Part(0, None)]
    records = tmp_path / "r.jsonl"
    records.write_text("{}\n" * 7, encoding="utf-8")
    assert book_parts(records, "jsonl", part_records=3) == [Part(1, 4), Part(4, 7), Part(7, None)]
    (tmp_path / "empty.jsonl").write_text("", encoding="utf-8")
    assert book_parts(tmp_path / "empty.jsonl", "jsonl", part_records=3) == [Part(1, None)]


def test_a_book_that_is_not_utf8_is_refused_before_any_worker_starts(tmp_path):
    book = tmp_path / "latin1.txt"
    book.write_bytes("We rode to Caddow by the caf\u00e9.\n".encode("latin-1"))
    with pytest.raises(UnreadableInputError, match="not UTF-8 text: line 1"):
        book_parts(book, "text")


def test_a_run_is_shared_in_parts_for_several_workers_and_resumed_the_way_it_began(tmp_path):
    target = tmp_path / "out.jsonl"
    assert not shares_the_book(target, jobs=1, scheduler=None, resume=False)
    assert shares_the_book(target, jobs=2, scheduler=None, resume=False)
    assert shares_the_book(target, jobs=1, scheduler="tcp://host:8786", resume=True)
    partial_path(target).write_text("")  # a run in one process was interrupted
    assert not shares_the_book(target, jobs=2, scheduler=None, resume=True)
    assert shares_the_book(target, jobs=2, scheduler=None, resume=False)  # not resumed: started afresh, in parts
    parts_folder(target).mkdir()  # a shared run was interrupted
    assert shares_the_book(target, jobs=1, scheduler=None, resume=True)
    remove_parts(target)
    assert not parts_folder(target).exists()


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_book_in_parts_gives_the_file_of_a_run_in_one_process(rules_model_file, trained, nlp, tmp_path, jobs):
    """Sentence ids run on across parts (here with a non-ASCII doc name, which JSONL keeps as is)."""
    book = make_book(tmp_path / "book.txt")
    expected = serial_run(trained, nlp, book, tmp_path / "serial.jsonl", doc_name="Reise-\u00e9t\u00e9")
    parts = book_parts(book, "text", part_chars=3000)
    assert len(parts) >= 4
    seen = []
    summary = extract_in_parts(rules_model_file, book, tmp_path / "parts.jsonl", input_format="text",
                               doc_name="Reise-\u00e9t\u00e9", jobs=jobs, parts=parts,
                               on_progress=lambda sentences, share: seen.append(share))
    assert ((tmp_path / "parts.jsonl").read_bytes(), input_note_path(tmp_path / "parts.jsonl").read_bytes()) == expected
    lines = expected[0].decode("utf-8").splitlines()
    assert json.loads(lines[-1])["id"] == f"Reise-\u00e9t\u00e9-s{len(lines):05d}"
    assert summary.sentences == len(lines) and summary.resumed == 0
    assert summary.events == sum(len(json.loads(line)["events"]) for line in lines)
    assert sorted(seen) == [n / len(parts) for n in range(1, len(parts) + 1)]
    assert not parts_folder(tmp_path / "parts.jsonl").exists()
    assert not partial_path(tmp_path / "parts.jsonl").exists()


def test_jsonl_in_parts_keeps_ids_and_reports_each_bad_record_once(rules_model_file, trained, nlp, tmp_path):
    lines = LETTERS.read_text(encoding="utf-8").splitlines()
    bad = ['{"id": "x-1", "doc": "x", "text": "We left.', '{"id": "x-2"}']
    source = tmp_path / "letters.jsonl"
    source.write_text("\n".join([*lines[:4], bad[0], *lines[4:9], bad[1], *lines[9:]]) + "\n", encoding="utf-8")
    serial = tmp_path / "serial.jsonl"
    expected = serial_run(trained, nlp, source, serial, input_format="jsonl", skip_bad=True)
    reference = extract_file(trained, source, tmp_path / "again.jsonl", input_format="jsonl", nlp=nlp, skip_bad=True)
    assert sorted({problem.line for problem in reference.skipped}) == [5, 11]
    summary = extract_in_parts(rules_model_file, source, tmp_path / "parts.jsonl", input_format="jsonl",
                               doc_name="letters", skip_bad=True, parts=book_parts(source, "jsonl", part_records=3))
    assert ((tmp_path / "parts.jsonl").read_bytes(), input_note_path(tmp_path / "parts.jsonl").read_bytes()) == expected
    assert summary.skipped == reference.skipped
    # without --skip-bad the first bad record stops the run, named by its line, as in one process
    with pytest.raises(CorpusError, match=":5:"):
        extract_in_parts(rules_model_file, source, tmp_path / "stopped.jsonl", input_format="jsonl",
                         doc_name="letters", parts=book_parts(source, "jsonl", part_records=3))
    assert not (tmp_path / "stopped.jsonl").exists()


class Stop(Exception):
    pass


def test_an_interrupted_run_in_parts_resumes_to_the_same_file(rules_model_file, trained, nlp, tmp_path):
    """Stopped after its first part with the second torn, then resumed on two workers."""
    book = make_book(tmp_path / "book.txt")
    expected = serial_run(trained, nlp, book, tmp_path / "serial.jsonl")
    parts = book_parts(book, "text", part_chars=3000)
    target = tmp_path / "out.jsonl"

    def stop(sentences, share):
        raise Stop

    with pytest.raises(Stop):
        extract_in_parts(rules_model_file, book, target, input_format="text", doc_name="book", parts=parts,
                         on_progress=stop)
    folder = parts_folder(target)
    assert (folder / "part-00001.jsonl").exists() and not target.exists()
    with pytest.raises(Stop):  # the second part torn after its first batch, as by a kill
        extract_file(trained, book, folder / "part-00002.jsonl", nlp=nlp, batch_size=2, part=parts[1],
                     on_progress=stop)
    torn = partial_path(folder / "part-00002.jsonl")
    assert torn.stat().st_size > 0
    summary = extract_in_parts(rules_model_file, book, target, input_format="text", doc_name="book", parts=parts,
                               jobs=2, resume=True)
    assert (target.read_bytes(), input_note_path(target).read_bytes()) == expected
    assert 0 < summary.resumed < summary.resumed + summary.sentences == len(expected[0].splitlines())
    assert not folder.exists()


def test_a_new_run_replaces_the_parts_an_interrupted_one_left(rules_model_file, trained, nlp, tmp_path):
    book = make_book(tmp_path / "book.txt", copies=1)
    target = tmp_path / "out.jsonl"
    folder = parts_folder(target)
    folder.mkdir()
    (folder / "part-00001.jsonl").write_text('{"id": "stale"}\n', encoding="utf-8")
    result = runner.invoke(app, ["extract", str(rules_model_file), str(book), "-o", str(target), "--no-progress"])
    assert result.exit_code == 0, result.output
    assert not folder.exists()
    assert target.read_bytes() == serial_run(trained, nlp, book, tmp_path / "serial.jsonl")[0]


def test_an_error_keeps_its_cause_fix_and_class_across_processes():
    error = pickle.loads(pickle.dumps(CorpusError("book.jsonl:5: record: malformed JSON", "fix the line")))
    assert (type(error), error.cause, error.fix, error.exit_code) == (
        CorpusError, "book.jsonl:5: record: malformed JSON", "fix the line", 1)
    assert str(error) == "book.jsonl:5: record: malformed JSON\n  fix: fix the line"


@pytest.mark.slow
def test_one_book_with_jobs_2_and_on_a_dask_cluster_gives_the_serial_file(rules_model_file, trained, nlp, tmp_path):
    """From the command line (the book cut at the default size), and through the API on a local cluster."""
    distributed = pytest.importorskip("dask.distributed")
    book = make_book(tmp_path / "book.txt", copies=8)
    expected = serial_run(trained, nlp, book, tmp_path / "serial.jsonl")
    assert len(book_parts(book, "text")) >= 2
    result = runner.invoke(app, ["extract", str(rules_model_file), str(book), "-o", str(tmp_path / "jobs2.jsonl"),
                                 "--jobs", "2", "--no-progress"])
    assert result.exit_code == 0, result.output
    assert f"{len(expected[0].splitlines())} sentence(s)" in result.output
    assert (tmp_path / "jobs2.jsonl").read_bytes() == expected[0]
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        extract_in_parts(rules_model_file, book, tmp_path / "dask.jsonl", input_format="text", doc_name="book",
                         scheduler=cluster.scheduler_address, parts=book_parts(book, "text", part_chars=20_000))
    assert ((tmp_path / "dask.jsonl").read_bytes(), input_note_path(tmp_path / "dask.jsonl").read_bytes()) == expected


@pytest.mark.slow
def test_a_worker_that_dies_stops_the_run_and_resume_finishes_it(rules_model_file, trained, nlp, tmp_path):
    """A worker killed mid-part (as by the kernel's out-of-memory killer): the run stops with a WorkerLostError
    (exit 1) that says to resume, the parts done are kept, and --resume then gives the one-process file."""
    import multiprocessing
    import os
    import signal
    import threading
    import time

    from trainer.errors import WorkerLostError
    from trainer.models.apply import resume_point

    book = make_book(tmp_path / "book.txt", copies=4)
    expected = serial_run(trained, nlp, book, tmp_path / "serial.jsonl", batch_size=4)
    parts = book_parts(book, "text", part_chars=3000)
    target = tmp_path / "out.jsonl"
    folder = parts_folder(target)

    def kill_workers() -> None:
        deadline = time.monotonic() + 300
        while not any(resume_point(p, plain_text=True).records > 0 for p in folder.glob("*.partial")):
            if time.monotonic() > deadline:
                return
            time.sleep(0.02)
        for child in multiprocessing.active_children():
            os.kill(child.pid, signal.SIGKILL)

    killer = threading.Thread(target=kill_workers)
    killer.start()
    with pytest.raises(WorkerLostError, match="ended abruptly") as stopped:
        extract_in_parts(rules_model_file, book, target, input_format="text", doc_name="book", parts=parts, jobs=2,
                         batch_size=4)
    killer.join()
    assert stopped.value.exit_code == 1 and "--resume" in stopped.value.fix
    assert folder.is_dir() and not target.exists()
    extract_in_parts(rules_model_file, book, target, input_format="text", doc_name="book", parts=parts, resume=True,
                     batch_size=4)
    assert (target.read_bytes(), input_note_path(target).read_bytes()) == expected


def make_library(folder: Path) -> Path:
    """A long book (cut into parts when workers share the library), a short one and a JSONL book."""
    folder.mkdir()
    make_book(folder / "long.txt", copies=5)
    (folder / "short.txt").write_text("We left Caddow at dawn and reached Pellworth by noon.\n", encoding="utf-8")
    (folder / "letters.jsonl").write_bytes(LETTERS.read_bytes())
    return folder


def library_files(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


@pytest.mark.slow
def test_a_long_book_of_a_library_is_cut_when_workers_share_it_and_the_files_stay_the_same(rules_model_file,
                                                                                           tmp_path):
    from trainer.models.book_parts import LIBRARY_CUT_BYTES, library_tasks
    from trainer.models.library import DONE, extract_library, find_books

    distributed = pytest.importorskip("dask.distributed")
    library = make_library(tmp_path / "lib")
    books = find_books([library], tmp_path / "jobs2")
    assert (library / "long.txt").stat().st_size > LIBRARY_CUT_BYTES
    plan = {book.source.name: tasks for book, tasks in library_tasks(books, jobs=2, scheduler=None, resume=False)}
    assert len(plan["long.txt"]) == len(book_parts(library / "long.txt", "text")) > 1
    assert [len(plan[name]) for name in ("letters.jsonl", "short.txt")] == [1, 1]
    assert all(len(tasks) == 1 for _, tasks in library_tasks(books, jobs=1, scheduler=None, resume=False))

    serial = extract_library(rules_model_file, [library], tmp_path / "serial")
    seen = []
    shared = extract_library(rules_model_file, [library], tmp_path / "jobs2", jobs=2,
                             on_book=lambda result, progress: seen.append((result.book.source.name, progress.done)))
    assert library_files(tmp_path / "jobs2") == library_files(tmp_path / "serial")
    # one report per book (a cut book's when its last part is done), not per part
    assert sorted(name for name, _ in seen) == ["letters.jsonl", "long.txt", "short.txt"]
    assert [done for _, done in seen] == [1, 2, 3]
    assert [(r.status, r.sentences, r.events, r.words) for r in shared.results] == [
        (r.status, r.sentences, r.events, r.words) for r in serial.results]
    assert [r.status for r in shared.results] == [DONE] * 3
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        extract_library(rules_model_file, [library], tmp_path / "dask", scheduler=cluster.scheduler_address)
    assert library_files(tmp_path / "dask") == library_files(tmp_path / "serial")


def test_a_library_resumes_a_book_whose_parts_an_interrupted_run_left(rules_model_file, trained, nlp, tmp_path):
    """Even with one worker: the book is continued part by part, as its run began."""
    from trainer.models.library import DONE, SKIPPED, extract_library

    library = tmp_path / "lib"
    library.mkdir()
    book = make_book(library / "book.txt", copies=5)
    (library / "other.txt").write_text("We left Caddow at dawn.\n", encoding="utf-8")
    expected = extract_library(rules_model_file, [library], tmp_path / "whole")
    out = tmp_path / "out"
    extract_library(rules_model_file, [library / "other.txt"], out)

    def stop(sentences, share):
        raise Stop

    with pytest.raises(Stop):  # the book's run stopped after its first part, as a shared library run leaves it
        extract_in_parts(rules_model_file, book, out / "book.jsonl", input_format="text", doc_name="book",
                         on_progress=stop)
    assert len(book_parts(book, "text")) > 1
    summary = extract_library(rules_model_file, [library], out, resume=True)
    assert [r.status for r in summary.results] == [DONE, SKIPPED]
    assert summary.results[0].resumed > 0
    assert library_files(out) == library_files(tmp_path / "whole")
    assert [r.sentences + r.resumed for r in summary.results[:1]] == [expected.results[0].sentences]


def test_a_cut_book_fails_with_its_first_failed_part_and_keeps_its_parts(tmp_path):
    from trainer.models.book_parts import book_results, part_books
    from trainer.models.library import DONE, FAILED, Book, BookResult

    whole = Book(tmp_path / "a.txt", tmp_path / "out" / "a.jsonl", "text")
    small = Book(tmp_path / "b.txt", tmp_path / "out" / "b.jsonl", "text")
    tasks = part_books(whole, [Part(0, 10), Part(10, 20), Part(20)])
    parts_folder(whole.target).mkdir(parents=True)
    runs = [BookResult(tasks[2], DONE, sentences=3), BookResult(small, DONE, sentences=1),
            BookResult(tasks[1], FAILED, error="a.txt: the worker process extracting it ended abruptly"),
            BookResult(tasks[0], FAILED, error="a.txt: second error")]
    results = list(book_results([(whole, tasks), (small, [small])], runs))
    assert [(r.book, r.status, r.error) for r in results] == [
        (small, DONE, None), (whole, FAILED, "a.txt: second error")]  # the first part's error, in part order
    assert parts_folder(whole.target).is_dir()
    # every part done, but a part's file gone before the join: the book fails, the run goes on
    gone = part_books(Book(tmp_path / "c.txt", tmp_path / "out" / "c.jsonl", "text"), [Part(0, 10), Part(10)])
    [result] = book_results([(Book(tmp_path / "c.txt", tmp_path / "out" / "c.jsonl", "text"), gone)],
                            [BookResult(task, DONE, sentences=1) for task in gone])
    assert result.status == FAILED and result.error.startswith(f"{tmp_path / 'out' / 'c.jsonl'}: its parts could not "
                                                               "be joined (No such file or directory)")
    assert "--resume" in result.error and not partial_path(tmp_path / "out" / "c.jsonl").exists()
