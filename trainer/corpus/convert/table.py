"""A flat table, one row per role instance, for annotators who edit in a spreadsheet.

CSV or TSV, chosen by the file extension (``.csv`` or ``.tsv``). Columns::

    id, doc, status, event, trigger_start, trigger_end, trigger_text, role, start, end, span_text, text, meta

``status`` is ``annotated`` or ``unannotated``; ``event`` numbers the events of
a record from 1. A negative record is one row with an empty ``event``; an event
without roles is one row with an empty ``role``; an unannotated record is one
row with status ``unannotated``. ``text`` and ``meta`` (JSON, empty when
absent) repeat on every row of a record; ``trigger_text`` and ``span_text`` are
there for people and are checked on reading against the text at the offsets.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable, Iterator

import pandas as pd

from trainer.corpus.convert.base import Conversion, writable
from trainer.corpus.jsonl import not_utf8
from trainer.corpus.records import DEFAULT_ROLES, Event, Offsets, Record, RoleSpan
from trainer.corpus.validate import record_problems, strict_loads
from trainer.errors import CorpusError, StrictJSONError, TableFormatError, UnreadableInputError
from trainer.outputs import write_text

COLUMNS = (
    "id", "doc", "status", "event", "trigger_start", "trigger_end", "trigger_text",
    "role", "start", "end", "span_text", "text", "meta",
)  # fmt: skip
SEPARATORS = {".csv": ",", ".tsv": "\t"}
ANNOTATED, UNANNOTATED = "annotated", "unannotated"
MAX_LISTED = 20
SPAN_COLUMNS = {  # start, end and text columns of each kind of span
    "trigger": ("trigger_start", "trigger_end", "trigger_text"),
    "role": ("start", "end", "span_text"),
}
# CRLF as in RFC 4180: the csv writer then quotes every cell holding \r or \n (with "\n" alone a bare \r
# in a cell would go out unquoted and read back as a line break).
LINE_END = "\r\n"
HEADER_ROWS = 1  # spreadsheet row numbers count the header as row 1


def table_separator(path: Path | str) -> str:
    """``,`` for ``.csv``, a tab for ``.tsv`` (any case); anything else is refused."""
    suffix = Path(path).suffix.lower()
    if suffix not in SEPARATORS:
        raise TableFormatError(f"{path}: a table must end in {' or '.join(SEPARATORS)}, not {suffix or 'nothing'!r}",
                               "rename the file (.csv for commas, .tsv for tabs)")
    return SEPARATORS[suffix]


# ---------------------------------------------------------------- writing


def write_table(records: Iterable[Record], path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> list[str]:
    """Write one row per role instance as CSV or TSV (by extension); return the losses."""
    path = Path(path)
    separator = table_separator(path)
    losses: list[str] = []
    rows = []
    for record in records:
        record, lost = writable(record, roles, keeps_confidence=False)
        losses.extend(lost)
        rows.extend(_rows(record))
    frame = pd.DataFrame(rows, columns=list(COLUMNS), dtype=str)
    write_text(path, frame.to_csv(sep=separator, index=False, lineterminator=LINE_END))
    return losses


def _rows(record: Record) -> Iterator[dict[str, str]]:
    """The rows of one record (at least one, so every record is visible in the sheet)."""
    base = {
        "id": record.id,
        "doc": record.doc,
        "status": ANNOTATED if record.is_annotated else UNANNOTATED,
        "text": record.text,
        "meta": "" if record.meta is None else json.dumps(record.meta, ensure_ascii=False),
    }
    if not record.events:
        yield _row(base)
    for number, event in enumerate(record.events or (), start=1):
        trigger = {
            "event": str(number),
            "trigger_start": str(event.trigger[0]),
            "trigger_end": str(event.trigger[1]),
            "trigger_text": record.span_text(event.trigger),
        }
        if not event.roles:
            yield _row(base, trigger)
        for role in event.roles:
            span = {"role": role.role, "start": str(role.span[0]), "end": str(role.span[1]),
                    "span_text": record.span_text(role.span)}
            yield _row(base, trigger, span)


def _row(*parts: dict[str, str]) -> dict[str, str]:
    row = dict.fromkeys(COLUMNS, "")
    for part in parts:
        row.update(part)
    return row


# ---------------------------------------------------------------- reading

EVENT_CELLS = ("event", *SPAN_COLUMNS["trigger"], "role", *SPAN_COLUMNS["role"])


def _whole(cell: str) -> bool:
    """A whole number written in ASCII digits (``str.isdigit`` also takes '²' and other scripts' digits)."""
    return cell.isascii() and cell.isdigit()



@dataclass(frozen=True)
class _Row:
    """One data row and its spreadsheet row number."""

    number: int
    cells: dict[str, str]

    def __getitem__(self, column: str) -> str:
        return self.cells[column]


def read_table(path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> Conversion:
    """Read a table back into records: rows grouped by id (first-seen order), then by event number.

    Offsets are the data: a ``trigger_text`` or ``span_text`` that differs from
    the text at the offsets is reported as a loss with its row number and the
    offsets are kept. Rows that cannot be read (bad numbers, offsets out of
    range, one record with two texts, ...) are all listed in one
    :class:`CorpusError`.
    """
    path = Path(path)
    reader = _TableReader(path, roles)
    groups: dict[str, list[_Row]] = {}
    for row in reader.rows():
        groups.setdefault(row["id"], []).append(row)
    records = [reader.record(rows) for rows in groups.values()]
    if reader.errors:
        shown = "\n".join(reader.errors[:MAX_LISTED])
        more = f"\n... and {len(reader.errors) - MAX_LISTED} more" if len(reader.errors) > MAX_LISTED else ""
        raise CorpusError(f"{path}: {len(reader.errors)} row error(s):\n{shown}{more}",
                          "correct those cells (row numbers count the header as row 1)")
    return Conversion(records=[r for r in records if r is not None], losses=reader.losses)


class _TableReader:
    """Collects the errors and losses of one table while building its records."""

    def __init__(self, path: Path, roles: tuple[str, ...]) -> None:
        self.path, self.roles = path, roles
        self.errors: list[str] = []
        self.losses: list[str] = []

    def error(self, row: _Row, message: str) -> None:
        self.errors.append(f"row {row.number}: {message}")

    def rows(self) -> list[_Row]:
        """The non-empty data rows, every cell a string."""
        frame = self.load()
        missing = [c for c in COLUMNS if c not in frame.columns]
        if missing:
            raise CorpusError(f"{self.path}: no column(s) {', '.join(missing)}",
                              f"the header must name: {', '.join(COLUMNS)}")
        extra = [c for c in frame.columns if c not in COLUMNS]
        if extra:
            self.losses.append(f"{self.path}: column(s) {', '.join(map(str, extra))} are not part of the table format; ignored")
        rows = [_Row(i + 1 + HEADER_ROWS, cells) for i, cells in enumerate(frame[list(COLUMNS)].to_dict("records"))]
        for row in rows:
            if not row["id"] and any(row.cells.values()):
                self.error(row, "no id")
        return [row for row in rows if row["id"]]

    def load(self) -> pd.DataFrame:
        separator = table_separator(self.path)
        try:
            with open(self.path, encoding="utf-8-sig", newline="") as handle:
                header = handle.readline()
            if separator == "," and ";" in header and "," not in header:
                raise CorpusError(f"{self.path}: its header row is cut by semicolons, but a .csv table is cut by commas",
                                  "save the sheet as CSV with commas (spreadsheets set to a decimal comma use "
                                  "semicolons), or as tab-separated .tsv")
            return pd.read_csv(self.path, sep=separator, dtype=str, keep_default_na=False,
                               skip_blank_lines=False, encoding="utf-8-sig")
        except FileNotFoundError:
            raise UnreadableInputError(f"{self.path}: no such file", "check the path") from None
        except UnicodeDecodeError:
            raise not_utf8(self.path, "save the sheet as 'CSV UTF-8' (or TSV in UTF-8)") from None
        except pd.errors.EmptyDataError:
            raise CorpusError(f"{self.path}: is empty, not even a header row",
                              f"write the header ({', '.join(COLUMNS)}) and one row per role") from None
        except pd.errors.ParserError as exc:
            raise CorpusError(f"{self.path}: not a readable table ({exc})",
                              "check the quoting and that every row has the same number of cells") from None

    def record(self, rows: list[_Row]) -> Record | None:
        """The record of one id's rows, or None when they hold errors."""
        first = rows[0]
        errors_before = len(self.errors)
        for column in ("doc", "status", "text", "meta"):
            for row in rows[1:]:
                if row[column] != first[column]:
                    self.error(row, f"{column} differs from row {first.number} of the same id {first['id']!r}")
        meta = self.meta(first)
        events = None
        if first["status"] == ANNOTATED:
            events = self.events(rows, first["text"])
        elif first["status"] == UNANNOTATED:
            self.no_events(rows)
        else:
            self.error(first, f"status {first['status']!r}; write {ANNOTATED!r} or {UNANNOTATED!r}")
        if len(self.errors) > errors_before:
            return None
        record = Record(id=first["id"], doc=first["doc"], text=first["text"], events=events, meta=meta)
        for problem in record_problems(record, str(self.path), first.number, self.roles):
            self.error(first, f"{problem.field}: {problem.message}")
        return None if len(self.errors) > errors_before else record

    def meta(self, row: _Row) -> dict[str, Any] | None:
        if not row["meta"]:
            return None
        try:
            meta = strict_loads(row["meta"])
        except StrictJSONError as exc:
            self.error(row, f"meta is not clean JSON ({exc.cause})")
            return None
        if not isinstance(meta, dict):
            self.error(row, f"meta is a JSON {type(meta).__name__}; write a JSON object or leave it empty")
        return meta

    def no_events(self, rows: list[_Row]) -> None:
        for row in rows:
            filled = [c for c in EVENT_CELLS if row[c]]
            if filled:
                self.error(row, f"status {UNANNOTATED!r} but column(s) {', '.join(filled)} hold an event; "
                                f"set status to {ANNOTATED!r} or clear them")

    def events(self, rows: list[_Row], text: str) -> tuple[Event, ...]:
        """Events in order of their number; roles in row order."""
        by_number: dict[int, list[_Row]] = {}
        for row in rows:
            number = self.event_number(row)
            if number is not None:
                by_number.setdefault(number, []).append(row)
        return tuple(self.event(by_number[n], text) for n in sorted(by_number))

    def event_number(self, row: _Row) -> int | None:
        if not row["event"]:
            filled = [c for c in EVENT_CELLS if row[c]]
            if filled:
                self.error(row, f"column event is empty but column(s) {', '.join(filled)} are filled; "
                                "give the event number or clear them")
            return None
        if not _whole(row["event"]) or int(row["event"]) < 1:
            self.error(row, f"event {row['event']!r} is not a number from 1 up")
            return None
        return int(row["event"])

    def event(self, rows: list[_Row], text: str) -> Event:
        trigger = self.span(rows[0], text, "trigger") or (0, 0)
        for row in rows[1:]:
            if (row["trigger_start"], row["trigger_end"]) != (rows[0]["trigger_start"], rows[0]["trigger_end"]):
                self.error(row, f"event {row['event']} has another trigger than on row {rows[0].number}")
            else:
                self.span(row, text, "trigger")
        return Event(trigger=trigger, roles=tuple(role for row in rows if (role := self.role(row, text)) is not None))

    def role(self, row: _Row, text: str) -> RoleSpan | None:
        if not row["role"]:
            filled = [c for c in SPAN_COLUMNS["role"] if row[c]]
            if filled:
                self.error(row, f"column role is empty but column(s) {', '.join(filled)} hold a span; "
                                "name the role or clear those cells")
            return None
        span = self.span(row, text, "role")
        if row["role"] not in self.roles:
            self.losses.append(f"{self.path} row {row.number}: role {row['role']!r} is not in the inventory "
                               f"({', '.join(self.roles)}); left out")
            return None
        return None if span is None else RoleSpan(row["role"], span)

    def span(self, row: _Row, text: str, kind: str) -> Offsets | None:
        """The offsets of a trigger or role, checked against the text; a differing text cell is a loss, not an error."""
        start_column, end_column, text_column = SPAN_COLUMNS[kind]
        cells = (row[start_column], row[end_column])
        if not all(_whole(c) for c in cells):
            self.error(row, f"{start_column}/{end_column} {cells[0]!r}/{cells[1]!r} are not whole numbers")
            return None
        start, end = int(cells[0]), int(cells[1])
        if not start < end <= len(text):
            self.error(row, f"{start_column}/{end_column} [{start}, {end}) is not a span of the {len(text)}-character text")
            return None
        covered = text[start:end]
        if row[text_column] != covered:
            self.losses.append(f"{self.path} row {row.number}: {text_column} {row[text_column]!r} differs from the "
                               f"text at {start_column}/{end_column} [{start}, {end}), {covered!r}; the offsets were kept")
        return start, end
