"""Converters between the canonical JSONL and other corpus formats.

Every reader returns a :class:`Conversion` (the records plus the losses) and
every writer returns its losses. A loss is one line ``"where: what could not be
represented, and what was done"``; nothing is dropped or changed without one,
so an empty list means the conversion was exact. Formats are picked by name
from :data:`READERS` and :data:`WRITERS`::

    result = convert_file(Path("train.jsonl"), Path("train.tsv"), from_format="jsonl", to_format="table")
    print(len(result.records), *result.losses, sep="\\n")

Every writer keeps only the roles of the inventory ``roles`` (listing the others
as losses), so what it writes reads back with the same inventory.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Callable, Iterable, Iterator, TypeVar

from trainer.corpus import jsonl
from trainer.corpus.convert.inline import read_inline
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.errors import ItinerantError


@dataclass
class Conversion:
    """Records read from a file, and what could not be carried over on the way."""

    records: list[Record]
    losses: list[str] = field(default_factory=list)


class UnknownFormatError(ItinerantError):
    """A format name (or a file extension standing for one) that no converter handles."""

    exit_code = 2


def writable(record: Record, roles: tuple[str, ...], *, keeps_confidence: bool) -> tuple[Record, list[str]]:
    """The record as a writer may write it, and the losses that costs.

    Role spans outside the inventory are left out; confidences are reported
    when the target format has no place for them (they do not affect equality).
    """
    losses: list[str] = []
    if not keeps_confidence and _has_confidence(record):
        losses.append(f"{record.id}: confidence scores cannot be written in this format; left out")
    if not record.events:
        return record, losses
    events = []
    for number, event in enumerate(record.events, start=1):
        for role in event.roles:
            if role.role not in roles:
                losses.append(
                    f"{record.id}, event {number}: role {role.role!r} {list(role.span)} is not in the inventory "
                    f"({', '.join(roles)}); left out"
                )
        events.append(replace(event, roles=tuple(r for r in event.roles if r.role in roles)))
    return record.with_events(events), losses


def _has_confidence(record: Record) -> bool:
    events = record.events or ()
    return any(e.confidence is not None or any(r.confidence is not None for r in e.roles) for e in events)


def _read_jsonl(path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> Conversion:
    """Canonical JSONL, validated by the corpus reader (which refuses files with errors)."""
    return Conversion(records=read_corpus([path], roles=roles).records)


def _write_jsonl(records: Iterable[Record], path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> list[str]:
    """Canonical JSONL, written atomically; confidences are kept."""
    losses: list[str] = []

    def kept() -> Iterator[Record]:
        for record in records:
            record, lost = writable(record, roles, keeps_confidence=True)
            losses.extend(lost)
            yield record

    jsonl.write_jsonl(kept(), path)
    return losses


def _read_inline(path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> Conversion:
    """Inline markup (see :mod:`trainer.corpus.convert.inline`); it either parses exactly or raises."""
    return Conversion(records=read_inline(path, roles=roles))


# The format modules import Conversion and writable from this package, so they are imported after those exist.
from trainer.corpus.convert.columns import read_columns, write_columns  # noqa: E402
from trainer.corpus.convert.isospace import read_isospace  # noqa: E402
from trainer.corpus.convert.table import read_table, write_table  # noqa: E402

READERS: dict[str, Callable[..., Conversion]] = {
    "jsonl": _read_jsonl,
    "columns": read_columns,
    "table": read_table,
    "isospace": read_isospace,
    "inline": _read_inline,
}
WRITERS: dict[str, Callable[..., list[str]]] = {
    "jsonl": _write_jsonl,
    "columns": write_columns,
    "table": write_table,
}


_Converter = TypeVar("_Converter")


def _pick(table: dict[str, _Converter], name: str, kind: str) -> _Converter:
    if name not in table:
        raise UnknownFormatError(f"unknown {kind} format {name!r}", f"use one of: {', '.join(table)}")
    return table[name]


def convert_file(
    source: Path,
    target: Path,
    *,
    from_format: str,
    to_format: str,
    roles: tuple[str, ...] = DEFAULT_ROLES,
) -> Conversion:
    """Read ``source`` in one format and write ``target`` in another.

    Returns the records read and the losses of both steps (reading first).
    Both format names are checked before anything is read or written.
    """
    reader = _pick(READERS, from_format, "input")
    writer = _pick(WRITERS, to_format, "output")
    conversion = reader(Path(source), roles=roles)
    written = writer(conversion.records, Path(target), roles=roles)
    return Conversion(records=conversion.records, losses=conversion.losses + written)


__all__ = [
    "READERS",
    "WRITERS",
    "Conversion",
    "UnknownFormatError",
    "convert_file",
    "read_columns",
    "read_isospace",
    "read_table",
    "write_columns",
    "write_table",
    "writable",
]
