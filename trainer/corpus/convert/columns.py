"""Token-per-line columns in the manner of the CoNLL-2005 semantic-role task.

One block per record, blocks separated by a blank line::

    # id = t-s001
    # doc = t
    # text = We left Caddow.
    1	We	_	-	B-mover
    2	left	_	V	B-V
    3	Caddow	SpaceAfter=No	-	B-source
    4	.	SpaceAfter=No	-	O

Comment lines give ``id``, ``doc``, ``text`` and, when present, ``meta`` (JSON)
and ``annotated = no`` (a record without events key). Token lines are
tab-separated: index, form, spacing, predicate (``V`` on trigger tokens, ``-``
elsewhere), then one BIO column per event in event order (``B-V``/``I-V`` for
the trigger, ``B-<role>``/``I-<role>`` for role spans, ``O`` elsewhere).

The spacing column says what follows the token: ``_`` one space,
``SpaceAfter=No`` nothing, ``SpacesAfter=`` any other whitespace written with
``\\s`` for a space and ``\\uXXXX`` for other characters; the first token may
add ``SpacesBefore=`` (joined with ``|``). The text, and so every offset, is
rebuilt exactly from the tokens; the ``# text`` line is for people.

Tokens are words and single punctuation marks, also cut at every span edge of
the record so spans fall on token boundaries. What the columns cannot hold is
listed as a loss by the writer: tab and line-break characters (written as
spaces), span edges inside whitespace (trimmed to the tokens), a role span
overlapping the trigger or another role span of the same event (left out),
roles listed out of text order (written in text order) and confidences.
"""

from __future__ import annotations

import json
import re
from bisect import bisect_left, bisect_right
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable

from trainer.corpus.convert.base import Conversion, writable
from trainer.corpus.jsonl import read_text
from trainer.corpus.records import DEFAULT_ROLES, Event, Offsets, Record, RoleSpan
from trainer.corpus.validate import record_problems, strict_loads
from trainer.errors import CorpusError, StrictJSONError
from trainer.outputs import write_text

TRIGGER_LABEL = "V"
OUTSIDE = "O"
NO_PREDICATE = "-"
FIXED_COLUMNS = 4  # index, form, spacing, predicate
LINE_BREAKING = "\t\n\r\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029"  # tab plus everything str.splitlines() breaks at

_TOKEN = re.compile(r"\w+(?:['’-]\w+)*|\S")
_COMMENT = re.compile(r"^# ([a-z]+) = ?(.*)$")
_ESCAPE = re.compile(r"\\s|\\u([0-9a-fA-F]{4})")
_NO_BREAKS = str.maketrans(LINE_BREAKING, " " * len(LINE_BREAKING))
_SPACING_KEYS = ("SpacesBefore", "SpaceAfter", "SpacesAfter")


def tokenise(text: str, cuts: Iterable[int] = ()) -> list[Offsets]:
    """Token offsets: words and single punctuation marks, also cut at every offset in ``cuts``."""
    edges = sorted(set(cuts))
    tokens: list[Offsets] = []
    for match in _TOKEN.finditer(text):
        start, end = match.span()
        inner = edges[bisect_right(edges, start) : bisect_left(edges, end)]
        points = [start, *inner, end]
        tokens.extend(zip(points, points[1:]))
    return tokens


# ---------------------------------------------------------------- writing


def write_columns(records: Iterable[Record], path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> list[str]:
    """Write records as token columns; return the losses (empty when the file holds everything)."""
    losses: list[str] = []
    blocks = []
    for record in records:
        record, lost = writable(record, roles, keeps_confidence=False)
        losses.extend(lost)
        blocks.append("\n".join(_block(record, losses)) + "\n")
    write_text(path, "\n".join(blocks))
    return losses


def _block(record: Record, losses: list[str]) -> list[str]:
    """The lines of one record (comments, then one line per token)."""
    record_id, doc, text = (_one_line(record, name, losses) for name in ("id", "doc", "text"))
    tokens = tokenise(text, _span_edges(record))
    if text and not tokens:
        losses.append(f"{record_id}: the text holds no token (only whitespace); written as an empty text")
        text = ""
    columns = [] if record.events is None else _event_columns(record, text, tokens, losses)
    lines = [f"# id = {record_id}", f"# doc = {doc}", f"# text = {text}"]
    if record.meta is not None:
        lines.append(f"# meta = {json.dumps(record.meta, ensure_ascii=False)}")
    if record.events is None:
        lines.append("# annotated = no")
    triggers = {i for column in columns for i, tag in enumerate(column) if tag.endswith(f"-{TRIGGER_LABEL}")}
    for i, (start, end) in enumerate(tokens):
        predicate = TRIGGER_LABEL if i in triggers else NO_PREDICATE
        cells = [str(i + 1), text[start:end], _spacing(text, tokens, i), predicate, *(c[i] for c in columns)]
        lines.append("\t".join(cells))
    return lines


def _one_line(record: Record, name: str, losses: list[str]) -> str:
    """A field with tabs and line breaks turned into spaces (offsets unchanged), reporting when it had any."""
    value: str = getattr(record, name)
    flat = value.translate(_NO_BREAKS)
    if flat != value:
        losses.append(
            f"{record.id}: the {name} holds tab or line-break characters, which a line of columns cannot; "
            "each was written as a space"
        )
    return flat


def _span_edges(record: Record) -> list[int]:
    return [
        offset
        for event in record.events or ()
        for span in (event.trigger, *(r.span for r in event.roles))
        for offset in span
    ]


def _before(text: str, tokens: list[Offsets]) -> str:
    return text[: tokens[0][0]] if tokens else ""


def _after(text: str, tokens: list[Offsets], i: int) -> str:
    following = tokens[i + 1][0] if i + 1 < len(tokens) else len(text)
    return text[tokens[i][1] : following]


def _spacing(text: str, tokens: list[Offsets], i: int) -> str:
    """The spacing cell of token ``i``."""
    items = []
    if i == 0 and _before(text, tokens):
        items.append(f"SpacesBefore={_escape(_before(text, tokens))}")
    after = _after(text, tokens, i)
    if not after:
        items.append("SpaceAfter=No")
    elif after != " ":
        items.append(f"SpacesAfter={_escape(after)}")
    return "|".join(items) or "_"


def _escape(whitespace: str) -> str:
    return "".join("\\s" if c == " " else f"\\u{ord(c):04x}" for c in whitespace)


def _event_columns(record: Record, text: str, tokens: list[Offsets], losses: list[str]) -> list[list[str]]:
    """One BIO column per event that has a trigger on the tokens."""
    columns = []
    for number, event in enumerate(record.events or (), start=1):
        column = _event_tags(event, text, tokens, f"{record.id}, event {number}", losses)
        if column is not None:
            columns.append(column)
    return columns


def _event_tags(event: Event, text: str, tokens: list[Offsets], where: str, losses: list[str]) -> list[str] | None:
    """The BIO tags of one event, or None when its trigger covers no token."""
    tags = [OUTSIDE] * len(tokens)
    trigger = _place(event.trigger, text, tokens, f"{where}: trigger", losses)
    if trigger is None:
        losses.append(f"{where}: without a trigger on the tokens the event cannot be written; left out")
        return None
    _mark(tags, trigger, TRIGGER_LABEL)
    placed = []
    for role in event.roles:
        span = _place(role.span, text, tokens, f"{where}: {role.role}", losses)
        if span is None:
            continue
        taken = [tags[i].partition("-")[2] for i in range(span[0], span[1] + 1) if tags[i] != OUTSIDE]
        if taken:
            other = "trigger" if taken[0] == TRIGGER_LABEL else f"{taken[0]} span"
            losses.append(f"{where}: {_show(role.role, role.span, text)} overlaps the {other} of the same event; left out")
            continue
        _mark(tags, span, role.role)
        placed.append(span)
    if placed != sorted(placed):
        losses.append(f"{where}: roles are listed out of text order; the columns keep them in text order")
    return tags


def _place(span: Offsets, text: str, tokens: list[Offsets], where: str, losses: list[str]) -> tuple[int, int] | None:
    """First and last token index of a span; trimmed (with a loss) when an edge lies in whitespace."""
    inside = [i for i, (s, e) in enumerate(tokens) if span[0] <= s and e <= span[1]]
    if not inside:
        losses.append(f"{where} {list(span)} {text[span[0]:span[1]]!r} covers no whole token; left out")
        return None
    first, last = inside[0], inside[-1]
    if (tokens[first][0], tokens[last][1]) != tuple(span):
        trimmed = (tokens[first][0], tokens[last][1])
        losses.append(
            f"{where} {list(span)} {text[span[0]:span[1]]!r} has an edge in whitespace; "
            f"written as {list(trimmed)} {text[trimmed[0]:trimmed[1]]!r}"
        )
    return first, last


def _mark(tags: list[str], span: tuple[int, int], label: str) -> None:
    first, last = span
    tags[first] = f"B-{label}"
    for i in range(first + 1, last + 1):
        tags[i] = f"I-{label}"


def _show(role: str, span: Offsets, text: str) -> str:
    return f"{role} {list(span)} {text[span[0]:span[1]]!r}"


# ---------------------------------------------------------------- reading


@dataclass
class _Row:
    """One token line: where it is, its form, spacing and tags."""

    line: int
    index: str
    form: str
    before: str
    after: str
    predicate: str
    tags: list[str]


def read_columns(path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> Conversion:
    """Read token columns back into records, rebuilding text and offsets exactly.

    Raises :class:`CorpusError` at the first line that breaks the format; role
    labels outside ``roles`` and a ``# text`` line that disagrees with the
    tokens are reported as losses.
    """
    path = Path(path)
    reader = _BlockReader(path, roles)
    records, first_seen = [], {}
    for first_line, lines in _blocks(path):
        record = reader.record(first_line, lines)
        if record.id in first_seen:
            raise reader.fail(first_line, f"duplicate id {record.id!r} (first at line {first_seen[record.id]})",
                              "ids must be unique in the corpus; rename one of the records")
        first_seen[record.id] = first_line
        problems = record_problems(record, str(path), first_line, roles)
        if problems:
            raise reader.fail(first_line, f"record {record.id!r}: " + "; ".join(f"{p.field}: {p.message}" for p in problems),
                              "correct the record's comment lines or tokens")
        records.append(record)
    return Conversion(records=records, losses=reader.losses)


def _blocks(path: Path) -> list[tuple[int, list[str]]]:
    """Groups of consecutive non-blank lines with the number of their first line."""
    content = read_text(path, what="a file of token columns")
    blocks: list[tuple[int, list[str]]] = []
    current: list[str] = []
    for number, line in enumerate(content.split("\n"), start=1):
        if line.strip():
            if not current:
                blocks.append((number, current))
            current.append(line)
        else:
            current = []
    return blocks


class _BlockReader:
    """Turns the lines of one block into a record, raising on format errors."""

    def __init__(self, path: Path, roles: tuple[str, ...]) -> None:
        self.path, self.roles = path, roles
        self.losses: list[str] = []

    def fail(self, line: int, cause: str, fix: str) -> CorpusError:
        return CorpusError(f"{self.path}:{line}: {cause}", fix)

    def record(self, first_line: int, lines: list[str]) -> Record:
        numbered = list(enumerate(lines, start=first_line))
        comments = self.comments(numbered)
        rows = [self.row(number, line) for number, line in numbered if not line.startswith("#")]
        for key in ("id", "doc"):
            if key not in comments:
                raise self.fail(first_line, f"the record has no '# {key} = ...' line", f"add '# {key} = ...' before its tokens")
        text, spans = self.text(rows)
        if "text" in comments and comments["text"][1] != text:
            self.losses.append(f"{self.path}:{comments['text'][0]}: the '# text' line differs from the tokens; "
                               f"the tokens' text {text!r} was used")
        line, flag = comments.get("annotated", (first_line, "yes"))
        if flag not in ("yes", "no"):
            raise self.fail(line, f"'# annotated = {flag}'", "write '# annotated = no' or leave the line out")
        annotated = flag == "yes"
        if not annotated and any(row.tags for row in rows):
            raise self.fail(first_line, "'# annotated = no' but the tokens have event columns", "remove one or the other")
        return Record(
            id=comments["id"][1],
            doc=comments["doc"][1],
            text=text,
            events=self.events(rows, spans, text) if annotated else None,
            meta=self.meta(*comments["meta"]) if "meta" in comments else None,
        )

    @staticmethod
    def comments(numbered: list[tuple[int, str]]) -> dict[str, tuple[int, str]]:
        """``key -> (line, value)`` of the ``# key = value`` lines; other comment lines are free text."""
        found = {}
        for number, line in numbered:
            match = _COMMENT.match(line)
            if match:
                found[match.group(1)] = (number, match.group(2))
        return found

    def row(self, line: int, raw: str) -> _Row:
        cells = raw.split("\t")
        if len(cells) < FIXED_COLUMNS:
            raise self.fail(line, f"{len(cells)} tab-separated column(s), need at least {FIXED_COLUMNS}",
                            "write index, form, spacing, predicate, then one column per event")
        if not cells[1] or any(c.isspace() for c in cells[1]):
            raise self.fail(line, f"token form {cells[1]!r} is empty or holds whitespace",
                            "a token is a word or punctuation mark; put whitespace in the spacing column")
        before, after = self.spacing(line, cells[2])
        if cells[3] not in (TRIGGER_LABEL, NO_PREDICATE):
            raise self.fail(line, f"predicate column holds {cells[3]!r}", f"write {TRIGGER_LABEL!r} or {NO_PREDICATE!r}")
        return _Row(line, cells[0], cells[1], before, after, cells[3], cells[FIXED_COLUMNS:])

    def spacing(self, line: int, cell: str) -> tuple[str, str]:
        """Whitespace before (first token only) and after a token, from its spacing cell."""
        items = dict(item.partition("=")[::2] for item in cell.split("|")) if cell != "_" else {}
        unknown = sorted(set(items) - set(_SPACING_KEYS))
        if unknown or items.get("SpaceAfter", "No") != "No":
            raise self.fail(line, f"spacing column holds {cell!r}",
                            "write '_', 'SpaceAfter=No', 'SpacesAfter=...' or 'SpacesBefore=...' (joined with '|')")
        after = "" if "SpaceAfter" in items else self.unescape(line, items.get("SpacesAfter", "\\s"))
        return self.unescape(line, items.get("SpacesBefore", "")), after

    def unescape(self, line: int, value: str) -> str:
        pieces = list(_ESCAPE.finditer(value))
        if "".join(m.group(0) for m in pieces) != value:
            raise self.fail(line, f"whitespace written as {value!r}", r"use \s for a space and \uXXXX for other characters")
        return "".join(" " if m.group(0) == "\\s" else chr(int(m.group(1), 16)) for m in pieces)

    def text(self, rows: list[_Row]) -> tuple[str, list[Offsets]]:
        """The text rebuilt from the tokens, and each token's offsets."""
        for position, row in enumerate(rows, start=1):
            if row.index != str(position):
                raise self.fail(row.line, f"token index {row.index!r} where {position} was expected",
                                "number the tokens of each record 1, 2, 3, ...")
            if position > 1 and row.before:
                raise self.fail(row.line, "SpacesBefore on a token that is not the first", "move it to the first token")
        parts = [rows[0].before] if rows else []
        spans = []
        cursor = len(parts[0]) if parts else 0
        for row in rows:
            spans.append((cursor, cursor + len(row.form)))
            parts += [row.form, row.after]
            cursor += len(row.form) + len(row.after)
        return "".join(parts), spans

    def events(self, rows: list[_Row], spans: list[Offsets], text: str) -> tuple[Event, ...]:
        widths = {len(row.tags) for row in rows}
        if len(widths) > 1:
            line = next(row.line for row in rows if len(row.tags) != len(rows[0].tags))
            raise self.fail(line, f"{len(rows[0].tags)} event column(s) on the first token, a different count here",
                            "give every token line of a record the same columns")
        count = widths.pop() if widths else 0
        events = tuple(self.event(rows, spans, text, column) for column in range(count))
        marked = {i for i, row in enumerate(rows) if row.predicate == TRIGGER_LABEL}
        triggered = {i for i, (s, e) in enumerate(spans) for ev in events if ev.trigger[0] <= s and e <= ev.trigger[1]}
        if rows and marked != triggered:
            self.losses.append(f"{self.path}:{rows[0].line}: the predicate column disagrees with the event "
                               "columns; the event columns were used")
        return events

    def event(self, rows: list[_Row], spans: list[Offsets], text: str, column: int) -> Event:
        chunks = self.chunks([row.tags[column] for row in rows], [row.line for row in rows])
        triggers = [(first, last) for label, first, last in chunks if label == TRIGGER_LABEL]
        if len(triggers) != 1:
            raise self.fail(rows[0].line, f"event column {column + 1} has {len(triggers)} trigger spans",
                            f"mark exactly one trigger with B-{TRIGGER_LABEL} (and I-{TRIGGER_LABEL})")
        roles = []
        for label, first, last in chunks:
            span = (spans[first][0], spans[last][1])
            if label == TRIGGER_LABEL:
                continue
            if label not in self.roles:
                self.losses.append(f"{self.path}:{rows[first].line}: role {label!r} {list(span)} "
                                   f"{text[span[0]:span[1]]!r} is not in the inventory ({', '.join(self.roles)}); left out")
                continue
            roles.append(RoleSpan(label, span))
        first, last = triggers[0]
        return Event(trigger=(spans[first][0], spans[last][1]), roles=tuple(roles))

    def chunks(self, tags: list[str], lines: list[int]) -> list[tuple[str, int, int]]:
        """``(label, first token, last token)`` of each BIO chunk, in order."""
        chunks: list[list[Any]] = []
        for i, tag in enumerate(tags):
            prefix, _, label = tag.partition("-")
            if tag == OUTSIDE:
                continue
            if prefix == "B" and label:
                chunks.append([label, i, i])
            elif prefix == "I" and chunks and chunks[-1][0] == label and chunks[-1][2] == i - 1:
                chunks[-1][2] = i
            else:
                raise self.fail(lines[i], f"tag {tag!r} does not continue a chunk or start one",
                                "use O, B-<label>, or I-<label> right after B-/I- of the same label")
        return [(label, first, last) for label, first, last in chunks]

    def meta(self, line: int, value: str) -> dict[str, Any]:
        try:
            meta = strict_loads(value)
        except StrictJSONError as exc:
            raise self.fail(line, f"'# meta' is not clean JSON ({exc.cause})", "write it as one JSON object") from None
        if not isinstance(meta, dict):
            raise self.fail(line, f"'# meta' is a JSON {type(meta).__name__}, not an object", "write it as one JSON object")
        return meta
