"""Extraction over a library of books: the same files serially, on worker processes and on a Dask cluster;
a failing book counted while the others are written; a killed run resumed to the same bytes."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from tests.conftest import DEMO, REPO
from trainer.cli import app
from trainer.corpus.reader import read_corpus
from trainer.errors import ConfigError, OutputError
from trainer.models.apply import extract_file, partial_path, resume_point
from trainer.models.library import (DONE, FAILED, SKIPPED, Book, BookResult, LibraryProgress, extract_library,
                                    find_books, names_a_library)
from trainer.models.training import load_extractor
from trainer.parsing.text import paragraphs, read_text_file

CHAPTER = DEMO / "unannotated" / "delacott-survey-3.txt"
LETTERS = DEMO / "test" / "lisle-letters-1.jsonl"
runner = CliRunner()


def make_library(folder: Path, *, books: int = 4, bad: bool = False, copies: int = 1) -> Path:
    """Text books cut from the demo chapter (whole paragraphs, the chapter ``copies`` times over), a JSONL book in a
    subfolder, optionally bad ones."""
    parts = [p for _, p in paragraphs(read_text_file(CHAPTER))] * copies
    folder.mkdir(parents=True)
    size = -(-len(parts) // books)
    for n in range(books):
        (folder / f"book-{n}.txt").write_text("\n\n".join(parts[n * size:(n + 1) * size]) + "\n", encoding="utf-8")
    (folder / "letters").mkdir()
    (folder / "letters" / "letters.jsonl").write_bytes(LETTERS.read_bytes())
    if bad:
        (folder / "book-latin1.txt").write_bytes("We rode to Caddow by the caf\u00e9.\n".encode("latin-1"))
        (folder / "letters" / "broken.jsonl").write_text('{"id": "x-1", "doc": "x", "text": "We left.\n', encoding="utf-8")
    return folder


def files(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.suffix == ".jsonl"}


def test_books_are_found_in_path_order_and_named_after_their_files(tmp_path):
    library = make_library(tmp_path / "lib")
    books = find_books([library], tmp_path / "out")
    assert [b.source.relative_to(library).as_posix() for b in books] == [
        "book-0.txt", "book-1.txt", "book-2.txt", "book-3.txt", "letters/letters.jsonl"]
    assert [b.target.name for b in books] == ["book-0.jsonl", "book-1.jsonl", "book-2.jsonl", "book-3.jsonl", "letters.jsonl"]
    assert [b.input_format for b in books] == ["text"] * 4 + ["jsonl"]
    (tmp_path / "other").mkdir()
    (tmp_path / "other" / "book-0.jsonl").write_text("")
    with pytest.raises(ConfigError, match="would both be written to"):
        find_books([library, tmp_path / "other"], tmp_path / "out")


def test_upper_case_suffixes_are_books_too_and_an_output_inside_the_books_is_refused(rules_model_file, tmp_path):
    library = tmp_path / "lib"
    library.mkdir()
    (library / "SHOUT.TXT").write_text("We left Caddow at dawn.\n", encoding="utf-8")
    (library / "Letters.JSONL").write_bytes(LETTERS.read_bytes())
    assert [(b.source.name, b.input_format) for b in find_books([library], tmp_path / "out")] == [
        ("Letters.JSONL", "jsonl"), ("SHOUT.TXT", "text")]
    with pytest.raises(OutputError, match="the output folder lies inside the input folder"):
        extract_library(rules_model_file, [library], library / "out")
    assert sorted(p.name for p in library.iterdir()) == ["Letters.JSONL", "SHOUT.TXT"]


def test_an_empty_book_of_a_library_is_named_in_a_warning(rules_model_file, tmp_path):
    library = tmp_path / "lib"
    library.mkdir()
    (library / "empty.txt").write_text("\n\n", encoding="utf-8")
    (library / "full.txt").write_text("We left Caddow at dawn.\n", encoding="utf-8")
    result = runner.invoke(app, ["extract", str(rules_model_file), str(library), "-o", str(tmp_path / "out"),
                                 "--no-progress"])
    assert result.exit_code == 0, result.output
    assert f"warning: {library / 'empty.txt'} holds no sentences" in result.output
    assert "full.txt holds" not in result.output


@pytest.mark.parametrize("inputs, output, library", [
    (["book.txt"], "out.jsonl", False),   # today's single extraction
    (["book.txt", "b2.txt"], "out", True),
    (["lib"], "out", True),               # a folder of books
    (["book.txt"], "out", True),          # an output folder (no extension)
    (["book.txt"], "existing", True),     # an existing folder
])
def test_which_calls_are_library_runs(tmp_path, inputs, output, library):
    (tmp_path / "lib").mkdir()
    (tmp_path / "existing").mkdir()
    (tmp_path / "book.txt").write_text("We left.\n")
    assert names_a_library([tmp_path / p for p in inputs], tmp_path / output) is library


@pytest.mark.slow
def test_a_library_gives_the_same_files_serially_on_two_processes_and_on_a_dask_cluster(rules_model_file, nlp, tmp_path):
    distributed = pytest.importorskip("dask.distributed")
    library = make_library(tmp_path / "lib")
    seen = []
    serial = extract_library(rules_model_file, [library], tmp_path / "serial", table=tmp_path / "all.tsv",
                             on_book=lambda result, progress: seen.append((result.status, progress.done, progress.books)))
    assert [r.status for r in serial.results] == [DONE] * 5
    assert seen == [(DONE, n, 5) for n in range(1, 6)]
    expected = files(tmp_path / "serial")
    assert list(expected) == ["book-0.jsonl", "book-1.jsonl", "book-2.jsonl", "book-3.jsonl", "letters.jsonl"]
    # each book's file is what a single extraction of that file writes
    trained, _ = load_extractor(rules_model_file)
    extract_file(trained, library / "book-2.txt", tmp_path / "single.jsonl", nlp=nlp)
    assert (tmp_path / "single.jsonl").read_bytes() == expected["book-2.jsonl"]
    assert sum(r.sentences for r in serial.results) == sum(len(v.splitlines()) for v in expected.values())
    assert all(r.words > 0 for r in serial.results)
    # the combined table holds every book's rows, in book order
    table = (tmp_path / "all.tsv").read_text(encoding="utf-8").splitlines()
    docs = [line.split("\t")[1] for line in table[1:]]
    assert docs == sorted(docs, key=["book-0", "book-1", "book-2", "book-3", "lisle-letters-1"].index)

    extract_library(rules_model_file, [library], tmp_path / "jobs2", jobs=2)
    assert files(tmp_path / "jobs2") == expected
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        extract_library(rules_model_file, [library], tmp_path / "dask", scheduler=cluster.scheduler_address)
    assert files(tmp_path / "dask") == expected


@pytest.mark.slow
def test_a_bad_book_is_reported_and_counted_and_the_others_are_written(rules_model_file, tmp_path):
    """Exit 1 (some data was bad, as for skipped records elsewhere), each failure named with its cause."""
    library = make_library(tmp_path / "lib", books=2, bad=True)
    result = runner.invoke(app, ["extract", str(rules_model_file), str(library), "-o", str(tmp_path / "out"), "--progress"])
    assert result.exit_code == 1, result.output
    assert "5/5 books" in result.output and "words/s" in result.output  # the progress display's last state
    assert "book-latin1.txt: not UTF-8 text" in result.output
    assert "broken.jsonl" in result.output and "failed" in result.output
    assert "3 book(s) extracted, 0 already done, 2 failed" in result.output
    assert sorted(files(tmp_path / "out")) == ["book-0.jsonl", "book-1.jsonl", "letters.jsonl"]
    written = read_corpus([tmp_path / "out" / "letters.jsonl"]).records
    assert [r.id for r in written] == [r.id for r in read_corpus([LETTERS]).records]


@pytest.mark.slow
def test_a_library_run_killed_midway_resumes_to_the_same_files(rules_model_file, tmp_path):
    library = make_library(tmp_path / "lib", books=2)
    extract_library(rules_model_file, [library], tmp_path / "whole", batch_size=4)
    killed = tmp_path / "killed"
    command = [sys.executable, "-m", "trainer.cli", "extract", str(rules_model_file), str(library), "-o", str(killed),
               "--batch-size", "4", "--no-progress"]
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    torn = partial_path(killed / "book-1.jsonl")
    deadline = time.monotonic() + 300
    # Wait until the torn book holds a whole paragraph: resuming plain text keeps whole paragraphs only, so a
    # kill inside the first one would leave nothing to resume.
    while (not (torn.exists() and resume_point(torn, plain_text=True).records > 0)
           and time.monotonic() < deadline and process.poll() is None):
        time.sleep(0.02)
    os.kill(process.pid, signal.SIGKILL)
    process.wait()
    assert (killed / "book-0.jsonl").exists() and torn.exists(), "the run was not caught between two books"
    summary = extract_library(rules_model_file, [library], killed, resume=True, batch_size=4)
    assert [r.status for r in summary.results] == [SKIPPED, DONE, DONE]
    assert summary.results[1].resumed > 0
    assert files(killed) == files(tmp_path / "whole")
    assert not torn.exists()


def _signal_state(pid: int) -> str:
    """The process's ignored, caught and pending signal masks and each thread's blocked mask, from /proc (Linux)."""
    try:
        status = dict(line.split(":\t", 1) for line in Path(f"/proc/{pid}/status").read_text().splitlines()
                      if ":\t" in line)
        blocked = [line.split(":\t", 1)[1] for task in sorted(Path(f"/proc/{pid}/task").iterdir())
                   for line in (task / "status").read_text().splitlines() if line.startswith("SigBlk:")]
    except OSError as exc:
        return f"unreadable ({exc})"
    return ", ".join(f"{key} {status.get(key, '?')}" for key in ("SigIgn", "SigCgt", "ShdPnd", "Threads")) + \
        f", blocked per thread {blocked}"


def _wait_for_a_started_book(folder: Path, process: subprocess.Popen | None = None) -> None:
    deadline = time.monotonic() + 300
    # at any depth: a long book shared among workers is written in parts, in its parts folder
    while not any(resume_point(p, plain_text=True).records > 0 for p in folder.rglob("*.partial")):
        assert time.monotonic() < deadline and (process is None or process.poll() is None), "no book was started"
        time.sleep(0.02)


@pytest.mark.slow
def test_a_worker_that_dies_fails_its_books_not_the_run(rules_model_file, tmp_path):
    """A worker killed mid-book (as by the kernel's out-of-memory killer): its books are reported failed, the
    run returns its summary, and --resume then gives the files of an uninterrupted run."""
    import multiprocessing
    import threading

    from trainer.models.library import FAILED, LOST_WORKER

    library = make_library(tmp_path / "lib", books=2)
    extract_library(rules_model_file, [library], tmp_path / "whole", batch_size=4)
    out = tmp_path / "out"

    def kill_workers() -> None:
        _wait_for_a_started_book(out)
        for child in multiprocessing.active_children():
            os.kill(child.pid, signal.SIGKILL)

    killer = threading.Thread(target=kill_workers)
    killer.start()
    summary = extract_library(rules_model_file, [library], out, jobs=2, batch_size=4)
    killer.join()
    lost = [r for r in summary.results if r.status == FAILED]
    assert lost and all(r.error == f"{r.book.source}: {LOST_WORKER}" for r in lost)
    extract_library(rules_model_file, [library], out, resume=True, batch_size=4)
    assert files(out) == files(tmp_path / "whole")


# Starts the CLI with SIGINT and SIGTERM at their default actions, as a terminal's foreground job has them. A process
# started with a signal ignored keeps it ignored (POSIX exec; Python then installs no handler), and a shell script's
# background job starts with SIGINT ignored: so does a test suite run as `bash -c 'pytest ... &'`, and without this
# the CLI would never see the signal and would finish the library with exit 0.
AS_A_TERMINAL_JOB = ("import os, signal, sys; signal.signal(signal.SIGINT, signal.SIG_DFL); "
                     "signal.signal(signal.SIGTERM, signal.SIG_DFL); "
                     "os.execv(sys.executable, [sys.executable, '-m', 'trainer.cli', *sys.argv[1:]])")


def _started_parallel_run(model: Path, tmp_path: Path) -> tuple[subprocess.Popen, Path, float]:
    """`extract --jobs 2` on long books, as a terminal job in its own process group, once a book has begun: the
    process, its output folder and its start (time.monotonic). The books (about 200,000 words) keep the run going
    when a signal comes, however loaded the machine; interrupted, the run takes seconds."""
    library = make_library(tmp_path / "lib", books=2, copies=50)
    out = tmp_path / "out"
    command = [sys.executable, "-c", AS_A_TERMINAL_JOB, "extract", str(model), str(library), "-o", str(out),
               "--batch-size", "4", "--no-progress", "--jobs", "2"]
    started = time.monotonic()
    process = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                               start_new_session=True)
    _wait_for_a_started_book(out, process)
    return process, out, started


@pytest.mark.slow
def test_ctrl_c_stops_a_parallel_library_run_with_a_message_and_no_traceback(rules_model_file, tmp_path):
    process, _, started = _started_parallel_run(rules_model_file, tmp_path)
    signalled = time.monotonic() - started
    os.killpg(process.pid, signal.SIGINT)  # as a terminal's Ctrl+C: the whole process group
    missed = ""
    try:
        _, errors = process.communicate(timeout=15)  # an interrupted run ends in about a second
    except subprocess.TimeoutExpired:  # the signal was missed: record how the process stood, then try once more
        missed = f"\nstill running 15 s after the signal; its signal state then: {_signal_state(process.pid)}"
        os.killpg(process.pid, signal.SIGINT)
        _, errors = process.communicate(timeout=300)
        missed += f"; after a second signal it exited with {process.returncode}"
    timing = f"signal sent {signalled:.1f} s after the start, the run ended {time.monotonic() - started:.1f} s after it"
    assert process.returncode == 130 and not missed, f"{timing}{missed}\n{errors}"
    assert "interrupted: outputs are written whole or not at all" in errors and "--resume" in errors
    assert "Traceback" not in errors


def _workers(pid: int) -> list[int]:
    """The pool's worker processes among a process's children (Linux /proc)."""
    children = Path(f"/proc/{pid}/task/{pid}/children").read_text().split()
    return [int(c) for c in children if "spawn_main" in Path(f"/proc/{c}/cmdline").read_text(errors="replace")]


def _running(pid: int) -> bool:
    """Whether a process exists and is not a zombie (the state field of /proc/PID/stat, after the command name)."""
    try:
        return Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False


@pytest.mark.slow
def test_sigterm_stops_a_parallel_library_run_and_its_workers(rules_model_file, tmp_path):
    """`kill PID` of an `extract --jobs 2` run (SIGTERM to that process alone, as a job scheduler sends it) stops its
    worker processes too, which would otherwise run on orphaned, exits with 143 (128 + 15, the shell's convention
    for SIGTERM: common practice) and keeps the partial books for --resume."""
    process, out, _ = _started_parallel_run(rules_model_file, tmp_path)
    workers = _workers(process.pid)
    process.send_signal(signal.SIGTERM)
    _, errors = process.communicate(timeout=120)
    assert process.returncode == 143, errors
    assert errors.startswith("terminated (SIGTERM): outputs are written whole or not at all") and "--resume" in errors
    assert len(workers) == 2 and not [pid for pid in workers if _running(pid)]
    # what --resume goes on from (a test above resumes a library after its workers died): these long books are
    # cut into parts, so the partial files are in their parts folders
    assert list(out.glob("*.parts/*.partial"))


def _result(name: str, status: str, words: int = 0) -> BookResult:
    return BookResult(Book(Path(f"{name}.txt"), Path(f"{name}.jsonl"), "text"), status, words=words)


def test_time_left_is_the_bytes_still_to_do_at_the_rate_of_the_books_extracted_so_far():
    progress = LibraryProgress(books=4, size=1000)
    assert progress.seconds_left(5.0) is None
    progress.add(_result("a", SKIPPED), 400)  # found finished by --resume: done, but no part of the rate
    assert progress.seconds_left(5.0) is None
    progress.add(_result("b", DONE), 200)  # 200 bytes in 10 s: 20 bytes/s, 400 bytes to go
    assert progress.seconds_left(10.0) == pytest.approx(20.0)
    progress.add(_result("c", FAILED), 100)  # failed: done, but no part of the rate
    assert progress.seconds_left(10.0) == pytest.approx(15.0)
    assert (progress.done, progress.size_done, progress.size_worked) == (3, 700, 200)


def test_the_library_display_counts_down_to_the_estimated_end(monkeypatch, capsys):
    """At 10 s, one book of 100 bytes done out of 300: 20 s left at that rate, shown as a clock."""
    from trainer.cli import library_progress

    readings = iter([0.0])  # the display's start, then 10 s for every later reading
    monkeypatch.setattr(time, "perf_counter", lambda: next(readings, 10.0))
    progress = LibraryProgress(books=2, size=300)
    with library_progress(enabled=True) as update:
        result = _result("a", DONE, words=500)
        progress.add(result, 100)
        update(result, progress)
    shown = capsys.readouterr().err
    assert "1/2 books" in shown and "50 words/s" in shown and "left 00:00:20" in shown


def test_a_library_is_written_to_a_folder(tmp_path):
    library = make_library(tmp_path / "lib", books=1)
    with pytest.raises(OutputError, match="written to a folder"):
        extract_library(tmp_path / "never-read.itin", [library], tmp_path / "out.jsonl")
    assert not (tmp_path / "out.jsonl").exists()


def _worker_settings() -> tuple[bool, str | None]:
    import dask

    return dask.config.get("distributed.worker.profile.enabled"), os.environ.get("MALLOC_TRIM_THRESHOLD_")


@pytest.mark.slow
def test_the_recommended_dask_worker_settings_reach_the_workers():
    """configs/dask/worker.yaml, read the way `DASK_CONFIG=configs/dask dask worker ...` reads it, switches off
    the workers' statistical profiler and leaves glibc's MALLOC_TRIM_THRESHOLD_ unset in their environment.
    Config keys and the meaning of null from Dask distributed's own distributed.yaml and nanny (pre-spawn-environ)."""
    dask = pytest.importorskip("dask")
    distributed = pytest.importorskip("dask.distributed")
    folder = REPO / "configs" / "dask"
    saved = dict(os.environ)  # a nanny writes its workers' variables into this process's environment
    os.environ.pop("MALLOC_TRIM_THRESHOLD_", None)  # as in a fresh shell (an earlier test's cluster may have set it)
    try:
        dask.config.refresh(paths=[*dask.config.paths, str(folder)])
        with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                      dashboard_address=None) as cluster, distributed.Client(cluster) as client:
            assert list(client.run(_worker_settings).values()) == [(False, None)]
        os.environ.pop("MALLOC_TRIM_THRESHOLD_", None)
        dask.config.refresh()
        with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                      dashboard_address=None) as cluster, distributed.Client(cluster) as client:
            assert list(client.run(_worker_settings).values()) == [(True, "65536")]  # Dask's defaults, for contrast
    finally:
        os.environ.clear()
        os.environ.update(saved)
        dask.config.refresh()


def _threads_seen() -> tuple[int, list[int]]:
    """What scikit-learn's OpenMP code and the loaded native thread pools would use in this process."""
    from sklearn.utils._openmp_helpers import _openmp_effective_n_threads
    from threadpoolctl import threadpool_info

    return _openmp_effective_n_threads(), [pool["num_threads"] for pool in threadpool_info()]


def test_library_workers_run_native_code_on_one_thread_each():
    """The workers of `extract --jobs N` start with single_threaded, as Dask's nannies set OMP_NUM_THREADS=1 for
    theirs (distributed.yaml, nanny.pre-spawn-environ): N workers on N cores, never N x N threads.
    _openmp_effective_n_threads is scikit-learn's own reading of the OpenMP thread count."""
    from concurrent.futures import ProcessPoolExecutor
    from multiprocessing import get_context

    from trainer.models.library import single_threaded

    with ProcessPoolExecutor(max_workers=1, mp_context=get_context("spawn"), initializer=single_threaded) as pool:
        openmp, pools = pool.submit(_threads_seen).result()
    assert openmp == 1 and pools and set(pools) == {1}
