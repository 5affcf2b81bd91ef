"""The file behind the review page: what the page is shown, and how one change to one record is checked and saved.

:class:`ReviewFile` holds a canonical JSONL file (a batch from ``suggest``,
or any annotation file). Each change the page sends names one record, the
events the record should now have, an action (:data:`ACTIONS`) and the
*version* of the file the page was showing (a digest of its bytes). A change
is saved only when:

1. the file on disk still has that version; otherwise it was changed since
   the page loaded it (another tab, another program) and the change is
   refused with :class:`~trainer.errors.StaleCopyError`, never merged or
   overwritten;
2. the changed line passes the same checks as ``itinerant check``
   (:func:`trainer.corpus.validate.check_line`, ids unique across the file);
   errors refuse the change with :class:`~trainer.errors.CorpusError`,
   warnings are saved and shown.

The file is then rewritten atomically (:func:`trainer.outputs.write_text`):
every other line is written back byte for byte, the changed line in the
canonical key order. A kill at any moment leaves the old file or the new one.

Provenance (``meta["itinerant"]["provenance"]``, docs/retraining.md) is
stamped as ``merge`` would judge it, so a saved batch merges as it looks:

- ``edit``: events changed by hand. A suggested record (one with a
  ``prediction_digest``) whose events now differ from the prediction becomes
  ``corrected``; one edited back to the prediction keeps what it stated. A
  record without a digest was annotated by a person: ``gold``.
- ``accept``: the sentence is right as it stands: ``gold``, or ``corrected``
  when its events differ from the prediction. The model's confidences go.
- ``reviewed``: checked and changed: ``corrected``. The confidences go.
- ``restore``: undo: the events and provenance the page had before its last
  change (the provenance may be ``predicted`` again, or none; the events may
  be ``None`` again for a record that was not annotated).
"""

from __future__ import annotations

import hashlib
import json
import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Sequence

from trainer.corpus.convert.columns import tokenise
from trainer.corpus.jsonl import event_to_dict, iter_lines, record_from_dict
from trainer.corpus.provenance import (
    CORRECTED, GOLD, META_KEY, PROVENANCES, REVIEWED, events_digest, itinerant_meta, provenance_problem,
    resolve_provenance,
)
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.corpus.validate import FileCheck, check_line
from trainer.errors import CorpusError, StaleCopyError, opening
from trainer.outputs import write_text

CANONICAL_KEYS = ("id", "doc", "text", "events", "meta")
MAX_LISTED = 10


def file_version(data: bytes) -> str:
    """The version of a file's contents: the first 16 hex digits of their SHA-256."""
    return hashlib.sha256(data).hexdigest()[:16]


def _without_confidences(events: list[dict[str, Any]]) -> list[dict[str, Any]]:
    return [{"trigger": e.get("trigger"), "roles": [{k: v for k, v in r.items() if k != "confidence"}
                                                     for r in e.get("roles", []) if isinstance(r, dict)]}
            for e in events if isinstance(e, dict)]


def _prediction_digest(obj: dict[str, Any]) -> str | None:
    return ((obj.get("meta") or {}).get(META_KEY) or {}).get("prediction_digest")


def _digest_of(events: list[dict[str, Any]]) -> str:
    return events_digest(record_from_dict({"id": "", "doc": "", "text": "", "events": events}).events)


def _after_edit(obj: dict[str, Any], events: list[dict[str, Any]], sent: str | None) -> tuple[list, str | None]:
    block = (obj.get("meta") or {}).get(META_KEY) or {}
    digest = block.get("prediction_digest")
    if digest is None:
        return events, GOLD
    return events, CORRECTED if _digest_of(events) != digest else block.get("provenance")


def _accept(obj: dict[str, Any], events: list[dict[str, Any]], sent: str | None) -> tuple[list, str | None]:
    digest = _prediction_digest(obj)
    plain = _without_confidences(events)
    return plain, CORRECTED if digest is not None and _digest_of(plain) != digest else GOLD


def _mark_reviewed(obj: dict[str, Any], events: list[dict[str, Any]], sent: str | None) -> tuple[list, str | None]:
    return _without_confidences(events), CORRECTED


def _restore(obj: dict[str, Any], events: list[dict[str, Any]] | None, sent: str | None) -> tuple[list | None, str | None]:
    return events, sent


# action -> (new events, new stated provenance) from (the record's JSON on disk, the events sent, the provenance sent)
ACTIONS: dict[str, Callable[[dict[str, Any], list, str | None], tuple[list, str | None]]] = {
    "edit": _after_edit,
    "accept": _accept,
    "reviewed": _mark_reviewed,
    "restore": _restore,
}


def record_status(record: Record) -> str:
    """``reviewed`` when a person has checked the record (provenance resolves to corrected or gold), else ``unreviewed``."""
    return "reviewed" if record.is_annotated and resolve_provenance(record) in REVIEWED else "unreviewed"


def lowest_confidence(record: Record) -> float | None:
    """The lowest confidence of any trigger or role of the record, ``None`` when it has none."""
    values = [v for e in record.events or () for v in (e.confidence, *(r.confidence for r in e.roles)) if v is not None]
    return min(values) if values else None


def record_view(record: Record) -> dict[str, Any]:
    """What the page needs of one record: its events as JSON, its tokens (cut at every span edge) and its state."""
    edges = {edge for e in record.events or () for span in (e.trigger, *(r.span for r in e.roles)) for edge in span}
    block = itinerant_meta(record)
    return {
        "id": record.id,
        "doc": record.doc,
        "text": record.text,
        "tokens": [list(t) for t in tokenise(record.text, edges)],
        "events": None if record.events is None else [event_to_dict(e) for e in record.events],
        "provenance": block.get("provenance") if isinstance(block.get("provenance"), str) else None,
        "suggested": "prediction_digest" in block,
        "status": record_status(record),
        "lowest": lowest_confidence(record),
    }


@dataclass
class Loaded:
    """The file as last read: its bytes' version, raw lines, parsed objects and records, in file order."""

    version: str
    lines: list[tuple[int, str]]
    objects: list[dict[str, Any]]
    records: list[Record]


@dataclass
class SaveResult:
    """A saved change: the file's new version, the record as the page should now show it, and any warnings."""

    version: str
    record: dict[str, Any]
    warnings: list[str] = field(default_factory=list)
    reviewed: int = 0
    total: int = 0


class ReviewFile:
    """One canonical JSONL file under review; safe to call from several threads (saves are serialised)."""

    def __init__(self, path: Path | str, *, roles: Sequence[str] = DEFAULT_ROLES) -> None:
        self.path = Path(path)
        self.roles = tuple(roles)
        self._lock = threading.Lock()
        self._last: Loaded | None = None  # the file as last read or written, reused while its bytes are unchanged

    def read(self) -> Loaded:
        """Read and check the whole file; a file with errors is refused (:class:`CorpusError`) with the first ones listed.

        The bytes are read every time; they are parsed and checked again only
        when their version differs from the last one read or written here.
        """
        with opening(self.path, expected="one .jsonl file to review"):
            data = self.path.read_bytes()
        if self._last is not None and self._last.version == file_version(data):
            return self._last
        lines = list(iter_lines(self.path))
        seen: set[str] = set()
        objects, records, errors = [], [], []
        for number, line in lines:
            checked = check_line(str(self.path), number, line, self.roles, seen)
            errors += [str(p) for p in checked.errors]
            problem = None
            if checked.records:
                record = checked.records[0][2]
                problem = provenance_problem(record)
                records.append(record)
                objects.append(json.loads(line))
            if problem:
                errors.append(f"{self.path}:{number}: meta: {problem}")
        if errors:
            shown = "\n".join(errors[:MAX_LISTED]) + (f"\n... and {len(errors) - MAX_LISTED} more" if len(errors) > MAX_LISTED else "")
            raise CorpusError(f"{self.path} has {len(errors)} error(s), so it cannot be reviewed safely:\n{shown}",
                              f"fix them first (`itinerant check {self.path}` lists them all)")
        if not records:
            raise CorpusError(f"{self.path} holds no records", "review a JSONL file with one record per line, e.g. a batch from `itinerant suggest`")
        self._last = Loaded(file_version(data), lines, objects, records)
        return self._last

    def snapshot(self) -> dict[str, Any]:
        """Everything the page shows: the file, its version, the roles, every record's view and the reviewed count."""
        loaded = self.read()
        views = [record_view(r) for r in loaded.records]
        return {"file": str(self.path), "version": loaded.version, "roles": list(self.roles), "records": views,
                "reviewed": sum(v["status"] == "reviewed" for v in views), "total": len(views)}

    def save(self, record_id: str, *, version: str, events: Any, action: str, provenance: str | None = None) -> SaveResult:
        """Apply one change to one record and write the file; see the module docstring for what is refused."""
        if action not in ACTIONS:
            raise CorpusError(f"unknown action {action!r}", f"use one of: {', '.join(ACTIONS)}")
        if not isinstance(events, list) and not (events is None and action == "restore"):
            raise CorpusError(f"record {record_id!r}: events must be a list, got {type(events).__name__}",
                              "send [] for a sentence without motion")
        if provenance is not None and provenance not in PROVENANCES:
            raise CorpusError(f"provenance {provenance!r} is not one of {', '.join(PROVENANCES)}", "send one of them, or none")
        with self._lock:
            loaded = self.read()
            if loaded.version != version:
                raise StaleCopyError(
                    f"{self.path} changed on disk since this page loaded it (page has version {version}, "
                    f"the file now {loaded.version}); the change to {record_id!r} was not saved",
                    "reload the page to see the file as it is now, then make the change again")
            positions = [i for i, r in enumerate(loaded.records) if r.id == record_id]
            if not positions:
                raise CorpusError(f"{self.path} has no record with id {record_id!r}", "reload the page")
            at = positions[0]
            original = loaded.objects[at]
            line_number = loaded.lines[at][0]
            others = {r.id for r in loaded.records if r.id != record_id}
            # The events as sent are checked first: the provenance rules read them.
            self._check(self._changed(original, events, provenance), line_number, others)
            new_events, stated = ACTIONS[action](original, events, provenance)
            line, checked = self._check(self._changed(original, new_events, stated), line_number, others)
            record = checked.records[0][2]
            lines = [text for _, text in loaded.lines]
            lines[at] = line
            text = "".join(f"{one}\n" for one in lines)
            self._last = None
            write_text(self.path, text)
            new_records = [*loaded.records[:at], record, *loaded.records[at + 1:]]
            objects = [*loaded.objects[:at], json.loads(line), *loaded.objects[at + 1:]]
            self._last = Loaded(file_version(text.encode("utf-8")), list(enumerate(lines, start=1)), objects, new_records)
            return SaveResult(self._last.version, record_view(record),
                              [f"{p.field}: {p.message} ({p.hint})" for p in checked.warnings],
                              sum(record_status(r) == "reviewed" for r in new_records), len(new_records))

    def _check(self, obj: dict[str, Any], line_number: int, others: set[str]) -> tuple[str, FileCheck]:
        """The record's line and what the rules of ``itinerant check`` say of it; errors refuse the change."""
        line = json.dumps(obj, ensure_ascii=False)
        checked = check_line(str(self.path), line_number, line, self.roles, set(others))  # check_line adds the id
        if checked.errors:
            raise CorpusError("the change breaks the record:\n" + "\n".join(str(p) for p in checked.errors),
                              "undo it, or mark the spans again on the page")
        return line, checked

    @staticmethod
    def _changed(original: dict[str, Any], events: list, stated: str | None) -> dict[str, Any]:
        """The record's JSON object with new events and provenance, keys in the canonical order, other keys kept."""
        obj = dict(original)
        obj["events"] = events
        if events is None:  # undoing the first annotation of an unannotated record
            del obj["events"]
        meta = dict(obj.get("meta") or {})
        block = dict(meta.get(META_KEY) or {})
        if stated is None:
            block.pop("provenance", None)
        else:
            block["provenance"] = stated
        if block:
            meta[META_KEY] = block
        else:
            meta.pop(META_KEY, None)
        obj["meta"] = meta
        if not meta:
            del obj["meta"]
        return {**{k: obj[k] for k in CANONICAL_KEYS if k in obj}, **{k: v for k, v in obj.items() if k not in CANONICAL_KEYS}}
