"""Validation of canonical JSONL files, with problems a researcher can act on.

Each problem names the file, the line, the field (a JSON path such as
``events[1].roles[0].span``), what is wrong and a hint. Errors make a record
unusable; warnings point at likely annotation slips but keep the record.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable

from trainer.corpus.jsonl import iter_lines, record_from_dict, record_to_dict
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.errors import StrictJSONError, UnreadableInputError

ERROR = "error"
WARNING = "warning"
PLACE_ROLES = ("source", "path", "destination")
_EDGE_CHARS = " \t\n\r.,;:!?\"'()[]{}—–-"  # characters a span should not start or end with
MAX_TEXT_CHARS = 1_000_000  # spaCy's default Language.max_length (spaCy docs); longer texts are refused
MAX_DEPTH = 32  # arrays and objects in one record nest at most this deep (a record itself needs 6)
_KNOWN_KEYS = {
    "record": {"id", "doc", "text", "events", "meta"},
    "event": {"trigger", "roles", "confidence"},
    "role": {"role", "span", "confidence"},
}


@dataclass(frozen=True)
class Problem:
    """One finding: where, what, and how to fix it."""

    file: str
    line: int
    field: str
    message: str
    hint: str
    severity: str = ERROR
    record_id: str | None = None

    def __str__(self) -> str:
        text = f"{self.file}:{self.line}: {self.field}: {self.message}"
        if self.severity == WARNING:
            text = f"{self.file}:{self.line}: {self.field}: warning: {self.message}"
        return f"{text}\n    hint: {self.hint}" if self.hint else text


@dataclass
class FileCheck:
    """What checking files found: the usable records with their locations, and the problems."""

    records: list[tuple[str, int, Record]] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)
    bad_records: int = 0

    @property
    def errors(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == ERROR]

    @property
    def warnings(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == WARNING]


class _LineChecker:
    """Collects the problems of one JSON object (one line)."""

    def __init__(self, file: str, line: int, roles: tuple[str, ...] | None) -> None:
        self.file, self.line, self.roles = file, line, roles
        self.problems: list[Problem] = []
        self.record_id: str | None = None

    def add(self, where: str, message: str, hint: str, severity: str = ERROR) -> None:
        self.problems.append(Problem(self.file, self.line, where, message, hint, severity, self.record_id))

    @property
    def has_errors(self) -> bool:
        return any(p.severity == ERROR for p in self.problems)

    def string_field(self, obj: dict[str, Any], key: str, hint: str) -> None:
        if key not in obj:
            self.add(key, "missing", hint)
        elif not isinstance(obj[key], str):
            self.add(key, f"must be a string, got {type(obj[key]).__name__}", hint)
        elif not obj[key].strip():
            self.add(key, "is empty", hint)

    def unknown_keys(self, obj: dict[str, Any], kind: str, where: str) -> None:
        for key in sorted(set(obj) - _KNOWN_KEYS[kind]):
            self.add(f"{where}{key}", "unknown key (ignored)", "check its spelling; free-form data goes in meta", WARNING)

    def span(self, value: Any, where: str, text: str) -> tuple[int, int] | None:
        """Check one ``[start, end)`` pair against the text; return it when usable."""
        if not (isinstance(value, list) and len(value) == 2 and all(type(v) is int for v in value)):
            self.add(where, f"must be [start, end] with two integers, got {json.dumps(value)}", "offsets are code-point indices")
            return None
        start, end = value
        if start < 0 or end > len(text):
            self.add(where, f"[{start}, {end}] is out of range for a text of {len(text)} characters",
                     "offsets count Unicode code points from 0; end is exclusive")
            return None
        if start > end:
            self.add(where, f"[{start}, {end}] is reversed (start after end)", "write [start, end] with start < end")
            return None
        if start == end:
            self.add(where, f"[{start}, {end}] is an empty span", "a span covers at least one character")
            return None
        self.span_edges(where, text, start, end)
        return start, end

    def span_edges(self, where: str, text: str, start: int, end: int) -> None:
        covered = text[start:end]
        if covered[0] in _EDGE_CHARS or covered[-1] in _EDGE_CHARS:
            self.add(where, f"span {covered!r} begins or ends with whitespace or punctuation",
                     "trim the span to the words themselves", WARNING)
        elif covered[0] == "_" or covered[-1] == "_":
            self.add(where, f"span {covered!r} takes in an underscore, the italics marker of plain-text e-texts",
                     "trim the span to the words inside (the parser reads each _ as a word of its own)", WARNING)
        if (start > 0 and text[start - 1].isalnum() and covered[0].isalnum()) or (
            end < len(text) and text[end].isalnum() and covered[-1].isalnum()
        ):
            self.add(where, f"span {covered!r} cuts through a word (context {text[max(0, start - 10):end + 10]!r})",
                     "move the offsets to word boundaries", WARNING)

    def event(self, event: Any, where: str, text: str) -> tuple[Any, ...] | None:
        if not isinstance(event, dict):
            self.add(where, f"must be an object, got {type(event).__name__}", 'write {"trigger": [s, e], "roles": [...]}')
            return None
        self.unknown_keys(event, "event", f"{where}.")
        trigger = self.span(event["trigger"], f"{where}.trigger", text) if "trigger" in event else None
        if "trigger" not in event:
            self.add(f"{where}.trigger", "missing", "every event needs the span of its trigger word")
        self.confidence(event, where)
        roles = event.get("roles", [])
        if not isinstance(roles, list):
            self.add(f"{where}.roles", f"must be a list, got {type(roles).__name__}", "use [] for an event without roles")
            return None
        checked = [self.role(role, f"{where}.roles[{i}]", text) for i, role in enumerate(roles)]
        self.mover_is_place(checked, where, text)
        self.overlapping(trigger, checked, where, text)
        return (tuple(trigger) if trigger else None, tuple(sorted(r for r in checked if r)))

    def role(self, role: Any, where: str, text: str) -> tuple[str, tuple[int, int]] | None:
        if not isinstance(role, dict):
            self.add(where, f"must be an object, got {type(role).__name__}", 'write {"role": "mover", "span": [s, e]}')
            return None
        self.unknown_keys(role, "role", f"{where}.")
        self.confidence(role, where)
        name = role.get("role")
        if not isinstance(name, str):
            self.add(f"{where}.role", "missing or not a string",
                     f"use one of: {', '.join(self.roles)}" if self.roles is not None else "name the role")
        elif self.roles is not None and name not in self.roles:
            self.add(f"{where}.role", f"unknown role {name!r}", f"use one of: {', '.join(self.roles)} (or configure the role inventory)")
        if "span" not in role:
            self.add(f"{where}.span", "missing", "every role needs the span of its words")
            return None
        span = self.span(role["span"], f"{where}.span", text)
        return (name, span) if span and isinstance(name, str) else None

    def confidence(self, obj: dict[str, Any], where: str) -> None:
        value = obj.get("confidence")
        if value is not None and not (isinstance(value, (int, float)) and not isinstance(value, bool) and 0 <= value <= 1):
            self.add(f"{where}.confidence", f"must be a number in [0, 1], got {json.dumps(value)}", "omit it for gold annotations")

    def mover_is_place(self, roles: list[Any], where: str, text: str) -> None:
        movers = {span for name, span in (r for r in roles if r) if name == "mover"}
        places = {span for name, span in (r for r in roles if r) if name in PLACE_ROLES}
        for span in sorted(movers & places):
            self.add(f"{where}.roles", f"the mover {text[span[0]:span[1]]!r} is also marked as a place",
                     "a mover changes location; a place is where it moves from, through or to", WARNING)

    def overlapping(self, trigger: tuple[int, int] | None, roles: list[Any], where: str, text: str) -> None:
        """Spans of one event overlap neither the trigger nor each other (a mover marked as a place aside)."""
        def words(span: tuple[int, int]) -> str:
            return repr(text[span[0]:span[1]])

        def meet(a: tuple[int, int], b: tuple[int, int]) -> bool:
            return a[0] < b[1] and b[0] < a[1]

        for i, role in enumerate(roles):
            if not role:
                continue
            name, span = role
            if trigger and meet(span, trigger):
                self.add(f"{where}.roles[{i}].span", f"the {name} {words(span)} overlaps the trigger {words(trigger)}",
                         "mark the trigger word and each role's own words apart", WARNING)
            for j in range(i + 1, len(roles)):
                other = roles[j]
                if not other or not meet(span, other[1]):
                    continue
                if span == other[1] and {name, other[0]} & {"mover"} and {name, other[0]} & set(PLACE_ROLES):
                    continue  # said by mover_is_place
                self.add(f"{where}.roles[{j}].span", f"the {other[0]} {words(other[1])} overlaps roles[{i}], "
                         f"the {name} {words(span)}", "give each role its own words (repeat a span only under "
                         "another event)", WARNING)

    def check(self, obj: Any) -> dict[str, Any] | None:
        """Check one parsed JSON value; return it when it makes a usable record."""
        if not isinstance(obj, dict):
            self.add("record", f"must be a JSON object, got {type(obj).__name__}", "one object per line")
            return None
        if isinstance(obj.get("id"), str) and _encodable(obj["id"]):
            self.record_id = obj["id"]
        self.plain_strings(obj, "")
        self.unknown_keys(obj, "record", "")
        self.string_field(obj, "id", "give every record a unique id, e.g. 'journal-3-s014'")
        self.string_field(obj, "doc", "name the document the sentence comes from; folds are grouped by it")
        self.string_field(obj, "text", "the raw sentence the offsets point into")
        if "meta" in obj and not isinstance(obj["meta"], dict):
            self.add("meta", f"must be an object, got {type(obj['meta']).__name__}", 'write "meta": {...} or leave it out')
        text = obj.get("text") if isinstance(obj.get("text"), str) else None
        if text is not None and len(text) > MAX_TEXT_CHARS:
            self.add("text", f"is {len(text):,} characters long, more than the parser takes ({MAX_TEXT_CHARS:,})",
                     "split the text into sentences or paragraphs, one record each")
        if "events" in obj and text is not None:
            self.events(obj["events"], text)
        return None if self.has_errors else obj

    def plain_strings(self, value: Any, where: str) -> None:
        """Every string (keys too) must be encodable as UTF-8: no lone surrogates such as an unpaired \\ud800."""
        stack = [(value, where)]
        while stack:
            item, at = stack.pop()
            if isinstance(item, str) and not _encodable(item):
                position = next(i for i, c in enumerate(item) if not _encodable(c))
                self.add(at or "record", f"holds a lone surrogate {item[position].encode('utf-8', 'backslashreplace').decode()} "
                         f"at character {position}", "write the character itself or a \\uXXXX pair; a surrogate alone is no text")
            elif isinstance(item, dict):
                stack.extend((v, f"{at}.{k}" if at else str(k)) for k, v in item.items())
                stack.extend((k, f"{at}.<key>" if at else "<key>") for k in item)
            elif isinstance(item, list):
                stack.extend((v, f"{at}[{i}]") for i, v in enumerate(item))

    def events(self, events: Any, text: str) -> None:
        if not isinstance(events, list):
            self.add("events", f"must be a list, got {type(events).__name__}",
                     "use [] for a sentence without motion, or leave the key out for unannotated text")
            return
        seen: dict[tuple[Any, ...], int] = {}
        for i, event in enumerate(events):
            key = self.event(event, f"events[{i}]", text)
            if key is None or key[0] is None:
                continue
            if key in seen:
                self.add(f"events[{i}]", f"repeats events[{seen[key]}] exactly", "delete the duplicate event", WARNING)
            seen.setdefault(key, i)


def _encodable(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True


def _depth(value: Any) -> int:
    """How deeply arrays and objects nest in a parsed JSON value (a scalar is 0), without recursion."""
    deepest, stack = 0, [(value, 0)]
    while stack:
        item, level = stack.pop()
        if isinstance(item, (dict, list)):
            deepest = max(deepest, level + 1)
            stack.extend((child, level + 1) for child in (item.values() if isinstance(item, dict) else item))
    return deepest


class _DuplicateKeys:
    """An ``object_pairs_hook`` that builds dicts and remembers keys given twice in one object."""

    def __init__(self) -> None:
        self.repeated: list[str] = []

    def __call__(self, pairs: list[tuple[str, Any]]) -> dict[str, Any]:
        obj: dict[str, Any] = {}
        for key, value in pairs:
            if key in obj:
                self.repeated.append(key)
            obj[key] = value
        return obj


def _too_deep() -> StrictJSONError:
    return StrictJSONError(f"arrays or objects nested more than {MAX_DEPTH} deep",
                           "a record itself needs six levels (record, events, event, roles, role, span); "
                           "keep deeper data in another file")


def strict_loads(text: str) -> Any:
    """``json.loads`` that also refuses keys given twice in one object and nesting deeper than :data:`MAX_DEPTH`."""
    hook = _DuplicateKeys()
    try:
        value = json.loads(text, object_pairs_hook=hook)
    except json.JSONDecodeError as exc:
        raise StrictJSONError(f"malformed JSON: {exc.msg} at column {exc.colno}",
                              "each line must be one complete JSON object") from None
    except RecursionError:  # nesting deeper than the parser itself goes
        raise _too_deep() from None
    if _depth(value) > MAX_DEPTH:
        raise _too_deep()
    if hook.repeated:
        raise StrictJSONError(f"key(s) given twice in one object: {', '.join(sorted(set(hook.repeated)))}",
                              "JSON readers keep only one of the values; write each key once")
    return value


def record_problems(record: Record, file: str, line: int, roles: tuple[str, ...] | None) -> list[Problem]:
    """The errors the JSONL validation finds in an already built record (for the other formats' readers)."""
    checker = _LineChecker(file, line, roles)
    checker.check(record_to_dict(record))
    return [p for p in checker.problems if p.severity == ERROR]


def check_line(file: str, number: int, line: str, roles: tuple[str, ...] | None,
               first_seen: dict[str, str] | set[str]) -> FileCheck:
    """Check one line; ``first_seen`` collects ids (a dict also remembers where each was first seen)."""
    result = FileCheck()
    checker = _LineChecker(file, number, roles)
    try:
        obj = checker.check(strict_loads(line))
    except StrictJSONError as exc:
        checker.add("record", exc.cause, exc.fix)
        obj = None
    if obj is not None:
        if obj["id"] in first_seen:
            where = first_seen[obj["id"]] if isinstance(first_seen, dict) else "an earlier line"
            checker.add("id", f"duplicate id {obj['id']!r} (first at {where})", "ids must be unique in the corpus")
            obj = None
        elif isinstance(first_seen, dict):
            first_seen[obj["id"]] = f"{file}:{number}"
        else:
            first_seen.add(obj["id"])
    result.problems.extend(checker.problems)
    if obj is None:
        result.bad_records += 1
    else:
        result.records.append((file, number, record_from_dict(obj)))
    return result


def check_files(paths: Iterable[Path], roles: tuple[str, ...] | None = DEFAULT_ROLES) -> FileCheck:
    """Check canonical JSONL files together (ids must be unique across all of them).

    Raises :class:`~trainer.errors.UnreadableInputError` for a file that cannot
    be opened or decoded; every other problem is reported in the result.
    """
    result = FileCheck()
    first_seen: dict[str, str] = {}
    for path in paths:
        empty = True
        for number, line in iter_lines(Path(path)):
            if empty and Path(path).suffix.lower() != ".jsonl" and not line.lstrip().startswith("{"):
                raise UnreadableInputError(f"{path}: not canonical JSONL (its first record line is not a JSON object)",
                                           f"convert it first: `itinerant convert {path} -o {Path(path).stem}.jsonl` "
                                           "reads tables, columns, inline markup and ISO-Space XML")
            empty = False
            one = check_line(str(path), number, line, roles, first_seen)
            result.records.extend(one.records)
            result.problems.extend(one.problems)
            result.bad_records += one.bad_records
        if empty:
            result.problems.append(Problem(str(path), 1, "file", "holds no records (empty or blank lines only)",
                                           "check that this is the file you meant; each line holds one record",
                                           WARNING))
    return result
