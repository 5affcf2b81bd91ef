"""The canonical JSON Lines format: one record per line.

Reading is tolerant of what editors do to text files (a UTF-8 byte-order
mark, CRLF line ends, blank lines); everything else that is wrong is left to
:mod:`trainer.corpus.validate`, which reports it with file and line.
"""

from __future__ import annotations

import codecs
import json
from itertools import chain
from pathlib import Path
from typing import Any, Iterable, Iterator

from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import UnreadableInputError, opening
from trainer.outputs import atomic_output


def read_text(path: Path, *, what: str = "a file") -> str:
    """The whole text of an annotation file in UTF-8 (a byte-order mark dropped), or a located error."""
    try:
        with opening(path, expected=what):
            return Path(path).read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise not_utf8(path) from None


BINARY_FIX = "this is a binary file (a model file, a spreadsheet, an archive?), not text: name the text file meant"


def not_utf8(path: Path, fix: str = "re-save the file as UTF-8") -> UnreadableInputError:
    """The error for a file that is not UTF-8, locating its first undecodable byte (line and byte offset).

    A file with a NUL byte in its first 8 KiB is binary, not text in another encoding: the fix says so.
    """
    decoder, offset, line = codecs.getincrementaldecoder("utf-8")(), 0, 1
    with open(path, "rb") as handle:
        if b"\0" in handle.read(1 << 13):
            fix = BINARY_FIX
        handle.seek(0)
        for block in chain(iter(lambda: handle.read(1 << 16), b""), [b""]):  # the empty block ends the decoding
            try:
                decoder.decode(block, final=not block)
            except UnicodeDecodeError as exc:
                # exc.start counts from the start of the bytes the decoder held back plus this block.
                held = len(exc.object) - len(block)
                bad = offset - held + exc.start
                line += exc.object[:exc.start].count(b"\n")
                return UnreadableInputError(f"{path}: not UTF-8 text: line {line}, byte offset {bad} "
                                            f"(0x{exc.object[exc.start]:02x})", fix)
            line += block.count(b"\n")
            offset += len(block)
    return UnreadableInputError(f"{path}: not UTF-8 text", fix)


def iter_lines(path: Path) -> Iterator[tuple[int, str]]:
    """Yield ``(line_number, line)`` for each non-blank line of a UTF-8 file.

    Line numbers are 1-based and count blank lines, so they match an editor.
    """
    with opening(path, expected="a .jsonl file"):
        handle = open(path, encoding="utf-8-sig", newline=None)
    with handle:
        try:
            for number, line in enumerate(handle, start=1):
                line = line.rstrip("\r\n")
                if line.strip():
                    yield number, line
        except UnicodeDecodeError:
            raise not_utf8(path) from None


def span_to_json(span: tuple[int, int]) -> list[int]:
    return [span[0], span[1]]


def event_to_dict(event: Event) -> dict[str, Any]:
    """The JSON object of one event (confidences only when present)."""
    out: dict[str, Any] = {"trigger": span_to_json(event.trigger)}
    if event.confidence is not None:
        out["confidence"] = round(event.confidence, 4)
    roles = []
    for role in event.roles:
        item: dict[str, Any] = {"role": role.role, "span": span_to_json(role.span)}
        if role.confidence is not None:
            item["confidence"] = round(role.confidence, 4)
        roles.append(item)
    out["roles"] = roles
    return out


def record_to_dict(record: Record) -> dict[str, Any]:
    """The JSON object of one record, keys in the spec's order."""
    out: dict[str, Any] = {"id": record.id, "doc": record.doc, "text": record.text}
    if record.events is not None:
        out["events"] = [event_to_dict(e) for e in record.events]
    if record.meta is not None:
        out["meta"] = record.meta
    return out


def record_from_dict(obj: dict[str, Any]) -> Record:
    """Build a record from an already validated JSON object."""
    events = None
    if "events" in obj:
        events = tuple(
            Event(
                trigger=(e["trigger"][0], e["trigger"][1]),
                roles=tuple(
                    RoleSpan(r["role"], (r["span"][0], r["span"][1]), r.get("confidence"))
                    for r in e.get("roles", [])
                ),
                confidence=e.get("confidence"),
            )
            for e in obj["events"]
        )
    return Record(id=obj["id"], doc=obj["doc"], text=obj["text"], events=events, meta=obj.get("meta"))


def dumps_record(record: Record) -> str:
    """One line of canonical JSONL (no trailing newline), non-ASCII kept as is."""
    return json.dumps(record_to_dict(record), ensure_ascii=False)


def write_jsonl(records: Iterable[Record], path: Path) -> int:
    """Write records atomically (a temporary file renamed into place); return the count."""
    count = 0
    with atomic_output(path) as out:
        for record in records:
            out.write(dumps_record(record) + "\n")
            count += 1
    return count
