"""Splits of a corpus by document: folds never split a ``doc`` (spec, sections 1 and 3).

A plan lists, per fold, the training docs and the held-out docs, sorted. The
caller selects records by ``record.doc``. Plans are deterministic for a seed,
and :meth:`FoldPlan.assignment` is what reports record.

>>> plan = grouped_kfold(["a", "a", "b", "c", "c", "c"], 3, seed=13)[0]
>>> sorted(test for _, test in plan.folds)
[['a'], ['b'], ['c']]
"""

from __future__ import annotations

import re

from collections import Counter
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from trainer.errors import ConfigError, CorpusError

MAX_NAMED = 5


@dataclass(frozen=True)
class FoldPlan:
    """Folds as ``(train docs, test docs)`` pairs; ``seed`` is ``None`` where no randomness is involved."""

    kind: str
    seed: int | None
    folds: list[tuple[list[str], list[str]]]
    repeat: int = 0

    def test_fold_of(self) -> dict[str, int]:
        """Each held-out doc and the index of the fold holding it out, docs sorted."""
        held = {doc: i for i, (_, test) in enumerate(self.folds) for doc in test}
        return {doc: held[doc] for doc in sorted(held)}

    def assignment(self) -> dict[str, Any]:
        """Plain data for reports: kind, seed, repeat, and every fold's docs."""
        return {
            "kind": self.kind,
            "seed": self.seed,
            "repeat": self.repeat,
            "folds": [{"fold": i, "train_docs": list(train), "test_docs": list(test)}
                      for i, (train, test) in enumerate(self.folds)],
            "test_fold_of": self.test_fold_of(),
        }


def _fold(docs: Sequence[str], test: set[str]) -> tuple[list[str], list[str]]:
    return sorted(d for d in docs if d not in test), sorted(test)


def grouped_kfold(docs: Sequence[str], n_splits: int, *, seed: int, repeats: int = 1) -> list[FoldPlan]:
    """``repeats`` plans of ``n_splits`` folds, balanced by record count, no doc split.

    ``docs`` holds the doc of every record (one entry per record), so a doc's
    size is its number of records. The first repeat shuffles the docs with the
    seed, sorts them by size (largest first; the shuffle orders docs of equal
    size) and gives each to the fold with the fewest records so far, as
    scikit-learn's ``GroupKFold`` does without shuffling: the best-balanced
    folds. Later repeats deal the docs in a fresh shuffled order, without the
    size sort, to the fold with the fewest records so far: still roughly
    balanced, and different from one repeat to the next, which is what
    repeating is for.
    """
    if n_splits < 2:
        raise ConfigError(f"n_splits must be at least 2, got {n_splits}",
                          "use 2 or more folds (--folds), or evaluate on a fixed split (--test)")
    if repeats < 1:
        raise ConfigError(f"repeats must be at least 1, got {repeats}", "use 1 for a single cross-validation")
    sizes = Counter(docs)
    groups = sorted(sizes)
    if len(groups) < 2:
        raise ConfigError(f"cross-validation needs at least 2 docs, got {len(groups)} (folds never split a doc)",
                          "add documents, or evaluate on a fixed split (--test)")
    if n_splits > len(groups):
        raise ConfigError(
            f"{n_splits} folds asked for, but the corpus has only {len(groups)} docs and folds never split a doc",
            f"use at most {len(groups)} folds (--folds {len(groups)}, or [evaluation] folds in the config), "
            "or one fold per doc (crossval --leave-one-doc-out)",
        )
    rng = np.random.default_rng(seed)
    plans = []
    for repeat in range(repeats):
        shuffled = [groups[i] for i in rng.permutation(len(groups))]
        # stable sort: ties keep the shuffled order; later repeats keep the shuffle itself
        by_size = sorted(shuffled, key=lambda doc: -sizes[doc]) if repeat == 0 else shuffled
        load = [0] * n_splits
        tests: list[set[str]] = [set() for _ in range(n_splits)]
        for doc in by_size:
            lightest = load.index(min(load))
            load[lightest] += sizes[doc]
            tests[lightest].add(doc)
        plans.append(FoldPlan("grouped_kfold", seed, [_fold(groups, test) for test in tests], repeat))
    return plans


def leave_one_doc_out(docs: Sequence[str]) -> FoldPlan:
    """One fold per doc (docs sorted), holding that doc out. ``docs`` may repeat (one entry per record)."""
    groups = sorted(set(docs))
    if len(groups) < 2:
        raise ConfigError(f"leave-one-doc-out needs at least 2 docs, got {len(groups)}",
                          "add documents, or evaluate on a fixed split (--test)")
    return FoldPlan("leave_one_doc_out", None, [_fold(groups, {doc}) for doc in groups])


# A doc name's trailing unit: a number after -, _, ., a comma or a space (-2, _02, " 2"), or one after a word naming the
# unit (-ch3, _chapter_12, ", letter IV", -vol2; a roman numeral only after such a word).
_UNITS = r"ch|chap|chapter|part|pt|letter|day|entry|section|sec|book|vol|volume"
_NAMED_UNIT = rf"[-_.,: ]+(?:{_UNITS})[-_.: ]*(?:\d+[a-z]?|[ivxlc]+)$"
_UNIT = re.compile(rf"[-_.,: ]+\d+[a-z]?$|{_NAMED_UNIT}", re.IGNORECASE)
_NAMED = re.compile(_NAMED_UNIT, re.IGNORECASE)


def book_of(doc: str) -> str:
    """The book a doc belongs to: its name without its trailing chapter (and volume or part) number.

    >>> [book_of(d) for d in ("varrow-uplands-2", "varrow_uplands_ch03", "Varrow Uplands, vol. 2, chapter IV")]
    ['varrow-uplands', 'varrow_uplands', 'Varrow Uplands']
    >>> [book_of(d) for d in ("lisle-letters", "route-66-1", "12")]
    ['lisle-letters', 'route-66', '12']
    """
    book = _UNIT.sub("", doc)
    while (shorter := _NAMED.sub("", book)) != book:
        book = shorter
    return book or doc


def leave_one_book_out(docs: Sequence[str]) -> FoldPlan:
    """One fold per book (see :func:`book_of`): all of a book's docs held out together, for domain-shift tests."""
    groups = sorted(set(docs))
    books: dict[str, set[str]] = {}
    for doc in groups:
        books.setdefault(book_of(doc), set()).add(doc)
    if len(books) < 2:
        raise ConfigError(f"leave-one-book-out needs at least 2 books, got {len(books)} ({sorted(books)})",
                          "name docs <book>-<chapter number> (or <book>_ch<number>), or use a fixed split with --test-docs")
    return FoldPlan("leave_one_book_out", None, [_fold(groups, books[book]) for book in sorted(books)])


def fixed_split(train_docs: Sequence[str], test_docs: Sequence[str]) -> FoldPlan:
    """A single fold with the given docs; a doc on both sides is refused."""
    train, test = sorted(set(train_docs)), sorted(set(test_docs))
    shared = sorted(set(train) & set(test))
    if shared:
        named = ", ".join(repr(d) for d in shared[:MAX_NAMED])
        more = f" and {len(shared) - MAX_NAMED} more" if len(shared) > MAX_NAMED else ""
        raise CorpusError(f"{len(shared)} doc(s) are in both the training and the test split: {named}{more}",
                          "put each doc on one side only; a doc on both sides leaks its sentences into the test")
    if not train or not test:
        raise CorpusError(f"a fixed split needs docs on both sides, got {len(train)} training and {len(test)} test docs",
                          "name at least one doc for each side")
    return FoldPlan("fixed_split", None, [(train, test)])
