"""Shared helpers for the benchmarks: a big plain-text book made from the demo chapter, and machine facts."""

from __future__ import annotations

import os
import platform
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
CHAPTER = REPO / "demo_annotations" / "unannotated" / "delacott-survey-3.txt"


def machine() -> str:
    cpu = "unknown CPU"
    try:
        for line in open("/proc/cpuinfo", encoding="utf-8"):
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return f"{os.cpu_count()} cores, {cpu}, Python {platform.python_version()}"


def make_book(path: Path, words: int) -> int:
    """Write a plain-text book of at least ``words`` words by repeating the demo chapter; return the word count."""
    chapter = CHAPTER.read_text(encoding="utf-8")
    per_copy = len(chapter.split())
    copies = -(-words // per_copy)
    with open(path, "w", encoding="utf-8") as out:
        for _ in range(copies):
            out.write(chapter)
            out.write("\n\n")
    return copies * per_copy
