"""Where an annotation came from: ``meta["itinerant"]["provenance"]``, and who may train on it.

Three values:

- ``predicted``: a model's pre-annotation that nobody has reviewed yet
  (written by ``trainer.annotation.suggest.suggest_batch``);
- ``corrected``: a pre-annotation a person changed (the events differ from
  the prediction), or one the annotator marked ``corrected``;
- ``gold``: annotated by a person from scratch, or a pre-annotation a person
  reviewed and accepted unchanged (marked ``gold`` by the annotator).

A record with no provenance is an ordinary hand-annotated record and counts
as gold: corpora written before this feature carry none. Suggested records
also carry ``prediction_digest``, a digest of the events the model proposed,
so that a merge can tell whether the annotator changed them (see
:func:`resolve_provenance`).
"""

from __future__ import annotations

import hashlib
import json
from typing import Any, Iterable, Sequence

from trainer.corpus.records import Event, Record

META_KEY = "itinerant"
PREDICTED, CORRECTED, GOLD = "predicted", "corrected", "gold"
PROVENANCES = (PREDICTED, CORRECTED, GOLD)
REVIEWED = (CORRECTED, GOLD)

EventsKey = tuple[tuple[tuple[int, int], tuple[tuple[str, tuple[int, int]], ...]], ...]


def events_key(events: Iterable[Event] | None) -> EventsKey | None:
    """A canonical, order-free form of events for comparison: confidences and the order of events and roles ignored."""
    if events is None:
        return None
    return tuple(sorted(
        ((int(e.trigger[0]), int(e.trigger[1])), tuple(sorted((r.role, (int(r.span[0]), int(r.span[1]))) for r in e.roles)))
        for e in events
    ))


def events_digest(events: Iterable[Event] | None) -> str:
    """The first 16 hex digits of the SHA-256 of :func:`events_key` as JSON (``"none"`` for unannotated)."""
    key = events_key(events)
    if key is None:
        return "none"
    return hashlib.sha256(json.dumps(key, separators=(",", ":")).encode("utf-8")).hexdigest()[:16]


def itinerant_meta(record: Record) -> dict[str, Any]:
    """The record's ``meta["itinerant"]`` block (empty when absent or not an object)."""
    block = (record.meta or {}).get(META_KEY)
    return block if isinstance(block, dict) else {}


def provenance_of(record: Record) -> str | None:
    """The provenance the record states, or ``None`` when it states none."""
    value = itinerant_meta(record).get("provenance")
    return value if isinstance(value, str) else None


def resolve_provenance(record: Record) -> str | None:
    """The provenance a returned batch record has, judged from what it states and whether its events changed.

    ``None`` for an unannotated record (no ``events``). With a
    ``prediction_digest`` (the record was suggested), events different from
    the prediction make it ``corrected`` whatever it states; unchanged events
    keep what the annotator stated: ``predicted`` (not reviewed),
    ``corrected`` or ``gold`` (reviewed and accepted). Without a digest the
    stated provenance is kept, and no provenance means ``gold`` (annotated
    from scratch). Unknown values are the caller's to refuse (see
    :func:`provenance_problem`).
    """
    if record.events is None:
        return None
    block = itinerant_meta(record)
    stated = block.get("provenance")
    digest = block.get("prediction_digest")
    if digest is None:
        return stated if stated in PROVENANCES else GOLD
    if digest != events_digest(record.events):
        return CORRECTED
    return stated if stated in PROVENANCES else PREDICTED


def provenance_problem(record: Record) -> str | None:
    """Why the record's provenance block cannot be read, or ``None`` when it can."""
    meta = record.meta or {}
    if META_KEY in meta and not isinstance(meta[META_KEY], dict):
        return f'meta.{META_KEY} must be an object like {{"provenance": "gold"}}, got {json.dumps(meta[META_KEY])}'
    stated = itinerant_meta(record).get("provenance")
    if stated is not None and stated not in PROVENANCES:
        return f"meta.{META_KEY}.provenance {json.dumps(stated)} is not one of {', '.join(PROVENANCES)}"
    return None


def training_records(records: Sequence[Record]) -> tuple[list[Record], list[str]]:
    """The records a model may be trained on, and the ids refused because they are still ``predicted``.

    Usable: annotated records (``events`` present, negatives included) whose
    provenance (:func:`resolve_provenance`) is not ``predicted``: records without
    provenance count as gold, and a suggested record whose events differ from
    the prediction is ``corrected`` whatever it states (editing marks it reviewed).
    Refused: annotated records still ``predicted`` (a pre-annotation
    nobody checked, which must not become training data silently) or marked
    with a value that is not a provenance (an unknown state is not a checked
    one). Unannotated
    records are text, not annotation: they are neither usable nor refused.
    Order is kept.

    >>> from trainer.corpus.records import Record
    >>> unchecked = Record("a", "d", "We left.", (), {"itinerant": {"provenance": "predicted"}})
    >>> checked = Record("b", "d", "We rode.", (), {"itinerant": {"provenance": "gold"}})
    >>> usable, refused = training_records([unchecked, checked])
    >>> [r.id for r in usable], refused
    (['b'], ['a'])
    """
    usable, refused = [], []
    for record in records:
        if not record.is_annotated:
            continue
        stated = provenance_of(record)
        if (stated is not None and stated not in PROVENANCES) or resolve_provenance(record) == PREDICTED:
            refused.append(record.id)
        else:
            usable.append(record)
    return usable, refused
