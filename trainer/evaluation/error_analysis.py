"""What kind of mistakes a system makes, on role instances ``(trigger span, role, argument span)``.

Per record (gold and prediction paired by id, as for scoring), every gold and
predicted instance gets exactly one kind, decided in this order, each step
pairing what the earlier ones left, one-to-one:

1. ``correct``: equal instances (an exact-mode true positive);
2. ``boundary``: same role, same trigger, overlapping but unequal arguments
   (largest overlap first);
3. ``wrong_role``: same trigger and argument span, another role;
4. ``wrong_trigger_link``: same role and argument span, attached to another
   trigger (the most overlapping trigger first);
5. ``missed``: a gold instance left over; ``spurious``: a prediction left over.

Ties are broken by position, so results do not depend on input order. A pair
counts once under its kind, so exact-mode counts follow: tp = correct,
fp = predicted - correct, fn = gold - correct.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from typing import Any, Callable, Sequence

from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.evaluation.scoring import Span, as_span, check_roles, pair_by_id, span_overlap

KINDS = ("correct", "boundary", "wrong_role", "wrong_trigger_link", "missed", "spurious")
NONE = "none"

Triple = tuple[Span, str, Span]  # (trigger span, role, argument span)
PairKey = Callable[[Triple, Triple], tuple[Any, ...] | None]


@dataclass(frozen=True)
class Classified:
    """One gold and/or predicted instance of a record and its kind (``None`` on the side that has none)."""

    kind: str
    record: Record
    gold: Triple | None
    pred: Triple | None


@dataclass(frozen=True)
class ErrorExample:
    """A sentence showing one kind: the gold and predicted role, trigger and argument text."""

    id: str
    text: str
    kind: str
    gold_role: str | None
    gold_trigger: str | None
    gold_span: str | None
    predicted_role: str | None
    predicted_trigger: str | None
    predicted_span: str | None

    def to_dict(self) -> dict[str, Any]:
        return {"id": self.id, "text": self.text, "kind": self.kind,
                "gold_role": self.gold_role, "gold_trigger": self.gold_trigger, "gold_span": self.gold_span,
                "predicted_role": self.predicted_role, "predicted_trigger": self.predicted_trigger,
                "predicted_span": self.predicted_span}


@dataclass
class ErrorAnalysis:
    """Counts per kind, role confusions, the triggers and prepositions behind errors, and examples.

    ``confusion[gold role][predicted role]`` counts paired instances, with
    ``none`` for a missing side. ``triggers`` and ``prepositions`` are
    ``(word, errors)`` pairs, most errors first.
    """

    roles: tuple[str, ...]
    counts: dict[str, int]
    confusion: dict[str, dict[str, int]]
    triggers: list[tuple[str, int]]
    prepositions: list[tuple[str, int]]
    examples: dict[str, list[ErrorExample]] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "roles": list(self.roles),
            "counts": dict(self.counts),
            "confusion": {row: dict(cols) for row, cols in self.confusion.items()},
            "triggers": [[word, n] for word, n in self.triggers],
            "prepositions": [[word, n] for word, n in self.prepositions],
            "examples": {kind: [e.to_dict() for e in items] for kind, items in self.examples.items()},
        }


def _triples(record: Record, roles: Sequence[str]) -> set[Triple]:
    return {(as_span(event.trigger), argument.role, as_span(argument.span))
            for event in record.events or () for argument in event.roles if argument.role in roles}


def _boundary(g: Triple, p: Triple) -> tuple[Any, ...] | None:
    if g[0] == p[0] and g[1] == p[1] and g[2] != p[2] and span_overlap(g[2], p[2]) > 0:
        return (-span_overlap(g[2], p[2]), g, p)
    return None


def _wrong_role(g: Triple, p: Triple) -> tuple[Any, ...] | None:
    return (g, p) if g[0] == p[0] and g[2] == p[2] and g[1] != p[1] else None


def _wrong_link(g: Triple, p: Triple) -> tuple[Any, ...] | None:
    if g[1] == p[1] and g[2] == p[2] and g[0] != p[0]:
        return (-span_overlap(g[0], p[0]), g, p)
    return None


STEPS: tuple[tuple[str, PairKey], ...] = (("boundary", _boundary), ("wrong_role", _wrong_role),
                                          ("wrong_trigger_link", _wrong_link))


def _pair_greedily(gold: set[Triple], pred: set[Triple], key: PairKey) -> list[tuple[Triple, Triple]]:
    """One-to-one pairs of compatible instances, smallest key first; the pairs leave both sets."""
    candidates = sorted(k for g in gold for p in pred if (k := key(g, p)) is not None)
    pairs = []
    for *_, g, p in candidates:
        if g in gold and p in pred:
            gold.discard(g)
            pred.discard(p)
            pairs.append((g, p))
    return pairs


def classify_record(gold: Record, pred: Record, *, roles: Sequence[str] = DEFAULT_ROLES) -> list[Classified]:
    """Every gold and predicted instance of one record with its kind, in the order of :data:`KINDS`."""
    roles = check_roles(roles)
    gold_left, pred_left = _triples(gold, roles), _triples(pred, roles)
    matched = gold_left & pred_left
    gold_left -= matched
    pred_left -= matched
    out = [Classified("correct", gold, t, t) for t in sorted(matched)]
    for kind, key in STEPS:
        out.extend(Classified(kind, gold, g, p) for g, p in _pair_greedily(gold_left, pred_left, key))
    out.extend(Classified("missed", gold, g, None) for g in sorted(gold_left))
    out.extend(Classified("spurious", gold, None, p) for p in sorted(pred_left))
    return out


def _words(text: str) -> str:
    return " ".join(text.lower().split())


def word_before(text: str, span: Span) -> str | None:
    """The lower-cased word just before a span, if it is alphabetic (``through`` in ``through the gap``)."""
    words = text[: span[0]].split()
    if words and words[-1].isalpha():
        return words[-1].lower()
    return None


def _example(item: Classified) -> ErrorExample:
    record = item.record

    def parts(t: Triple | None) -> tuple[str | None, str | None, str | None]:
        if t is None:
            return None, None, None
        return t[1], record.span_text(t[0]), record.span_text(t[2])

    return ErrorExample(record.id, record.text, item.kind, *parts(item.gold), *parts(item.pred))


def _top(counter: Counter[str], top: int) -> list[tuple[str, int]]:
    return sorted(counter.items(), key=lambda kv: (-kv[1], kv[0]))[:top]


def error_analysis(
    gold: Sequence[Record],
    pred: Sequence[Record],
    *,
    roles: Sequence[str] = DEFAULT_ROLES,
    examples: int = 3,
    top: int = 10,
) -> ErrorAnalysis:
    """Classify every role instance of the corpus (see the module docstring) and summarise.

    ``examples`` sentences are kept per kind (gold record order); ``top``
    triggers (lower-cased trigger text) and prepositions (the word before the
    argument) are listed by how many errors involve them, counting the gold
    instance's trigger and argument where there is one, else the prediction's.
    """
    roles = check_roles(roles)
    pairs, _ = pair_by_id(gold, pred)
    counts = {kind: 0 for kind in KINDS}
    labels = (*roles, NONE)
    confusion = {row: {col: 0 for col in labels} for row in labels}
    triggers: Counter[str] = Counter()
    prepositions: Counter[str] = Counter()
    kept: dict[str, list[ErrorExample]] = {kind: [] for kind in KINDS}
    for g, p in pairs:
        for item in classify_record(g, p, roles=roles):
            counts[item.kind] += 1
            confusion[item.gold[1] if item.gold else NONE][item.pred[1] if item.pred else NONE] += 1
            if len(kept[item.kind]) < examples:
                kept[item.kind].append(_example(item))
            if item.kind == "correct":
                continue
            trigger, _, argument = item.gold or item.pred  # type: ignore[misc]
            triggers[_words(g.span_text(trigger))] += 1
            preposition = word_before(g.text, argument)
            if preposition is not None:
                prepositions[preposition] += 1
    return ErrorAnalysis(roles, counts, confusion, _top(triggers, top), _top(prepositions, top), kept)
