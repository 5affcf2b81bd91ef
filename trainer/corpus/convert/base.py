"""What every converter shares: the result of a read and the writers' filter of what a format can carry.

A loss is one line ``"where: what could not be represented, and what was done"``;
nothing is dropped or changed without one, so an empty list means the
conversion was exact.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from trainer.corpus.records import Record


@dataclass
class Conversion:
    """Records read from a file, and what could not be carried over on the way."""

    records: list[Record]
    losses: list[str] = field(default_factory=list)


def writable(record: Record, roles: tuple[str, ...], *, keeps_confidence: bool) -> tuple[Record, list[str]]:
    """The record as a writer may write it, and the losses that costs.

    Role spans outside the inventory are left out; confidences are reported
    when the target format has no place for them (they do not affect equality).
    """
    losses: list[str] = []
    if not keeps_confidence and _has_confidence(record):
        losses.append(f"{record.id}: confidence scores cannot be written in this format; left out")
    record, left_out = record.within_roles(roles)
    losses += [f"{record.id}, event {number}: role {role.role!r} {list(role.span)} is not in the inventory "
               f"({', '.join(roles)}); left out" for number, role in left_out]
    return record, losses


def _has_confidence(record: Record) -> bool:
    events = record.events or ()
    return any(e.confidence is not None or any(r.confidence is not None for r in e.roles) for e in events)
