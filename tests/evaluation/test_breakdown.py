"""Both matching modes, per doc, per book and per fold: the groups add up to the pooled counts."""

from __future__ import annotations

import random

from evaluation_samples import ROLES, hand_corpus, record_pairs
from hypothesis import given, settings

from trainer.evaluation.breakdown import breakdown, fold_breakdown, pooled_totals
from trainer.evaluation.scoring import TRIGGER, Counts, count_corpus, merge_counts

MODES = ("exact", "overlap")
KEYS = (*ROLES, "micro", TRIGGER)


def renamed(records, docs):
    """The records with their docs renamed (``docs[old] -> new``), so books have several docs."""
    return [r.__class__(r.id, docs.get(r.doc, r.doc), r.text, r.events) for r in records]


def by_mode(gold, pred):
    return {mode: count_corpus(gold, pred, roles=ROLES, mode=mode) for mode in MODES}


def pooled(counts, key: str) -> Counts:
    score = counts.scores()
    s = score.per_role[key] if key in ROLES else {"micro": score.micro, TRIGGER: score.trigger}[key]
    return Counts(s.tp, s.fp, s.fn)


def test_hand_corpus_books_group_their_docs_and_both_modes_sit_side_by_side() -> None:
    gold, pred = hand_corpus()
    docs = {"log-a": "pell-road-1", "log-b": "pell-road-2"}
    counts = by_mode(renamed(gold, docs), renamed(pred, docs))
    out = breakdown(counts)
    assert list(out["matching"]) == ["exact", "overlap"]
    assert list(out["per_doc"]) == ["pell-road-1", "pell-road-2"]
    assert list(out["per_book"]) == ["pell-road"]  # book_of drops the trailing -<number>
    book = out["per_book"]["pell-road"]
    for mode in MODES:
        assert book[mode]["records"] == 5  # r4 is unannotated, so not scored
        assert book[mode]["micro"] == out["matching"][mode]["micro"]
    # Overlap never scores below exact (docs/metrics.md); here r1's "Harrowgate and" source only overlaps.
    assert out["matching"]["overlap"]["roles"]["source"]["tp"] == out["matching"]["exact"]["roles"]["source"]["tp"] + 1


@settings(max_examples=60, deadline=None)
@given(record_pairs())
def test_per_doc_per_book_and_per_fold_counts_pool_to_the_overall_counts(pair) -> None:
    gold, pred = pair
    rng = random.Random(len(gold))
    docs = {r.doc: rng.choice(["amber-way-1", "amber-way-2", "coldharbour-3", "salt-road"]) for r in gold}
    gold, pred = renamed(gold, docs), renamed(pred, docs)
    counts = by_mode(gold, pred)
    out = breakdown(counts)
    for mode in MODES:
        for key in KEYS:
            assert pooled_totals(out["per_doc"], mode, key) == pooled(counts[mode], key)
            assert pooled_totals(out["per_book"], mode, key) == pooled(counts[mode], key)
    # Folds: the docs split in two; each fold scored on its own, then pooled.
    names = sorted({r.doc for r in gold if r.events is not None})
    halves = [names[::2], names[1::2]]
    parts = {mode: [count_corpus([g for g in gold if g.doc in half], [p for p in pred if p.doc in half],
                                 roles=ROLES, mode=mode) for half in halves if half] for mode in MODES}
    folds = fold_breakdown(parts, [(0, i) for i in range(len(parts["exact"]))])
    for mode in MODES:
        merged = merge_counts(parts[mode])
        for key in ("micro", TRIGGER):
            total = sum((Counts(f[mode][key]["tp"], f[mode][key]["fp"], f[mode][key]["fn"]) for f in folds), Counts())
            assert total == pooled(merged, key) == pooled(counts[mode], key)
    assert [f["docs"] for f in folds] == [h for h in halves if h]


def test_a_fold_is_named_by_what_it_held_out_when_that_is_one_doc_or_one_book() -> None:
    from trainer.evaluation.breakdown import fold_name

    # leave one doc out; leave one book out (two chapters of one book); a K-fold fold over two books
    assert fold_name({"repeat": 0, "fold": 3, "docs": ["pell-road-2"]}) == "repeat 0 fold 3 (pell-road-2)"
    assert fold_name({"repeat": 0, "fold": 1, "docs": ["pell-road-1", "pell-road-2"]}) == "repeat 0 fold 1 (pell-road)"
    assert fold_name({"repeat": 1, "fold": 0, "docs": ["pell-road-1", "varrow-uplands-2"]}) == "repeat 1 fold 0"
