"""Peak memory of extraction on 100,000 and 1,000,000 words (target: ratio at most 1.2, under 1 GB).

Each size runs in its own process (``itinerant extract`` on a book made from
the demo chapter) and its peak resident memory is read from the kernel
(``ru_maxrss`` of the finished child). Usage:

    python bench/extract_memory.py [--sizes 100000,1000000] [--config configs/default.toml]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _common import machine, make_book

REPO = Path(__file__).resolve().parent.parent


def peak_mb(command: list[str]) -> tuple[float, float]:
    """Run a command in a fresh child; return its peak RSS in MB and its wall time."""
    started = time.perf_counter()
    code = (f"import resource, subprocess, sys; r = subprocess.run({command!r}); "
            "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss); sys.exit(r.returncode)")
    out = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True)
    return int(out.stdout.split()[-1]) / 1024, time.perf_counter() - started


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="100000,1000000")
    parser.add_argument("--config", type=Path, default=REPO / "configs" / "default.toml")
    args = parser.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    itinerant = str(Path(sys.executable).with_name("itinerant"))
    results = {}
    with tempfile.TemporaryDirectory() as tmp:
        model = Path(tmp) / "model.itin"
        subprocess.run([itinerant, "fit", str(REPO / "demo_annotations" / "train"), "-c", str(args.config),
                        "-o", str(model)], check=True, capture_output=True)
        for size in sizes:
            book = Path(tmp) / f"book-{size}.txt"
            words = make_book(book, size)
            mb, seconds = peak_mb([itinerant, "extract", str(model), str(book), "-o", str(Path(tmp) / f"out-{size}.jsonl"),
                                   "--no-progress"])
            results[size] = (words, mb, seconds)
            book.unlink()
    print(f"machine: {machine()}")
    for size, (words, mb, seconds) in results.items():
        print(f"{words:>9} words: peak RSS {mb:7.1f} MB, {seconds:7.1f} s")
    small, large = results[sizes[0]][1], results[sizes[-1]][1]
    print(f"peak memory ratio largest/smallest: {large / small:.2f} (target <= 1.2); largest under 1 GB: {large < 1024}")


if __name__ == "__main__":
    main()
