"""Extraction at library scale, every figure a whole `itinerant` process timed from outside:

1. one book: `itinerant extract` words/s against a process that only runs `nlp.pipe` over the same paragraphs
   with the same pipeline components (target: at least 0.9), and the parse's share of the extraction;
2. a library of books: `extract --jobs 2` against `--jobs 1` (target: at least 1.7x);
3. the same library on a local Dask cluster of two worker processes against `--jobs 1` (target: at least 1.6x),
   with Dask's default worker settings and with those of `configs/dask/worker.yaml`;
4. peak memory of `extract` on a library of many books against one of a tenth as many (target: at most 1.1x);
5. one long book: `extract --jobs 2` (the book cut into parts that two workers share) against `--jobs 1`, with
   the same output file, into a file and as a library of one book (into a folder).

Books are cut from the demo chapter (bench/_common.py). Usage:

    python bench/library.py [--words 100000] [--books 20] [--book-words 5000] [--memory-books 10,100]
                            [--config configs/default.toml] [--skip-dask] [--dask-repeats 1]
                            [--sections one-book,parallel,memory,long-book]
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator

from _common import REPO, machine, make_book

BARE_PARSE = """
import sys
from trainer.config import load_config
from trainer.models.training import parser_for
from trainer.parsing.text import iter_paragraphs
nlp = parser_for(load_config(sys.argv[1]))
for _ in nlp.pipe((p for _, p in iter_paragraphs(sys.argv[2])), batch_size=32):
    pass
print(",".join(nlp.pipe_names))
"""

# In one process: the same book parsed alone, then extracted, after both are loaded and warmed up.
IN_PROCESS = """
import sys, tempfile, time
from pathlib import Path
from trainer.models.apply import extract_file
from trainer.models.training import load_extractor, parser_for
from trainer.parsing.text import iter_paragraphs
trained, _ = load_extractor(sys.argv[1])
nlp = parser_for(trained.config)
list(nlp.pipe(["We left Caddow at dawn."]))
started, cpu = time.perf_counter(), time.process_time()
for _ in nlp.pipe((p for _, p in iter_paragraphs(sys.argv[2])), batch_size=32):
    pass
parse, parse_cpu = time.perf_counter() - started, time.process_time() - cpu
with tempfile.TemporaryDirectory() as tmp:
    started, cpu = time.perf_counter(), time.process_time()
    extract_file(trained, Path(sys.argv[2]), Path(tmp) / "out.jsonl", nlp=nlp)
    extract, extract_cpu = time.perf_counter() - started, time.process_time() - cpu
print(parse, extract, parse_cpu, extract_cpu)
"""

PEAK = ("import resource, subprocess, sys; r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL); "
        "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss); sys.exit(r.returncode)")
ITINERANT = [sys.executable, "-m", "trainer.cli"]
WORKER_SETTINGS = REPO / "configs" / "dask" / "worker.yaml"  # what docs/scaling.md recommends for workers


def timed(command: list[str]) -> tuple[float, str]:
    started = time.perf_counter()
    done = subprocess.run(command, check=True, capture_output=True, text=True)
    return time.perf_counter() - started, done.stdout


def cpu_timed(command: list[str]) -> tuple[float, float, str]:
    """Wall seconds, CPU seconds (user + system of the child) and stdout: CPU time shifts less with other load."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    wall, out = timed(command)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime), out


def peak_mb(command: list[str]) -> float:
    out = subprocess.run([sys.executable, "-c", PEAK, *command], check=True, capture_output=True, text=True)
    return int(out.stdout.split()[-1]) / 1024


def library(folder: Path, books: int, words: int) -> int:
    folder.mkdir(parents=True)
    return sum(make_book(folder / f"book-{n:04d}.txt", words) for n in range(books))


def identical(a: Path, b: Path) -> bool:
    names = sorted(p.name for p in a.glob("*.jsonl"))
    return names == sorted(p.name for p in b.glob("*.jsonl")) and all(
        (a / n).read_bytes() == (b / n).read_bytes() for n in names)


def one_book(args: argparse.Namespace, model: Path, tmp: Path) -> None:
    book = tmp / "book.txt"
    words = make_book(book, args.words)
    parse_seconds, parse_cpu, components = cpu_timed([sys.executable, "-c", BARE_PARSE, str(args.config), str(book)])
    extract_seconds, extract_cpu, _ = cpu_timed([*ITINERANT, "extract", str(model), str(book), "-o",
                                                 str(tmp / "book.jsonl"), "--no-progress"])
    print(f"1. one book of {words} words; components: {components.strip()}")
    print(f"   bare nlp.pipe process : {parse_seconds:7.1f} s {words / parse_seconds:8.0f} words/s (CPU {parse_cpu:.1f} s)")
    print(f"   extract process       : {extract_seconds:7.1f} s {words / extract_seconds:8.0f} words/s (CPU {extract_cpu:.1f} s)")
    print(f"   ratio extraction/parse words per second: {parse_seconds / extract_seconds:.2f} wall, "
          f"{parse_cpu / extract_cpu:.2f} CPU (target >= 0.90)")
    _, out = timed([sys.executable, "-c", IN_PROCESS, str(model), str(book)])
    parse, extract, parse_cpu, extract_cpu = (float(x) for x in out.split())
    print(f"   in one process, loaded: parse {parse:.1f} s (CPU {parse_cpu:.1f} s), extraction {extract:.1f} s "
          f"(CPU {extract_cpu:.1f} s); parse share of the extraction {parse / extract:.0%} wall, "
          f"{parse_cpu / extract_cpu:.0%} CPU; the work after the parse costs {(extract_cpu - parse_cpu) / parse_cpu:.2f} "
          "of the parse (CPU)")


def parallel(args: argparse.Namespace, model: Path, tmp: Path) -> None:
    books = tmp / "library"
    total = library(books, args.books, args.book_words)
    runs, cpus = {}, {}
    for name, extra in [("jobs1", ["--jobs", "1"]), ("jobs2", ["--jobs", "2"])]:
        runs[name], cpus[name], _ = cpu_timed([*ITINERANT, "extract", str(model), str(books), "-o", str(tmp / name),
                                               "--no-progress", *extra])
    print(f"2. library of {args.books} books, {total} words (CPU: all processes of the run)")
    print(f"   --jobs 1 : {runs['jobs1']:7.1f} s {total / runs['jobs1']:8.0f} words/s (CPU {cpus['jobs1']:.1f} s)")
    print(f"   --jobs 2 : {runs['jobs2']:7.1f} s {total / runs['jobs2']:8.0f} words/s (CPU {cpus['jobs2']:.1f} s); speed-up "
          f"{runs['jobs1'] / runs['jobs2']:.2f}x (target >= 1.70); identical files: {identical(tmp / 'jobs1', tmp / 'jobs2')}")
    if args.skip_dask:
        return
    print("3. the same library on a local Dask cluster of 2 worker processes, started before timing "
          "(CPU: the two workers')")
    choices = [(None, "Dask's default worker settings"), (WORKER_SETTINGS, f"settings of {WORKER_SETTINGS.relative_to(REPO)}")]
    for run, (settings, described) in enumerate(choices * args.dask_repeats):
        output = tmp / f"dask-{run}"
        with dask_settings(settings.parent if settings else None):
            seconds, (cpu, kernel, faults) = on_local_cluster(model, books, output)
        print(f"   {described:<38}: {seconds:7.1f} s {total / seconds:8.0f} words/s (CPU {cpu:.1f} s, "
              f"{kernel:.1f} s of it in the kernel, {faults:,} page faults); "
              f"speed-up {runs['jobs1'] / seconds:.2f}x (target >= 1.60); identical files: {identical(tmp / 'jobs1', output)}")


def _process_usage() -> tuple[float, float, int]:
    usage = resource.getrusage(resource.RUSAGE_SELF)
    return usage.ru_utime + usage.ru_stime, usage.ru_stime, usage.ru_minflt


def on_local_cluster(model: Path, books: Path, output: Path) -> tuple[float, tuple[float, ...]]:
    """Wall seconds of a library extraction on a local Dask cluster of two single-threaded worker processes,
    and what its workers spent: CPU seconds, of which in the kernel, and minor page faults."""
    from dask.distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            Client(cluster) as client:
        before = client.run(_process_usage)
        seconds, _ = timed([*ITINERANT, "extract", str(model), str(books), "-o", str(output),
                            "--no-progress", "--scheduler", cluster.scheduler_address])
        after = client.run(_process_usage)
    return seconds, tuple(sum(after[w][k] - before[w][k] for w in after) for k in range(3))


@contextmanager
def dask_settings(folder: Path | None) -> Iterator[None]:
    """Dask's configuration read as a worker started with ``DASK_CONFIG=folder`` reads it (None: Dask's defaults)."""
    import dask.config

    saved = dict(os.environ)  # a nanny sets its workers' variables in this process's environment before it spawns them
    if folder is not None:
        os.environ["DASK_CONFIG"] = str(folder)  # for the worker processes, which read it when they start
    dask.config.refresh(paths=[*dask.config.paths, *([str(folder)] if folder else [])])  # for the nannies, here
    try:
        yield
    finally:
        os.environ.clear()
        os.environ.update(saved)
        dask.config.refresh()


def memory(args: argparse.Namespace, model: Path, tmp: Path) -> None:
    few, many = (int(n) for n in args.memory_books.split(","))
    peaks, sizes = {}, {}
    for count in (few, many):
        folder = tmp / f"memory-{count}"
        sizes[count] = library(folder, count, args.memory_book_words)
        peaks[count] = peak_mb([*ITINERANT, "extract", str(model), str(folder), "-o", str(tmp / f"out-{count}"),
                                "--no-progress"])
    print(f"4. peak RSS of extract --jobs 1: {few} books ({sizes[few]} words) {peaks[few]:.1f} MB, "
          f"{many} books ({sizes[many]} words) {peaks[many]:.1f} MB; ratio {peaks[many] / peaks[few]:.2f} (target <= 1.10)")


def long_book(args: argparse.Namespace, model: Path, tmp: Path) -> None:
    book = tmp / "long-book.txt"
    words = make_book(book, args.words)
    runs, cpus = {}, {}
    for jobs in (1, 2):
        runs[jobs], cpus[jobs], _ = cpu_timed([*ITINERANT, "extract", str(model), str(book), "-o",
                                               str(tmp / f"long-{jobs}.jsonl"), "--no-progress", "--jobs", str(jobs)])
    # the same book as a library of one (an output folder), where long books are cut the same way
    runs["library"], cpus["library"], _ = cpu_timed([*ITINERANT, "extract", str(model), str(book), "-o",
                                                     str(tmp / "long-library"), "--no-progress", "--jobs", "2"])
    same = (tmp / "long-1.jsonl").read_bytes() == (tmp / "long-2.jsonl").read_bytes() == (
        tmp / "long-library" / "long-book.jsonl").read_bytes()
    from trainer.models.book_parts import book_parts

    print(f"5. one book of {words} words, {book.stat().st_size} bytes, {len(book_parts(book, 'text'))} parts "
          "(CPU: all processes of the run)")
    print(f"   --jobs 1 : {runs[1]:7.1f} s {words / runs[1]:8.0f} words/s (CPU {cpus[1]:.1f} s)")
    print(f"   --jobs 2 : {runs[2]:7.1f} s {words / runs[2]:8.0f} words/s (CPU {cpus[2]:.1f} s), the book in parts; "
          f"speed-up {runs[1] / runs[2]:.2f}x")
    print(f"   as a library of one book, --jobs 2 : {runs['library']:7.1f} s (CPU {cpus['library']:.1f} s); speed-up "
          f"{runs[1] / runs['library']:.2f}x; identical files: {same}")


SECTIONS = {"one-book": one_book, "parallel": parallel, "memory": memory, "long-book": long_book}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sections", default=",".join(SECTIONS), help=f"which to run, of {', '.join(SECTIONS)}")
    parser.add_argument("--words", type=int, default=100_000, help="words of the one-book comparison")
    parser.add_argument("--books", type=int, default=20, help="books in the parallel comparison")
    parser.add_argument("--book-words", type=int, default=5_000,
                        help="words per book in the parallel comparison (rounded up to whole copies of the demo chapter)")
    parser.add_argument("--memory-books", default="10,100", help="the two library sizes of the memory comparison")
    parser.add_argument("--memory-book-words", type=int, default=1_000, help="(books are whole copies of the demo chapter)")
    parser.add_argument("--config", type=Path, default=REPO / "configs" / "default.toml")
    parser.add_argument("--skip-dask", action="store_true")
    parser.add_argument("--dask-repeats", type=int, default=1,
                        help="run the two Dask settings this many times in turn (wall times vary between runs)")
    args = parser.parse_args()
    if args.dask_repeats < 1:
        parser.error(f"--dask-repeats must be at least 1, not {args.dask_repeats}")
    print(f"machine: {machine()}; config: {args.config.name}")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        model = tmp / "model.itin"
        timed([*ITINERANT, "fit", str(REPO / "demo_annotations" / "train"), "-c", str(args.config), "-o", str(model)])
        for name in args.sections.split(","):
            SECTIONS[name.strip()](args, model, tmp)


if __name__ == "__main__":
    main()
