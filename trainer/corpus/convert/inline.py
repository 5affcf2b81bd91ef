"""Inline markup: a quick way to write annotated sentences by hand.

One sentence per line; each annotated span is written ``[words|labels]`` where
``labels`` is a comma-separated list such as ``T1`` (trigger of event 1) or
``mover1`` / ``source2`` (role of event 1 / 2)::

    [We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].

A line without brackets is an annotated sentence with no motion event. Lines
starting with ``#`` are comments, except the header ``# doc: NAME`` which names
the document of the lines that follow (ids are ``NAME-sNNN``). Offsets of the
resulting records are computed on the text with the markup removed.
"""

from __future__ import annotations

import re
from collections import defaultdict
from pathlib import Path

from trainer.corpus.jsonl import read_text
from trainer.corpus.records import DEFAULT_ROLES, Event, Record, RoleSpan
from trainer.corpus.validate import record_problems
from trainer.errors import CorpusError

_SPAN = re.compile(r"\[([^\[\]|]+)\|([^\[\]|]+)\]")
_LABEL = re.compile(r"^(T|[a-z_]+)(\d+)$")


def parse_inline(
    line: str, *, record_id: str, doc: str, roles: tuple[str, ...] = DEFAULT_ROLES, where: str = ""
) -> Record:
    """Turn one line of inline markup into a record (``events=[]`` if unmarked)."""
    text_parts: list[str] = []
    triggers: dict[int, tuple[int, int]] = {}
    role_spans: dict[int, list[RoleSpan]] = defaultdict(list)
    position = cursor = 0
    for match in _SPAN.finditer(line):
        text_parts.append(line[cursor : match.start()])
        position += match.start() - cursor
        words = match.group(1)
        span = (position, position + len(words))
        for label in (x.strip() for x in match.group(2).split(",")):
            parsed = _LABEL.match(label)
            if not parsed:
                raise CorpusError(f"{where}: bad label {label!r}", "write T1, mover1, source2, ...")
            kind, number = parsed.group(1), int(parsed.group(2))
            if kind == "T":
                if number in triggers:
                    raise CorpusError(f"{where}: event {number} has two triggers", "number events 1, 2, ...")
                triggers[number] = span
            elif kind in roles:
                role_spans[number].append(RoleSpan(kind, span))
            else:
                raise CorpusError(f"{where}: unknown role {kind!r}", f"use one of {', '.join(roles)}")
        text_parts.append(words)
        position += len(words)
        cursor = match.end()
    text_parts.append(line[cursor:])
    text = "".join(text_parts)
    if any(c in text for c in "[]|"):
        raise CorpusError(f"{where}: stray '[', ']' or '|' in {text!r}", "write spans as [words|labels]")
    orphans = sorted(set(role_spans) - set(triggers))
    if orphans:
        raise CorpusError(f"{where}: roles for event(s) {orphans} without a trigger", "add [word|T<n>]")
    events = tuple(
        Event(trigger=triggers[n], roles=tuple(sorted(role_spans[n], key=lambda r: r.span)))
        for n in sorted(triggers)
    )
    return Record(id=record_id, doc=doc, text=text, events=events)


def read_inline(path: Path, roles: tuple[str, ...] = DEFAULT_ROLES) -> list[Record]:
    """Read a file of inline markup; ``# doc:`` headers set the document name."""
    path = Path(path)
    doc = path.stem
    counters: dict[str, int] = defaultdict(int)
    records = []
    content = read_text(path, what="a file of inline markup")
    for number, raw in enumerate(content.splitlines(), start=1):
        line = raw.strip()
        if not line:
            continue
        if line.startswith("#"):
            key, _, value = line.lstrip("#").partition(":")
            if key.strip() == "doc" and value.strip():
                doc = value.strip()
            continue
        counters[doc] += 1
        record = parse_inline(line, record_id=f"{doc}-s{counters[doc]:03d}", doc=doc, roles=roles, where=f"{path}:{number}")
        problems = record_problems(record, str(path), number, roles)
        if problems:
            raise CorpusError(f"{path}:{number}: " + "; ".join(f"{p.field}: {p.message}" for p in problems),
                              "correct the line's text or spans")
        records.append(record)
    return records
