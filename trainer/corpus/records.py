"""The record model: sentences, motion events and role spans.

A :class:`Record` is one sentence (or short passage) of a document. Its
``events`` is ``None`` for unannotated text, ``[]`` for an annotated sentence
with no motion event, or a list of :class:`Event`. Offsets are ``(start, end)``
indices into ``text`` counted in Unicode code points, end exclusive.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, Collection, Sequence

DEFAULT_ROLES: tuple[str, ...] = ("mover", "source", "path", "destination")

Offsets = tuple[int, int]


@dataclass(frozen=True, order=True)
class RoleSpan:
    """One argument of an event: its role name and character span."""

    role: str
    span: Offsets
    confidence: float | None = field(default=None, compare=False)


@dataclass(frozen=True)
class Event:
    """A motion event: the trigger span and its role spans."""

    trigger: Offsets
    roles: tuple[RoleSpan, ...] = ()
    confidence: float | None = field(default=None, compare=False)

    def spans_of(self, role: str) -> list[Offsets]:
        """Spans of one role in this event, in text order."""
        return sorted(r.span for r in self.roles if r.role == role)


@dataclass(frozen=True)
class Record:
    """One sentence of a document with its (optional) gold or predicted events."""

    id: str
    doc: str
    text: str
    events: tuple[Event, ...] | None = None
    meta: dict[str, Any] | None = field(default=None, compare=False, hash=False)

    @property
    def is_annotated(self) -> bool:
        """True when the record says what motion it holds, even if none."""
        return self.events is not None

    def span_text(self, span: Offsets) -> str:
        """The characters a span covers."""
        return self.text[span[0] : span[1]]

    def with_events(self, events: Sequence[Event] | None) -> "Record":
        """A copy of the record carrying other events (meta kept)."""
        return replace(self, events=None if events is None else tuple(events))

    def within_roles(self, roles: Collection[str]) -> tuple["Record", list[tuple[int, RoleSpan]]]:
        """The record with only the role spans whose role is in ``roles``, and the others left out, each with the
        number (from 1) of its event."""
        left_out = [(n, r) for n, e in enumerate(self.events or (), start=1) for r in e.roles if r.role not in roles]
        if not left_out:
            return self, []
        return self.with_events([replace(e, roles=tuple(r for r in e.roles if r.role in roles))
                                 for e in self.events]), left_out

    def same_content(self, other: "Record") -> bool:
        """Equality including ``meta`` (dataclass equality ignores it)."""
        return self == other and self.meta == other.meta

