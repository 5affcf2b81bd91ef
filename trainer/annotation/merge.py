"""Bringing corrected batches back into the corpus, reporting every conflict instead of resolving it.

:func:`merge_batches` takes the corpus and the batches an annotator returned
(records matched by ``id``). For each id found in the batches:

1. each occurrence's provenance is resolved
   (:func:`~trainer.corpus.provenance.resolve_provenance`): an edited
   pre-annotation becomes ``corrected``; reviewed records lose the model's
   confidences; a record with an unreadable provenance is a conflict;
2. occurrences in several batches (or twice in one) must agree on text and
   events; if they do, the first reviewed one is taken, else the first;
3. against the corpus: a new id is **added** (after the corpus, in batch
   order); the same id with different text is a conflict; a corpus record
   that is annotated and not ``predicted`` (gold, corrected, or no provenance)
   is never overwritten by different events (a conflict) and stays
   **unchanged** when the events agree; an unannotated or still ``predicted``
   corpus record is **updated** (its ``meta`` keys kept, the batch's added
   over them).

A conflict leaves the corpus record as it was; each message names the id.
Nothing is resolved silently: the caller should show the conflicts and fail.

>>> from trainer.corpus.records import Record
>>> corpus = [Record("s1", "d", "We left.")]
>>> batch = [Record("s1", "d", "We left.", ())]
>>> result = merge_batches(corpus, [batch])
>>> result.updated, result.records[0].meta
(['s1'], {'itinerant': {'provenance': 'gold'}})
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Sequence

from trainer.corpus.provenance import (
    META_KEY, PREDICTED, REVIEWED, events_key, itinerant_meta, provenance_of, provenance_problem,
    resolve_provenance, training_records,
)
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import DEFAULT_ROLES, Event, Record, RoleSpan
from trainer.errors import CorpusError
from trainer.outputs import check_output

# training_records is re-exported: the training-data filter goes with the merge that stamps provenance.
__all__ = ["MergeResult", "merge_batches", "merge_files", "training_records"]


@dataclass
class MergeResult:
    """The merged corpus and what the merge did; ``added``, ``updated`` and ``unchanged`` list ids."""

    records: list[Record]
    conflicts: list[str] = field(default_factory=list)
    added: list[str] = field(default_factory=list)
    updated: list[str] = field(default_factory=list)
    unchanged: list[str] = field(default_factory=list)


def _without_confidence(events: tuple[Event, ...] | None) -> tuple[Event, ...] | None:
    if events is None:
        return None
    return tuple(Event(e.trigger, tuple(RoleSpan(r.role, r.span) for r in e.roles)) for e in events)


def _resolved(record: Record) -> Record:
    """The batch record with its provenance resolved and stamped; reviewed records lose model confidences."""
    provenance = resolve_provenance(record)
    if provenance is None:
        return record
    meta = {**(record.meta or {}), META_KEY: {**itinerant_meta(record), "provenance": provenance}}
    events = record.events if provenance == PREDICTED else _without_confidence(record.events)
    return replace(record, events=events, meta=meta)


def _where(batch: int) -> str:
    return f"batch {batch + 1}"


def _agreed(record_id: str, occurrences: list[tuple[int, Record]], conflicts: list[str]) -> Record | None:
    """The one record several occurrences of an id stand for, or ``None`` after reporting their disagreement."""
    first_batch, first = occurrences[0]
    for batch, other in occurrences[1:]:
        if other.text != first.text:
            conflicts.append(f"{record_id}: {_where(first_batch)} and {_where(batch)} give different text for this id "
                             "(fix: keep one version of the sentence, or give one of them another id)")
            return None
        if events_key(other.events) != events_key(first.events):
            conflicts.append(f"{record_id}: {_where(first_batch)} and {_where(batch)} give different events "
                             "(fix: decide which annotation is right and keep it in one batch only)")
            return None
    reviewed = [r for _, r in occurrences if provenance_of(r) in REVIEWED]
    return reviewed[0] if reviewed else first


def merge_batches(corpus: Sequence[Record], batches: Sequence[Sequence[Record]]) -> MergeResult:
    """Merge returned batches into the corpus (rules in the module docstring); the inputs are not changed.

    ``corpus`` ids must be unique (:class:`~trainer.errors.CorpusError`
    otherwise). The result keeps the corpus order, records updated in place,
    new records appended in batch order.
    """
    index: dict[str, int] = {}
    for position, record in enumerate(corpus):
        if record.id in index:
            raise CorpusError(f"the corpus holds id {record.id!r} twice", "give every corpus record a unique id")
        index[record.id] = position
    result = MergeResult(records=list(corpus))
    occurrences: dict[str, list[tuple[int, Record]]] = {}
    for batch_number, batch in enumerate(batches):
        for record in batch:
            problem = provenance_problem(record)
            if problem:
                result.conflicts.append(f"{record.id}: {_where(batch_number)}: {problem} "
                                        "(fix: write predicted, corrected or gold, or remove the key)")
                continue
            occurrences.setdefault(record.id, []).append((batch_number, _resolved(record)))
    for record_id, found in occurrences.items():
        incoming = _agreed(record_id, found, result.conflicts)
        if incoming is None:
            continue
        if record_id not in index:
            result.records.append(incoming)
            result.added.append(record_id)
            continue
        current = corpus[index[record_id]]
        if current.text != incoming.text:
            result.conflicts.append(f"{record_id}: the batch text differs from the corpus text for this id "
                                    "(fix: the sentence was edited or the id reused; restore the text or use a new id)")
            continue
        same_events = events_key(current.events) == events_key(incoming.events)
        if current.is_annotated and provenance_of(current) != PREDICTED:
            if same_events:
                result.unchanged.append(record_id)
            else:
                result.conflicts.append(
                    f"{record_id}: the corpus already holds a reviewed annotation "
                    f"({provenance_of(current) or 'gold'}) and the batch would overwrite it with different events "
                    "(fix: edit the corpus record itself if it is wrong, or drop this record from the batch)")
            continue
        if same_events and provenance_of(current) == provenance_of(incoming):
            result.unchanged.append(record_id)
            continue
        merged_meta = {**(current.meta or {}), **(incoming.meta or {})}
        result.records[index[record_id]] = replace(incoming, meta=merged_meta or None)
        result.updated.append(record_id)
    return result


def merge_files(
    corpus: Sequence[Path | str], batches: Sequence[Path | str], output: Path | str, *,
    roles: tuple[str, ...] = DEFAULT_ROLES,
) -> MergeResult:
    """Read the corpus files and each batch file, merge, and write the result as canonical JSONL to ``output``.

    The output is written even when there are conflicts (each conflicting id
    keeps its corpus version); callers should report them and exit non-zero.
    ``output`` may be one of the corpus files (the write is atomic), but not a batch.
    """
    check_output(output, inputs=batches, what="merged corpus")
    corpus_records = read_corpus(list(corpus), roles=roles, skippable=False).records
    batch_records = [read_corpus([batch], roles=roles, skippable=False).records for batch in batches]
    result = merge_batches(corpus_records, batch_records)
    write_jsonl(result.records, Path(output))
    return result
