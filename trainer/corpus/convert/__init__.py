"""Converters between the canonical JSONL and other corpus formats.

Every reader returns a :class:`Conversion` (the records plus the losses) and
every writer returns its losses. A loss is one line ``"where: what could not be
represented, and what was done"``; nothing is dropped or changed without one,
so an empty list means the conversion was exact. Formats are picked by name
(or by a file's extension) from the table :data:`FORMATS`::

    result = convert_file(Path("train.jsonl"), Path("train.tsv"), from_format="jsonl", to_format="table")
    print(len(result.records), *result.losses, sep="\\n")

Every writer keeps only the roles of the inventory ``roles`` (listing the others
as losses), so what it writes reads back with the same inventory.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Iterable, Iterator

from trainer.corpus import jsonl
from trainer.corpus.convert.base import Conversion, writable
from trainer.corpus.convert.columns import read_columns, write_columns
from trainer.corpus.convert.inline import read_inline
from trainer.corpus.convert.isospace import read_isospace
from trainer.corpus.convert.table import read_table, write_table
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.errors import CorpusError, UnknownFormatError, UnreadableInputError
from trainer.outputs import check_output

Reader = Callable[..., Conversion]  # (path, *, roles) -> the records and the losses
Writer = Callable[..., list[str]]  # (records, path, *, roles) -> the losses


def _read_jsonl(path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> Conversion:
    """Canonical JSONL, validated by the corpus reader (which refuses files with errors)."""
    try:
        return Conversion(records=read_corpus([path], roles=roles, skippable=False).records)
    except CorpusError as exc:  # convert has no --skip-bad: its fix says why
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


@dataclass(frozen=True)
class Format:
    """One corpus format: how it is read, how it is written (``None``: it is not), the extensions standing for it."""

    reader: Reader | None
    writer: Writer | None
    extensions: tuple[str, ...]


# The formats by name; a new one is one entry here (and its module, docs and round-trip test).
FORMATS: dict[str, Format] = {
    "jsonl": Format(_read_jsonl, _write_jsonl, (".jsonl",)),
    "columns": Format(read_columns, write_columns, (".cols", ".bio", ".conll")),
    "table": Format(read_table, write_table, (".csv", ".tsv")),
    "isospace": Format(read_isospace, None, (".xml",)),
    "inline": Format(_read_inline, None, (".txt",)),
}


def _handles(fmt: Format, kind: str) -> bool:
    return (fmt.reader if kind == "input" else fmt.writer) is not None


def format_for(path: Path, given: str | None, kind: str) -> Format:
    """The ``kind`` (``"input"`` or ``"output"``) format named, or the one the extension of ``path`` stands for.

    Refused when neither names a format of :data:`FORMATS` that reads (input) or writes (output).
    """
    if kind == "input" and Path(path).is_dir():
        raise UnreadableInputError(f"{path}: is a folder, not a file", "convert one file at a time")
    suffix = Path(path).suffix.lower()
    name = given or next((name for name, fmt in FORMATS.items() if suffix in fmt.extensions), None)
    option = "--input-format" if kind == "input" else "--output-format"
    if name is None:
        known = ", ".join(f"{ext} ({name})" for name, fmt in FORMATS.items() if _handles(fmt, kind) for ext in fmt.extensions)
        raise UnknownFormatError(f"{path}: cannot tell the {kind} format from the extension {Path(path).suffix or '(none)'!r}",
                                 f"use one of the extensions {known}, or name the format with {option}")
    if name not in FORMATS or not _handles(FORMATS[name], kind):
        raise UnknownFormatError(f"{path}: {name!r} is not an {kind} format" + ("" if given else " (from its extension)"),
                                 f"{option} takes one of: {', '.join(n for n, fmt in FORMATS.items() if _handles(fmt, kind))}")
    return FORMATS[name]


def convert_file(
    source: Path,
    target: Path,
    *,
    from_format: str | None = None,
    to_format: str | None = None,
    roles: tuple[str, ...] = DEFAULT_ROLES,
) -> Conversion:
    """Read ``source`` in one format and write ``target`` in another.

    A format left out is inferred from the file's extension (``extensions`` in :data:`FORMATS`).
    Returns the records read and the losses of both steps (reading first).
    Both formats and the target are checked before anything is read or written.
    """
    check_output(target, inputs=[source], what="converted file")
    reader = format_for(source, from_format, "input").reader
    writer = format_for(target, to_format, "output").writer
    assert reader is not None and writer is not None  # format_for checked
    conversion = reader(Path(source), roles=roles)
    written = writer(conversion.records, Path(target), roles=roles)
    return Conversion(records=conversion.records, losses=conversion.losses + written)


__all__ = [
    "FORMATS",
    "Conversion",
    "Format",
    "convert_file",
    "format_for",
    "read_columns",
    "read_isospace",
    "read_table",
    "write_columns",
    "write_table",
    "writable",
]
