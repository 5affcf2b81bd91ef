"""Pre-annotated batches as `itinerant suggest` writes them, built from demo records without training a model."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path
from typing import Sequence

from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.provenance import META_KEY, PREDICTED, events_digest
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Event, Record, RoleSpan

REPO = Path(__file__).resolve().parents[3]
SOURCE = REPO / "demo_annotations" / "test"


def demo_records() -> dict[str, Record]:
    """The demo test records by id."""
    return {r.id: r for r in read_corpus([SOURCE]).records}


def suggestion(record: Record, events: Sequence[Event], rank: int) -> Record:
    """``record`` as a model's suggestion of ``events``: confidences added, provenance ``predicted``, the digest kept."""
    scored = tuple(Event(e.trigger, tuple(RoleSpan(r.role, r.span, round(0.55 + 0.1 * k, 4)) for k, r in enumerate(e.roles)),
                         round(0.95 - 0.1 * rank, 4))
                   for e in events)
    block = {"provenance": PREDICTED, "uncertainty": round(0.9 - rank / 100, 4), "rank": rank,
             "model": "demo.itin sha256:000000000000", "measure": "least_confidence", "prediction_digest": events_digest(scored)}
    return Record(record.id, record.doc, record.text, scored, {META_KEY: block})


def write_batch(path: Path, records: Sequence[Record]) -> list[Record]:
    write_jsonl(records, path)
    return list(records)


def start_server(path: Path, port: int = 0) -> tuple[subprocess.Popen, str]:
    """`itinerant review FILE --port PORT --no-open` in a child process; returns it and the page's address."""
    process = subprocess.Popen([sys.executable, "-m", "trainer.cli", "review", str(path), "--port", str(port), "--no-open"],
                               stderr=subprocess.PIPE, text=True, cwd=REPO)
    line = process.stderr.readline()
    assert " at http://127.0.0.1:" in line, line + process.stderr.read()
    return process, line.split(" at ")[1].split()[0]
