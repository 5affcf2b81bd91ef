"""Corpus statistics: what a corpus holds, at a glance.

Trigger lemmas need a lemmatiser; the corpus layer does not parse, so the
caller passes one in (the CLI passes the parser's), or trigger forms are
lower-cased words instead.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from statistics import mean
from typing import Callable, Iterable

from trainer.corpus.records import DEFAULT_ROLES, Record

Lemmatizer = Callable[[Record, tuple[int, int]], str]


def lower_form(record: Record, span: tuple[int, int]) -> str:
    """The fallback 'lemma': the trigger's words, lower-cased."""
    return record.span_text(span).lower()


@dataclass
class CorpusStats:
    """Counts over a corpus; every field is plain data so it serialises as is."""

    records: int = 0
    docs: int = 0
    annotated: int = 0
    negative: int = 0
    unannotated: int = 0
    events: int = 0
    role_counts: dict[str, int] = field(default_factory=dict)
    events_per_record: dict[int, int] = field(default_factory=dict)
    trigger_lemmas: dict[str, int] = field(default_factory=dict)
    lemma_source: str = "lower-cased trigger words"
    span_words: dict[str, dict[str, float]] = field(default_factory=dict)
    records_per_doc: dict[str, int] = field(default_factory=dict)

    def to_text(self, top: int = 15) -> str:
        """A plain-text summary for the terminal."""
        share = (lambda n: f"{n} ({n / self.records:.0%})") if self.records else str
        lines = [
            f"records: {self.records} in {self.docs} doc(s)",
            f"  annotated with events: {share(self.annotated - self.negative)}; negative: {share(self.negative)}; "
            f"unannotated: {share(self.unannotated)}",
            f"events: {self.events}",
            "roles: " + ", ".join(f"{r} {n}" for r, n in self.role_counts.items()),
            "events per annotated record: " + _listed(f"{k}: {v}" for k, v in sorted(self.events_per_record.items())),
            f"trigger lemmas ({self.lemma_source}): {len(self.trigger_lemmas)} distinct; most frequent: "
            + _listed(f"{k} {v}" for k, v in list(self.trigger_lemmas.items())[:top]),
            "span length in words (mean / max): "
            + _listed(f"{r} {s['mean']:.1f}/{s['max']:.0f}" for r, s in self.span_words.items()),
            "records per doc: " + _listed(f"{d} {n}" for d, n in self.records_per_doc.items()),
        ]
        return "\n".join(lines)


def _listed(items: Iterable[str]) -> str:
    """Items joined by commas, or ``none`` for no items (so no line of the summary ends empty)."""
    return ", ".join(items) or "none"


def corpus_stats(
    records: Iterable[Record], *, roles: tuple[str, ...] = DEFAULT_ROLES, lemmatize: Lemmatizer | None = None
) -> CorpusStats:
    """Count records, events, roles, trigger lemmas and span lengths."""
    records = list(records)
    stats = CorpusStats(records=len(records))
    lemma_of = lemmatize or lower_form
    if lemmatize is not None:
        stats.lemma_source = "parser lemmas"
    roles_seen: Counter[str] = Counter({r: 0 for r in roles})
    per_record: Counter[int] = Counter()
    lemmas: Counter[str] = Counter()
    lengths: dict[str, list[int]] = {r: [] for r in roles + ("trigger",)}
    per_doc: Counter[str] = Counter()
    for record in records:
        per_doc[record.doc] += 1
        if record.events is None:
            stats.unannotated += 1
            continue
        stats.annotated += 1
        stats.negative += not record.events
        per_record[len(record.events)] += 1
        for event in record.events:
            stats.events += 1
            lemmas[lemma_of(record, event.trigger)] += 1
            lengths["trigger"].append(len(record.span_text(event.trigger).split()))
            for role in event.roles:
                roles_seen[role.role] += 1
                lengths.setdefault(role.role, []).append(len(record.span_text(role.span).split()))
    stats.docs = len(per_doc)
    stats.role_counts = dict(roles_seen)
    stats.events_per_record = dict(sorted(per_record.items()))
    stats.trigger_lemmas = dict(sorted(lemmas.items(), key=lambda kv: (-kv[1], kv[0])))
    stats.span_words = {r: {"mean": mean(v), "max": max(v)} for r, v in lengths.items() if v}
    stats.records_per_doc = dict(sorted(per_doc.items()))
    return stats
