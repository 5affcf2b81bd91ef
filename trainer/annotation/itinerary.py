"""Itineraries: the motion events of each document as an ordered table.

Input is canonical records (gold or extracted; :mod:`trainer.corpus.records`),
output one row per kept event, documents in first-seen order and events in
record order within a document::

    doc, id, order, event, mover, trigger, source, path, destination, confidence, mover_carried, matched

``order`` numbers the kept rows of a document from 1; ``event`` is the event's
number within its record (from 1, as in the flat table of
:mod:`trainer.corpus.convert.table`), so ``(id, event)`` finds it again.
Several spans of one role (two movers, two paths) are joined with ``"; "`` in
text order. ``confidence`` is the event's confidence for extracted records and
empty (NaN in the frame) for gold. Role names outside mover, source, path and
destination are not shown.

Mover filters (``movers``):

- ``None`` or empty: every event, including events with no mover;
- ``"first_person"``: the narrator, i.e. a mover span that is *as a whole* one
  of I, we, us, me, our, my (case-insensitive; ``my wife`` is not the narrator);
- any other entry: a name matched against the whole mover span text,
  case-insensitive, whitespace collapsed, curly apostrophes straightened.

An event is kept when any of its mover spans matches any entry; ``matched``
lists the entries it matched, in the order given. With a filter, events with
no mover are left out, unless ``carry_mover=True``: then an event with no mover
takes the movers of the previous event *of the same document* that has one
(its own or carried), and is filtered on those; ``mover_carried`` says so.
This is a heuristic for elided subjects (``... and pushed on to Dunmarrow``)
and is wrong when the previous event belongs to someone else.

Confidence floor (``min_confidence``, extracted records): an event whose
confidence is below it is left out, and so is every role span below it (a
role's confidence is that of the whole role instance, trigger included, so it
is never above its event's); spans and events without a confidence (gold) are
kept. The floor applies before the mover filter: an event whose movers all
fall below it has no mover.

Example::

    >>> from trainer.corpus.convert.inline import parse_inline
    >>> r = parse_inline("[We|mover1] [left|T1] [Caddow|source1].", record_id="d-s001", doc="d")
    >>> build_itinerary([r], movers=["first_person"]).to_frame()[["id", "mover", "trigger", "source"]].values.tolist()
    [['d-s001', 'We', 'left', 'Caddow']]
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Iterable, Sequence

import pandas as pd

from trainer.corpus.records import Event, Record
from trainer.corpus.convert.table import LINE_END, table_separator
from trainer.errors import ConfigError
from trainer.outputs import write_text

FIRST_PERSON = "first_person"
FIRST_PERSON_FORMS = frozenset({"i", "we", "us", "me", "our", "my"})
PLACE_ROLES = ("source", "path", "destination")  # the order a journey passes through them
MOVER = "mover"
JOIN = "; "
COLUMNS = (
    "doc", "id", "order", "event", "mover", "trigger", "source", "path", "destination",
    "confidence", "mover_carried", "matched",
)  # fmt: skip
_APOSTROPHES = str.maketrans({"\u2019": "'", "\u2018": "'", "\u02bc": "'", "\u2032": "'"})
_SPACE = re.compile(r"\s+")


def fold(text: str) -> str:
    """Case-fold, straighten curly apostrophes and collapse whitespace (the mover and place match key)."""
    return _SPACE.sub(" ", text.translate(_APOSTROPHES)).strip().casefold()


@dataclass(frozen=True)
class ItineraryRow:
    """One kept event: its place in the document and the texts of its spans (each role in text order)."""

    doc: str
    record_id: str
    order: int
    event: int
    trigger: str
    movers: tuple[str, ...]
    sources: tuple[str, ...]
    paths: tuple[str, ...]
    destinations: tuple[str, ...]
    confidence: float | None = None
    mover_carried: bool = False
    matched: tuple[str, ...] = ()

    def places(self, role: str) -> tuple[str, ...]:
        """The span texts of one place role (``source``, ``path`` or ``destination``)."""
        return {"source": self.sources, "path": self.paths, "destination": self.destinations}[role]


@dataclass(frozen=True)
class Itinerary:
    """The kept rows plus how they were chosen and what was left out.

    ``movers`` is the filter as given (empty: unfiltered); ``left_out`` counts
    events of annotated records that the filter dropped; ``unannotated``
    counts records with no ``events`` key (nothing to show). With a confidence
    floor, ``below_floor`` counts the events and ``roles_below_floor`` the role
    spans of kept events it left out, and ``with_confidence`` the events that
    carried a confidence at all (none: gold records, which the floor keeps).
    """

    rows: tuple[ItineraryRow, ...]
    movers: tuple[str, ...] = ()
    carry_mover: bool = False
    left_out: int = 0
    unannotated: int = 0
    min_confidence: float | None = None
    below_floor: int = 0
    roles_below_floor: int = 0
    with_confidence: int = 0

    @property
    def docs(self) -> list[str]:
        """Documents with at least one row, in first-seen order."""
        return list(dict.fromkeys(row.doc for row in self.rows))

    def to_frame(self) -> pd.DataFrame:
        """The table: columns :data:`COLUMNS`; ``order``/``event`` int, ``confidence`` float (NaN for gold)."""
        data = {
            "doc": [r.doc for r in self.rows],
            "id": [r.record_id for r in self.rows],
            "order": [r.order for r in self.rows],
            "event": [r.event for r in self.rows],
            "mover": [JOIN.join(r.movers) for r in self.rows],
            "trigger": [r.trigger for r in self.rows],
            "source": [JOIN.join(r.sources) for r in self.rows],
            "path": [JOIN.join(r.paths) for r in self.rows],
            "destination": [JOIN.join(r.destinations) for r in self.rows],
            "confidence": [math.nan if r.confidence is None else r.confidence for r in self.rows],
            "mover_carried": [r.mover_carried for r in self.rows],
            "matched": [JOIN.join(r.matched) for r in self.rows],
        }
        frame = pd.DataFrame(data, columns=list(COLUMNS))
        return frame.astype({"order": "int64", "event": "int64", "confidence": "float64", "mover_carried": "bool"})


def _mover_keys(movers: Sequence[str] | str | None) -> tuple[str, ...]:
    """The filter entries, validated and de-duplicated (first spelling kept); a bare string is one entry."""
    if movers is None:
        return ()
    entries = [movers] if isinstance(movers, str) else list(movers)
    kept: dict[str, str] = {}
    for entry in entries:
        if not isinstance(entry, str) or not entry.strip():
            raise ConfigError(f"movers: every entry must be a non-empty name, got {entry!r}",
                              f"give {FIRST_PERSON!r} or mover names such as 'Dicken'")
        kept.setdefault(fold(entry), entry.strip())
    return tuple(kept.values())


def _matches(mover_texts: Sequence[str], entries: Sequence[str]) -> tuple[str, ...]:
    """The filter entries any of the mover texts matches, in the entries' order."""
    folded = {fold(text) for text in mover_texts}
    out = []
    for entry in entries:
        if fold(entry) == FIRST_PERSON:
            hit = bool(folded & FIRST_PERSON_FORMS)
        else:
            hit = fold(entry) in folded
        if hit:
            out.append(entry)
    return tuple(out)


def _texts(record: Record, event: Event, role: str) -> tuple[str, ...]:
    return tuple(record.span_text(span) for span in event.spans_of(role))


def check_min_confidence(min_confidence: float | None) -> float | None:
    """The confidence floor, validated: None or a number in [0, 1]."""
    if min_confidence is None:
        return None
    if isinstance(min_confidence, bool) or not isinstance(min_confidence, (int, float)) \
            or not 0.0 <= float(min_confidence) <= 1.0:
        raise ConfigError(f"min_confidence (--min-confidence) must be a number from 0 to 1, got {min_confidence!r}",
                          "e.g. 0.5 keeps the events and roles the model gives at least an even chance")
    return float(min_confidence)


def _below(confidence: float | None, floor: float | None) -> bool:
    return floor is not None and confidence is not None and confidence < floor


def above_floor(event: Event, floor: float | None) -> Event | None:
    """The event with its role spans below the confidence floor left out; None when the event itself is below it.

    Confidences that are absent (gold) are never below; no floor keeps everything.
    """
    if _below(event.confidence, floor):
        return None
    return replace(event, roles=tuple(r for r in event.roles if not _below(r.confidence, floor)))


def build_itinerary(
    records: Iterable[Record], *, movers: Sequence[str] | str | None = None, carry_mover: bool = False,
    min_confidence: float | None = None,
) -> Itinerary:
    """One row per event of the annotated records, grouped by document, in record order.

    ``records``: canonical records (gold or extracted); records without an
    ``events`` key are counted in ``unannotated`` and skipped. See the module
    docstring for ``movers``, ``carry_mover`` and ``min_confidence``.
    """
    entries = _mover_keys(movers)
    floor = check_min_confidence(min_confidence)
    by_doc: dict[str, list[Record]] = {}
    unannotated = 0
    for record in records:
        if record.events is None:
            unannotated += 1
            continue
        by_doc.setdefault(record.doc, []).append(record)
    rows: list[ItineraryRow] = []
    left_out = below_floor = roles_below_floor = with_confidence = 0
    for doc, doc_records in by_doc.items():
        previous: tuple[str, ...] = ()  # movers of the last event of this doc that had any
        order = 0
        for record in doc_records:
            for number, event in enumerate(record.events or (), start=1):
                with_confidence += event.confidence is not None
                kept = above_floor(event, floor)
                if kept is None:
                    below_floor += 1
                    continue
                roles_below_floor += len(event.roles) - len(kept.roles)
                event = kept
                own = _texts(record, event, MOVER)
                carried = carry_mover and not own and bool(previous)
                mover_texts = previous if carried else own
                if own:
                    previous = own
                matched = _matches(mover_texts, entries) if entries else ()
                if entries and not matched:
                    left_out += 1
                    continue
                order += 1
                rows.append(ItineraryRow(
                    doc=doc, record_id=record.id, order=order, event=number,
                    trigger=record.span_text(event.trigger), movers=mover_texts,
                    sources=_texts(record, event, "source"), paths=_texts(record, event, "path"),
                    destinations=_texts(record, event, "destination"),
                    confidence=event.confidence, mover_carried=carried, matched=matched,
                ))
    return Itinerary(rows=tuple(rows), movers=entries, carry_mover=carry_mover, left_out=left_out,
                     unannotated=unannotated, min_confidence=floor, below_floor=below_floor,
                     roles_below_floor=roles_below_floor, with_confidence=with_confidence)


def write_itinerary(itinerary: Itinerary, path: Path | str) -> Path:
    """Write the table as CSV or TSV (by extension), UTF-8, empty cells for no value; return the path."""
    separator = table_separator(Path(path))
    return write_text(path, itinerary.to_frame().to_csv(sep=separator, index=False, na_rep="", lineterminator=LINE_END))
