"""Extraction throughput against bare spaCy parsing of the same text with the same components.

Prints words per second of (a) parsing alone with the extractor's pipeline and
(b) the whole extraction (parse, features, both stages, writing JSONL), and
their ratio (target: at least 0.8). Usage:

    python bench/extract_throughput.py [--words 100000] [--config configs/default.toml]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from _common import machine, make_book

from trainer.config import load_config
from trainer.corpus.reader import read_corpus
from trainer.models.apply import extract_file
from trainer.models.training import fit_extractor, parser_for
from trainer.parsing.text import iter_paragraphs

REPO = Path(__file__).resolve().parent.parent


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--words", type=int, default=100_000)
    parser.add_argument("--config", type=Path, default=REPO / "configs" / "default.toml")
    args = parser.parse_args()
    config = load_config(args.config)
    nlp = parser_for(config)
    trained = fit_extractor(read_corpus([REPO / "demo_annotations" / "train"]).annotated(), config, nlp=nlp)
    with tempfile.TemporaryDirectory() as tmp:
        book = Path(tmp) / "book.txt"
        words = make_book(book, args.words)
        started = time.perf_counter()
        for _ in nlp.pipe((p for _, p in iter_paragraphs(book)), batch_size=32):
            pass
        parse_seconds = time.perf_counter() - started
        started = time.perf_counter()
        summary = extract_file(trained, book, Path(tmp) / "out.jsonl", nlp=nlp)
        extract_seconds = time.perf_counter() - started
    print(f"machine: {machine()}")
    print(f"pipeline components: {', '.join(nlp.pipe_names)}; config: {args.config.name}")
    print(f"text: {words} words, {summary.sentences} sentences, {summary.events} events extracted")
    print(f"parse only : {parse_seconds:8.1f} s  {words / parse_seconds:8.0f} words/s")
    print(f"extraction : {extract_seconds:8.1f} s  {words / extract_seconds:8.0f} words/s")
    print(f"ratio extraction/parse words per second: {parse_seconds / extract_seconds:.2f} (target >= 0.80)")


if __name__ == "__main__":
    main()
