"""Choosing the next sentences to annotate: the model's least sure ones, spread out, never twice the same.

:func:`suggest_batch` scores every unannotated record with
:func:`trainer.models.uncertainty.record_uncertainty`, then picks ``n`` of
them greedily (:func:`select_batch`). With ``k`` records already chosen, a
candidate's score is::

    uncertainty - diversity * (same_doc / k + same_lemma / k) / 2

where ``same_doc`` counts the chosen records from the candidate's document
and ``same_lemma`` the chosen records sharing at least one predicted trigger
lemma with it (a record with no predicted trigger has the pseudo-lemma
``(no trigger)``, so negatives are spread too). Both shares lie in [0, 1], so
``diversity`` (in [0, 1]) says how many points of uncertainty a fully
repeated document and lemma cost: 0 ranks by uncertainty alone; at 1 a
candidate whose doc and lemmas every chosen record shares loses a whole
point. The first pick is always the most uncertain record.

A candidate that is a near duplicate of a chosen record is never chosen:
same normalised text (lower-cased word tokens) or a word-set Jaccard
similarity of at least :data:`NEAR_DUPLICATE_JACCARD`. Ties go to the
smaller record id, so a batch depends only on the model and the records.

The chosen records carry the model's predicted events as pre-annotations,
their existing ``meta`` keys, and ``meta["itinerant"]``::

    {"provenance": "predicted", "uncertainty": 0.8123, "rank": 1, "model": "crf-crf",
     "measure": "least_confidence", "prediction_digest": "3f2a..."}

See :mod:`trainer.corpus.provenance` for what happens to them next.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Sequence

from spacy.language import Language
from spacy.tokens import Doc

from trainer.corpus.provenance import META_KEY, PREDICTED, events_digest
from trainer.corpus.records import Record
from trainer.errors import ConfigError, CorpusError
from trainer.models.training import TrainedExtractor, parser_for
from trainer.models.uncertainty import MEASURES, uncertainty_parts
from trainer.parsing.parse import parse_records

NEAR_DUPLICATE_JACCARD = 0.8
NO_TRIGGER = "(no trigger)"
MAX_NAMED = 5
_WORD = re.compile(r"\w+")


@dataclass(frozen=True)
class Candidate:
    """What selection needs to know about one record."""

    id: str
    doc: str
    text: str
    uncertainty: float
    lemmas: frozenset[str] = frozenset({NO_TRIGGER})


def words(text: str) -> list[str]:
    """Lower-cased word tokens: the normalised form used to spot near duplicates."""
    return _WORD.findall(text.casefold())


def near_duplicates(a: str, b: str, *, threshold: float = NEAR_DUPLICATE_JACCARD) -> bool:
    """Same normalised text, or word sets with Jaccard similarity >= ``threshold``.

    >>> near_duplicates("We left Caddow at dawn.", "we left caddow at dawn")
    True
    >>> near_duplicates("We left Caddow at dawn.", "We reached Quillon at dusk.")
    False
    """
    return _similar(words(a), words(b), threshold)


def _check_options(n: int, diversity: float) -> None:
    if isinstance(n, bool) or not isinstance(n, int) or n < 1:
        raise ConfigError(f"n must be a positive whole number of records, got {n!r}", "ask for at least 1 record, e.g. -n 25")
    if not 0.0 <= diversity <= 1.0:
        raise ConfigError(f"diversity must lie in [0, 1], got {diversity!r}",
                          "0 ranks by uncertainty alone; 0.5 (the default) also spreads over docs and trigger lemmas")


def select_batch(candidates: Sequence[Candidate], n: int, *, diversity: float = 0.5) -> list[tuple[Candidate, float]]:
    """Greedy choice of up to ``n`` candidates, each with the score it was chosen with (see the module docstring).

    Fewer than ``n`` come back when the candidates (minus near duplicates) run out.
    """
    _check_options(n, diversity)
    pool = sorted(candidates, key=lambda c: c.id)
    words_of = {c.id: words(c.text) for c in pool}
    same_doc = {c.id: 0 for c in pool}
    same_lemma = {c.id: 0 for c in pool}
    chosen: list[tuple[Candidate, float]] = []
    while pool and len(chosen) < n:
        k = len(chosen)

        def score(c: Candidate) -> float:
            if k == 0:
                return c.uncertainty
            return c.uncertainty - diversity * (same_doc[c.id] / k + same_lemma[c.id] / k) / 2

        best = min(pool, key=lambda c: (-score(c), c.id))
        chosen.append((best, score(best)))
        kept = []
        for c in pool:
            if c is best or _similar(words_of[c.id], words_of[best.id]):
                continue
            same_doc[c.id] += c.doc == best.doc
            same_lemma[c.id] += bool(c.lemmas & best.lemmas)
            kept.append(c)
        pool = kept
    return chosen


def _similar(a: list[str], b: list[str], threshold: float = NEAR_DUPLICATE_JACCARD) -> bool:
    """Same word sequence, or word sets with Jaccard similarity >= ``threshold``."""
    if a == b:
        return True
    set_a, set_b = set(a), set(b)
    union = set_a | set_b
    return bool(union) and len(set_a & set_b) / len(union) >= threshold


def trigger_lemmas(record: Record, doc: Doc) -> frozenset[str]:
    """Lemmas of the record's (predicted) triggers: the head token's lemma, other tokens as written.

    ``{"(no trigger)"}`` for a record without events.
    """
    lemmas = set()
    for event in record.events or ():
        piece = doc.char_span(event.trigger[0], event.trigger[1], alignment_mode="expand")
        if piece is None or len(piece) == 0:
            lemmas.add(record.span_text(event.trigger).casefold())
        else:
            lemmas.add(" ".join(t.lemma_.lower() if t == piece.root else t.lower_ for t in piece))
    return frozenset(lemmas) or frozenset({NO_TRIGGER})


def _check_records(records: Sequence[Record]) -> None:
    annotated = [r.id for r in records if r.is_annotated]
    if annotated:
        named = ", ".join(annotated[:MAX_NAMED]) + (f" and {len(annotated) - MAX_NAMED} more" if len(annotated) > MAX_NAMED else "")
        raise CorpusError(f"{len(annotated)} record(s) are already annotated (they have 'events'): {named}",
                          "suggest from unannotated records only: leave out the annotated ones or drop their 'events' key")
    seen: set[str] = set()
    repeated = sorted({r.id for r in records if r.id in seen or seen.add(r.id)})
    if repeated:
        raise CorpusError(f"{len(repeated)} id(s) occur more than once: {', '.join(repeated[:MAX_NAMED])}",
                          "give every record a unique id")


def suggest_batch(
    trained: TrainedExtractor,
    records: Sequence[Record],
    n: int,
    *,
    measure: str = "least_confidence",
    diversity: float = 0.5,
    nlp: Language | None = None,
    docs: Sequence[Doc] | None = None,
    model_name: str | None = None,
) -> list[Record]:
    """The ``n`` unannotated records best worth annotating next, pre-annotated by the model, in rank order.

    ``records``: unannotated records (no ``events`` key; annotated ones are
    refused with :class:`~trainer.errors.CorpusError`), ids unique. ``docs``:
    their parses in order (parsed through the cache when ``None``).
    ``measure``: ``"least_confidence"`` or ``"entropy"``
    (:mod:`trainer.models.uncertainty`). ``diversity`` in [0, 1] weighs the
    spread over docs and trigger lemmas. ``model_name`` goes to
    ``meta["itinerant"]["model"]`` (default: the config's name; the CLI should
    pass the model file and its digest). Returns fewer than ``n`` records when
    the pool runs out.
    """
    _check_options(n, diversity)
    if measure not in MEASURES:
        raise ConfigError(f"measure={measure!r} is not an uncertainty measure", f"use one of: {', '.join(MEASURES)}")
    _check_records(records)
    if not records:
        return []
    if docs is None:
        docs, _ = parse_records(nlp or parser_for(trained.config), records, trained.config.parser)
    if len(docs) != len(records):
        raise ConfigError(f"{len(records)} records but {len(docs)} docs", "pass one parsed doc per record, in order")
    predicted = trained.extractor.predict(records, docs)
    parts = uncertainty_parts(trained, records, docs, measure=measure)
    by_id = {r.id: r for r in predicted}
    candidates = [Candidate(r.id, r.doc, r.text, part.value, trigger_lemmas(r, doc))
                  for r, doc, part in zip(predicted, docs, parts)]
    name = model_name or trained.config.name
    out = []
    for rank, (candidate, _) in enumerate(select_batch(candidates, n, diversity=diversity), start=1):
        record = by_id[candidate.id]
        block = {"provenance": PREDICTED, "uncertainty": round(candidate.uncertainty, 4), "rank": rank, "model": name,
                 "measure": measure, "prediction_digest": events_digest(record.events)}
        out.append(Record(record.id, record.doc, record.text, record.events, {**(record.meta or {}), META_KEY: block}))
    return out
