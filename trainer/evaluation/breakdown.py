"""Scores broken down: both matching modes side by side, per doc, per book and per fold.

Every figure here is the same counts as the pooled scores, grouped another
way, so they add up: the per-doc (or per-book, or per-fold) counts of a mode
sum to the pooled counts of that mode. A book is a doc name without its
trailing chapter number (:func:`trainer.evaluation.folds.book_of`).

A unit's scores are compact: records scored, then precision, recall, F1 and
counts per role, micro (role counts pooled) and trigger.
"""

from __future__ import annotations

from typing import Any, Mapping, Sequence

from trainer.config import SCORING_MODES
from trainer.evaluation.folds import book_of
from trainer.evaluation.scoring import Counts, CorpusCounts, UnitCounts, scores_from_counts


def unit_scores(records: Mapping[str, UnitCounts], roles: Sequence[str], mode: str) -> dict[str, Any]:
    """Compact scores of one unit: ``records``, ``roles`` (role -> score), ``micro`` and ``trigger``."""
    scores = scores_from_counts(records, roles, mode=mode)
    return {"records": scores.records, "roles": {role: scores.per_role[role].to_dict() for role in scores.roles},
            "micro": scores.micro.to_dict(), "trigger": scores.trigger.to_dict()}


def _grouped(counts: CorpusCounts, key_of: Any) -> dict[str, dict[str, UnitCounts]]:
    """Per-record counts grouped by ``key_of(doc)``, groups and records sorted."""
    groups: dict[str, dict[str, UnitCounts]] = {}
    for record_id in sorted(counts.by_record):
        groups.setdefault(key_of(counts.doc_of[record_id]), {})[record_id] = counts.by_record[record_id]
    return {name: groups[name] for name in sorted(groups)}


def by_group(counts_by_mode: Mapping[str, CorpusCounts], *, by: str) -> dict[str, dict[str, Any]]:
    """``{doc or book: {mode: compact scores}}`` for every mode given; ``by`` is ``"doc"`` or ``"book"``."""
    key_of = book_of if by == "book" else (lambda doc: doc)
    out: dict[str, dict[str, Any]] = {}
    for mode, counts in counts_by_mode.items():
        for name, records in _grouped(counts, key_of).items():
            out.setdefault(name, {})[mode] = unit_scores(records, counts.roles, mode)
    return {name: out[name] for name in sorted(out)}


def pooled_totals(groups: Mapping[str, Mapping[str, Any]], mode: str, key: str) -> Counts:
    """The counts of one score (a role, ``micro`` or ``trigger``) summed over groups of :func:`by_group`."""
    total = Counts()
    for group in groups.values():
        score = group[mode]["roles"].get(key) or group[mode][key]
        total = total + Counts(score["tp"], score["fp"], score["fn"])
    return total


def breakdown(counts_by_mode: Mapping[str, CorpusCounts]) -> dict[str, Any]:
    """``matching`` (each mode pooled), ``per_doc`` and ``per_book`` (each mode per group)."""
    modes = [mode for mode in SCORING_MODES if mode in counts_by_mode]
    return {
        "matching": {mode: unit_scores(counts_by_mode[mode].by_record, counts_by_mode[mode].roles, mode)
                     for mode in modes},
        "per_doc": by_group(counts_by_mode, by="doc"),
        "per_book": by_group(counts_by_mode, by="book"),
    }


def fold_name(fold: Mapping[str, Any]) -> str:
    """A :func:`fold_breakdown` entry's label: ``repeat 0 fold 2``, naming what it held out when that is one doc or one book."""
    label = f"repeat {fold['repeat']} fold {fold['fold']}"
    docs = list(fold.get("docs", ()))
    books = {book_of(doc) for doc in docs}
    held_out = docs[0] if len(docs) == 1 else next(iter(books)) if len(books) == 1 else ""
    return f"{label} ({held_out})" if held_out else label


def departing_folds(per_fold: Sequence[Mapping[str, Any]]) -> dict[str, list[str]]:
    """Per :func:`fold_breakdown` entry whose training annotation departed from its auxiliary corpora's
    conventions (its ``conventions_departing``), by :func:`fold_name`: where it departed."""
    return {fold_name(f): list(f["conventions_departing"]) for f in per_fold if f.get("conventions_departing")}


def departing_folds_note(departing: Mapping[str, Sequence[str]], folds: int) -> str:
    """The sentence that introduces :func:`departing_folds` in a report (the config key follows it)."""
    return (f"Features augmented by corpus in {len(departing)} of {folds} folds, for the stage (triggers or roles) "
            "whose training annotation departs from the auxiliary corpora's conventions")


def fold_breakdown(folds_by_mode: Mapping[str, Sequence[CorpusCounts]],
                   fold_labels: Sequence[tuple[int, int]]) -> list[dict[str, Any]]:
    """Each fold's held-out docs and compact scores in every mode; ``fold_labels``: (repeat, fold) of each part."""
    modes = [mode for mode in SCORING_MODES if mode in folds_by_mode]
    out = []
    for index, (repeat, fold) in enumerate(fold_labels):
        parts = {mode: folds_by_mode[mode][index] for mode in modes}
        docs = sorted(set(parts[modes[0]].doc_of.values()))
        out.append({"repeat": repeat, "fold": fold, "docs": docs,
                    **{mode: unit_scores(part.by_record, part.roles, mode) for mode, part in parts.items()}})
    return out
