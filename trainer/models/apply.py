"""Applying a trained extractor: to records, to a string, and to whole files in batches.

File extraction streams: input is read, parsed, labelled and written one batch
at a time, so memory does not grow with the book. The records go to
``<output>.partial``, which is renamed to the output only when the run is
complete; an earlier output is never touched before that. An interrupted run
can be resumed from its partial file: complete records are kept, the torn tail
is cut (for plain text, back to the start of the last paragraph written), and
extraction goes on from there, giving the same file as an uninterrupted run.
The side file ``<output>.input`` records the input's SHA-256, format and doc
name, so a resume with another input is refused instead of mixing the two.

A :class:`trainer.models.library.Part` limits a run to a range of the input
(paragraphs of a text, records of a JSONL file), so that workers can share a
long book (:mod:`trainer.models.book_parts`); a part's sentences are numbered from 1.
"""

from __future__ import annotations

import hashlib
import json
import os
from dataclasses import dataclass, field
from itertools import islice
from pathlib import Path
from typing import Callable, Iterable, Iterator, Sequence

from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import check_batch_size
from trainer.corpus.jsonl import dumps_record, not_utf8
from trainer.corpus.reader import iter_records
from trainer.corpus.records import Record
from trainer.errors import CorpusError, ItinerantError, UnreadableInputError
from trainer.models.library import WHOLE, Part
from trainer.models.training import TrainedExtractor, parser_for
from trainer.outputs import WRITE_ERRNOS, check_output, output_lock, publish, write_failed, write_text
from trainer.parsing.parse import parse_records
from trainer.parsing.text import iter_paragraphs, paragraphs, sentence_records

Progress = Callable[[int, float], None]  # sentences written so far, share of the input read
PARTIAL_SUFFIX = ".partial"
INPUT_NOTE_SUFFIX = ".input"


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
    pairs = list(sentence_records(nlp, paragraphs(text), doc_name=doc_name, source="<string>"))
    return trained.extractor.predict([r for r, _ in pairs], [d for _, d in pairs])


@dataclass
class ExtractionSummary:
    """What an extraction run read and wrote (``resumed``: records kept from an earlier run)."""

    sentences: int = 0
    events: int = 0
    roles: int = 0
    resumed: int = 0
    skipped: list[str] = field(default_factory=list)


@dataclass
class ResumePoint:
    """Where an interrupted output file is cut and extraction goes on."""

    keep_bytes: int = 0
    records: int = 0
    paragraph: int | None = None
    last_id: str | None = None


def resume_point(target: Path, *, plain_text: bool) -> ResumePoint:
    """Complete records at the head of ``target``; for plain text, only whole paragraphs."""
    point = ResumePoint()
    if not target.exists():
        return point
    position = count = 0
    paragraph_start = (0, 0, None)
    with open(target, "rb") as handle:
        for raw in handle:
            try:
                obj = json.loads(raw) if raw.endswith(b"\n") else None
            except ValueError:
                obj = None
            if obj is None:
                break
            if plain_text and obj.get("meta", {}).get("paragraph") != paragraph_start[2]:
                paragraph_start = (position, count, obj["meta"]["paragraph"])
            position += len(raw)
            count += 1
            point.last_id = obj["id"]
    if plain_text and paragraph_start[2] is not None:
        return ResumePoint(paragraph_start[0], paragraph_start[1], paragraph_start[2])
    point.keep_bytes, point.records = position, count
    return point


def _input_size(source: Path, *, plain_text: bool) -> int:
    """What progress is measured against: bytes of a text file, lines of a JSONL file (one extra read)."""
    if plain_text:
        return os.path.getsize(source)
    with open(source, "rb") as handle:
        return sum(1 for _ in handle)


def _batches(items: Iterable, size: int) -> Iterator[list]:
    iterator = iter(items)
    while batch := list(islice(iterator, size)):
        yield batch


def _text_pairs(nlp: Language, source: Path, doc_name: str, point: ResumePoint,
                read: list[int], part: Part) -> Iterator[tuple[Record, Doc | None]]:
    def remaining() -> Iterator[tuple[int, str]]:
        for offset, paragraph in iter_paragraphs(source):
            read[0] = offset
            if part.end is not None and offset >= part.end:
                return
            if offset >= part.first and (point.paragraph is None or offset >= point.paragraph):
                yield offset, paragraph

    return sentence_records(nlp, remaining(), doc_name=doc_name, source=str(source), first_number=point.records + 1)


def _jsonl_pairs(trained: TrainedExtractor, source: Path, point: ResumePoint, skipped: list,
                 read: list[int], skip_bad: bool, part: Part) -> Iterator[tuple[Record, Doc | None]]:
    """The part's records after those an earlier run wrote.

    Every part reads the file from its start, so a record left out as bad is
    reported only by the part holding the good record before it (the first
    part, for bad records before any good one).
    """
    records = iter_records(source, roles=trained.roles, skip_bad=skip_bad, skipped=skipped)
    first = max(part.first, 1)
    reached = first == 1
    for number, record in enumerate(records, start=1):
        read[0] = number
        if part.end is not None and number >= part.end:
            break
        if number < first:
            continue
        if not reached:
            del skipped[:]  # bad records before the part's first: an earlier part reports them
            reached = True
        kept = number - first + 1  # the record's place in this part's output
        if kept < point.records:
            continue
        if kept == point.records:
            if record.id != point.last_id:
                raise CorpusError(f"{source}: record {number} is {record.id!r} but the output to resume ends with "
                                  f"{point.last_id!r}", "resume only with the same input, or start a new output file")
            continue
        yield record, None
    if not reached:
        del skipped[:]  # the part holds no record: its bad records are reported by an earlier part


def partial_path(target: Path) -> Path:
    """Where a run writes until it is complete: ``<target>.partial``, renamed to ``target`` at the end."""
    return target.with_name(target.name + PARTIAL_SUFFIX)


def input_note_path(output: Path) -> Path:
    """The side file naming the input an output (or a partial output) was made from."""
    return output.with_name(output.name + INPUT_NOTE_SUFFIX)


def input_note(source: Path, input_format: str, doc_name: str, part: Part = WHOLE) -> dict[str, str]:
    """What identifies an extraction's input: the SHA-256 of its bytes, its format, the doc name used, and the
    range of it a part covers (no ``part`` key for a whole book)."""
    digest = hashlib.sha256()
    with open(source, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    note = {"sha256": digest.hexdigest(), "format": input_format, "doc": doc_name}
    if part != WHOLE:
        note["part"] = str(part)
    return note


def _recorded_note(output: Path) -> dict[str, str] | None:
    try:
        note = json.loads(input_note_path(output).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return note if isinstance(note, dict) else None


def check_source(source: Path) -> None:
    """Refuse a missing input or a folder before anything is loaded."""
    if not source.exists():
        raise UnreadableInputError(f"{source}: no such file", "check the input path")
    if not source.is_file():
        raise UnreadableInputError(f"{source}: is a folder, not a file", "name a .txt or .jsonl file")


def _resume_base(target: Path, wanted: dict[str, str]) -> Path | None:
    """The output an interrupted run left (its partial file first), checked to come from the same input."""
    partial = partial_path(target)
    base = partial if partial.exists() else target if target.exists() else None
    if base is None:
        return None
    recorded = _recorded_note(base)
    if recorded is None:
        raise CorpusError(f"{base} has no readable record of its input ({input_note_path(base).name} beside it), "
                          "so resuming could mix two inputs", "start a new output file (leave out --resume)")
    if recorded != wanted:
        raise CorpusError(f"{base} was not made from this input (SHA-256, format and doc name are recorded in "
                          f"{input_note_path(base).name})",
                          "resume only with the same input, or start a new output file (leave out --resume)")
    return base


def extract_file(
    trained: TrainedExtractor, source: Path, target: Path, *, input_format: str = "text", doc_name: str | None = None,
    batch_size: int = 256, nlp: Language | None = None, skip_bad: bool = False, resume: bool = False,
    on_progress: Progress | None = None, part: Part = WHOLE,
) -> ExtractionSummary:
    """Extract events from a plain-text or JSONL file into canonical JSONL, one batch at a time.

    Records go to ``<target>.partial``, which replaces ``target`` only when the
    run is complete, so an earlier ``target`` survives a crash or a kill. With
    ``resume``, the partial file (or a complete ``target``) is continued (see
    the module docstring) after checking, against its side file
    ``<output>.input``, that it was made from the same input. ``target`` may not
    be ``source``, and a second run writing the same ``target`` is refused.
    ``part`` extracts only that range of the input, its sentences numbered from 1.
    """
    source, target = Path(source), Path(target)
    check_batch_size(batch_size)
    check_source(source)
    check_output(target, inputs=[source], what="extraction output")
    plain_text = input_format == "text"
    doc_name = doc_name or source.stem
    with output_lock(target):
        wanted = input_note(source, input_format, doc_name, part)
        base = _resume_base(target, wanted) if resume else None
        point = resume_point(base, plain_text=plain_text) if base else ResumePoint()
        partial = partial_path(target)
        if base == target:
            with open(target, "rb") as old, open(partial, "wb") as new:
                new.write(old.read(point.keep_bytes))
        elif base == partial:
            os.truncate(partial, point.keep_bytes)
        else:
            partial.write_bytes(b"")
        write_text(input_note_path(partial), json.dumps(wanted, sort_keys=True) + "\n")
        nlp = nlp or parser_for(trained.config)
        summary = ExtractionSummary(resumed=point.records)
        read = [0]
        total = _input_size(source, plain_text=plain_text) if on_progress else 0
        pairs = (_text_pairs(nlp, source, doc_name, point, read, part) if plain_text
                 else _jsonl_pairs(trained, source, point, summary.skipped, read, skip_bad, part))
        with open(partial, "a", encoding="utf-8", newline="\n") as out:
            try:
                for batch in _batches(pairs, batch_size):
                    _write_batch(trained, nlp, batch, out, summary)
                    if on_progress:
                        on_progress(summary.sentences, min(1.0, read[0] / total) if total else 1.0)
                publish(out, partial, target)
            except (UnicodeDecodeError, UnreadableInputError) as exc:  # not UTF-8: resuming cannot get past it
                if base is None:  # nothing of an earlier run in the partial file
                    partial.unlink()
                    input_note_path(partial).unlink()
                raise (not_utf8(source) if isinstance(exc, UnicodeDecodeError) else exc) from None
            except ItinerantError:  # a bad record: a partial file holding nothing is of no use to a resume
                if base is None and summary.sentences == 0:
                    partial.unlink()
                    input_note_path(partial).unlink()
                raise
            except OSError as exc:
                if exc.errno not in WRITE_ERRNOS:
                    raise
                raise write_failed(target, exc) from None
        os.replace(input_note_path(partial), input_note_path(target))
    if on_progress:
        on_progress(summary.sentences, 1.0)
    return summary


def _write_batch(trained: TrainedExtractor, nlp: Language, batch: list[tuple[Record, Doc | None]], out,
                 summary: ExtractionSummary) -> None:
    records = [r for r, _ in batch]
    docs = [d for _, d in batch] if batch[0][1] is not None else None
    for record in predict_records(trained, records, nlp=nlp, docs=docs):
        out.write(dumps_record(record) + "\n")
        summary.sentences += 1
        summary.events += len(record.events or ())
        summary.roles += sum(len(e.roles) for e in record.events or ())
    out.flush()
