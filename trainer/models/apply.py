"""Applying a trained extractor: to records, to a string, and to whole files in batches."""

from __future__ import annotations

from dataclasses import dataclass, field
from itertools import islice
from pathlib import Path
from typing import Callable, Iterable, Iterator, Sequence

from spacy.language import Language
from spacy.tokens import Doc

from trainer.corpus.jsonl import dumps_record
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Record
from trainer.models.training import TrainedExtractor, parser_for
from trainer.parsing.parse import parse_records
from trainer.parsing.text import read_text_file, sentence_records

INPUT_FORMATS = ("text", "jsonl")


def predict_records(
    trained: TrainedExtractor, records: Sequence[Record], *, nlp: Language | None = None,
    docs: Sequence[Doc] | None = None, gold_triggers: bool = False,
) -> list[Record]:
    """Records with predicted events (existing events replaced); ids, docs and meta kept."""
    if docs is None:
        nlp = nlp or parser_for(trained.config)
        docs, _ = parse_records(nlp, records, trained.config.parser)
    return trained.extractor.predict(records, docs, gold_triggers=gold_triggers)


def extract_from_text(trained: TrainedExtractor, text: str, *, doc_name: str = "text",
                      nlp: Language | None = None) -> list[Record]:
    """Split a string into sentences and extract events from each (offsets kept in ``meta``)."""
    nlp = nlp or parser_for(trained.config)
    pairs = list(sentence_records(nlp, text, doc_name=doc_name, source="<string>"))
    return trained.extractor.predict([r for r, _ in pairs], [d for _, d in pairs])


@dataclass
class ExtractionSummary:
    """What an extraction run read and wrote."""

    sentences: int = 0
    events: int = 0
    roles: int = 0
    skipped: list[str] = field(default_factory=list)


def _batches(items: Iterable, size: int) -> Iterator[list]:
    iterator = iter(items)
    while batch := list(islice(iterator, size)):
        yield batch


def extract_file(
    trained: TrainedExtractor, source: Path, target: Path, *, input_format: str = "text", doc_name: str | None = None,
    batch_size: int = 256, nlp: Language | None = None, skip_bad: bool = False,
    on_batch: Callable[[int], None] | None = None,
) -> ExtractionSummary:
    """Extract events from a plain-text or JSONL file and write canonical JSONL, batch by batch.

    Memory holds one batch at a time; read ``target`` back for tables or comparisons.
    """
    nlp = nlp or parser_for(trained.config)
    summary = ExtractionSummary()
    if input_format == "text":
        pairs: Iterable[tuple[Record, Doc | None]] = sentence_records(
            nlp, read_text_file(source), doc_name=doc_name or source.stem, source=str(source))
    else:
        corpus = read_corpus([source], roles=trained.roles, skip_bad=skip_bad)
        summary.skipped = [f"{p.file}:{p.line}: {p.field}: {p.message}" for p in corpus.skipped]
        pairs = ((r, None) for r in corpus.records)
    target.parent.mkdir(parents=True, exist_ok=True)
    with open(target, "w", encoding="utf-8", newline="\n") as out:
        for batch in _batches(pairs, batch_size):
            records = [r for r, _ in batch]
            docs = [d for _, d in batch] if batch[0][1] is not None else None
            for record in predict_records(trained, records, nlp=nlp, docs=docs):
                out.write(dumps_record(record) + "\n")
                summary.sentences += 1
                summary.events += len(record.events or ())
                summary.roles += sum(len(e.roles) for e in record.events or ())
            if on_batch:
                on_batch(len(batch))
    return summary
