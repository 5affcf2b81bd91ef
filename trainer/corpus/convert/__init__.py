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
from trainer.errors import CorpusError, ItinerantError, UnreadableInputError
from trainer.outputs import check_output


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
    try:
        return Conversion(records=read_corpus([path], roles=roles).records)
    except CorpusError as exc:  # the reader's hint offers --skip-bad, which convert does not have
        raise CorpusError(exc.cause, "fix them first (`itinerant check` lists them all); convert copies whole files only") from None


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

# The format a file extension stands for, when no format is named.
EXTENSIONS: dict[str, str] = {
    ".jsonl": "jsonl",
    ".csv": "table",
    ".tsv": "table",
    ".cols": "columns",
    ".bio": "columns",
    ".conll": "columns",
    ".xml": "isospace",
    ".txt": "inline",
}


def format_for(path: Path, given: str | None, table: dict[str, _Converter], kind: str) -> str:
    """The format named, or the one the extension of ``path`` stands for; refused when neither is usable."""
    if kind == "input" and Path(path).is_dir():
        raise UnreadableInputError(f"{path}: is a folder, not a file", "convert one file at a time")
    name = given or EXTENSIONS.get(Path(path).suffix.lower())
    option = "--input-format" if kind == "input" else "--output-format"
    if name is None:
        known = ", ".join(f"{ext} ({fmt})" for ext, fmt in EXTENSIONS.items() if fmt in table)
        raise UnknownFormatError(f"{path}: cannot tell the {kind} format from the extension {Path(path).suffix or '(none)'!r}",
                                 f"use one of the extensions {known}, or name the format with {option}")
    if name not in table:
        raise UnknownFormatError(f"{path}: {name!r} is not an {kind} format" + ("" if given else " (from its extension)"),
                                 f"{option} takes one of: {', '.join(table)}")
    return name


def convert_file(
    source: Path,
    target: Path,
    *,
    from_format: str | None = None,
    to_format: str | None = None,
    roles: tuple[str, ...] = DEFAULT_ROLES,
) -> Conversion:
    """Read ``source`` in one format and write ``target`` in another.

    A format left out is inferred from the file's extension (see :data:`EXTENSIONS`).
    Returns the records read and the losses of both steps (reading first).
    Both formats and the target are checked before anything is read or written.
    """
    check_output(target, inputs=[source], what="converted file")
    reader = READERS[format_for(source, from_format, READERS, "input")]
    writer = WRITERS[format_for(target, to_format, WRITERS, "output")]
    conversion = reader(Path(source), roles=roles)
    written = writer(conversion.records, Path(target), roles=roles)
    return Conversion(records=conversion.records, losses=conversion.losses + written)


__all__ = [
    "READERS",
    "WRITERS",
    "Conversion",
    "EXTENSIONS",
    "UnknownFormatError",
    "convert_file",
    "format_for",
    "read_columns",
    "read_isospace",
    "read_table",
    "write_columns",
    "write_table",
    "writable",
]
