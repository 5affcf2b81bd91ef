"""Folds by document: exact plans, GroupKFold's guarantees, refusals."""

from __future__ import annotations

import random

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.model_selection import GroupKFold

from trainer.errors import ConfigError, CorpusError
from trainer.evaluation.folds import FoldPlan, fixed_split, grouped_kfold, leave_one_doc_out

# One entry per record: doc a has 5 records, b 3, c 3, d 2, e 1, f 1 (15 records).
DOCS = ["a"] * 5 + ["b"] * 3 + ["c"] * 3 + ["d"] * 2 + ["e", "f"]


def test_grouped_kfold_exact_plan_and_assignment() -> None:
    # Largest first to the lightest fold: a(5)->0; b, c tie at 3, the seed's shuffle puts c first:
    # c->1, b->2; d(2)->1 (folds 1 and 2 both hold 3, the first wins); e(1)->2 and f(1)->2, the
    # lightest each time. Fold sizes: 5, 5, 5.
    plan = grouped_kfold(DOCS, 3, seed=13)[0]
    assert plan == FoldPlan("grouped_kfold", 13, [
        (["b", "c", "d", "e", "f"], ["a"]),
        (["a", "b", "e", "f"], ["c", "d"]),
        (["a", "c", "d"], ["b", "e", "f"]),
    ], 0)
    assert plan.assignment() == {
        "kind": "grouped_kfold", "seed": 13, "repeat": 0,
        "folds": [{"fold": 0, "train_docs": ["b", "c", "d", "e", "f"], "test_docs": ["a"]},
                  {"fold": 1, "train_docs": ["a", "b", "e", "f"], "test_docs": ["c", "d"]},
                  {"fold": 2, "train_docs": ["a", "c", "d"], "test_docs": ["b", "e", "f"]}],
        "test_fold_of": {"a": 0, "b": 2, "c": 1, "d": 1, "e": 2, "f": 2},
    }


def test_grouped_kfold_is_deterministic_and_repeats_reshuffle_ties() -> None:
    assert grouped_kfold(DOCS, 3, seed=13, repeats=3) == grouped_kfold(DOCS, 3, seed=13, repeats=3)
    assert grouped_kfold(list(reversed(DOCS)), 3, seed=13) == grouped_kfold(DOCS, 3, seed=13)
    plans = grouped_kfold([f"d{i}" for i in range(8)], 4, seed=1, repeats=3)  # all docs the same size
    assert [p.repeat for p in plans] == [0, 1, 2]
    assert len({tuple(tuple(test) for _, test in p.folds) for p in plans}) == 3


def test_later_repeats_differ_even_when_every_doc_has_its_own_size() -> None:
    docs = [f"d{i}" for i in range(10) for _ in range(i + 1)]  # sizes 1..10, no ties
    plans = grouped_kfold(docs, 3, seed=5, repeats=4)
    partitions = {tuple(sorted(tuple(test) for _, test in p.folds)) for p in plans}
    assert len(partitions) >= 3
    for plan in plans:
        held = sorted(d for _, test in plan.folds for d in test)
        assert held == sorted(set(docs))  # every doc held out exactly once per repeat
        sizes = [sum(docs.count(d) for d in test) for _, test in plan.folds]
        assert max(sizes) - min(sizes) <= 10  # still roughly balanced (55 records in 3 folds)


def test_grouped_kfold_refusals_quote_the_numbers() -> None:
    with pytest.raises(ConfigError) as info:
        grouped_kfold(DOCS, 7, seed=13)
    assert str(info.value) == ("7 folds asked for, but the corpus has only 6 docs and folds never split a doc\n"
                               "  fix: use at most 6 folds (--folds 6, or [evaluation] folds in the config), "
                               "or one fold per doc (crossval --leave-one-doc-out)")
    with pytest.raises(ConfigError, match=r"^n_splits must be at least 2, got 1"):
        grouped_kfold(DOCS, 1, seed=13)
    with pytest.raises(ConfigError, match=r"^repeats must be at least 1, got 0"):
        grouped_kfold(DOCS, 2, seed=13, repeats=0)
    with pytest.raises(ConfigError) as one_doc:
        grouped_kfold(["d1", "d1", "d1"], 5, seed=13)
    assert str(one_doc.value) == ("cross-validation needs at least 2 docs, got 1 (folds never split a doc)\n"
                                  "  fix: add documents, or evaluate on a fixed split (--test)")


def test_sklearn_group_kfold_refuses_the_same_case() -> None:
    # Reference: scikit-learn's GroupKFold refuses more splits than groups, quoting both numbers.
    with pytest.raises(ValueError, match="n_splits=7 greater than the number of groups: 6"):
        list(GroupKFold(7).split(np.zeros(len(DOCS)), groups=DOCS))


@settings(max_examples=100, deadline=None)
@given(st.randoms(use_true_random=False), st.integers(2, 6), st.integers(0, 10**6))
def test_grouped_kfold_keeps_group_kfold_guarantees(rng: random.Random, n_splits: int, seed: int) -> None:
    # Reference: sklearn.model_selection.GroupKFold (no shuffle). Same invariants: every group is in
    # exactly one test fold, train and test never share a group. Both give each group, largest first,
    # to the lightest fold, so the fold sizes in records are the same multiset whatever the tie order.
    n_docs = rng.randint(n_splits, 12)
    docs = [f"doc{i:02d}" for i in range(n_docs) for _ in range(rng.randint(1, 9))]
    rng.shuffle(docs)
    plan = grouped_kfold(docs, n_splits, seed=seed)[0]
    tests = [set(test) for _, test in plan.folds]
    assert sorted(d for test in tests for d in test) == sorted(set(docs))  # each doc held out exactly once
    for train, test in plan.folds:
        assert set(train).isdisjoint(test)
        assert set(train) | set(test) == set(docs)
        assert test  # no empty fold
    ours = sorted(sum(docs.count(d) for d in test) for test in tests)
    reference = GroupKFold(n_splits).split(np.zeros(len(docs)), groups=np.array(docs))
    theirs = sorted(len(test_index) for _, test_index in reference)
    assert ours == theirs


def test_leave_one_doc_out() -> None:
    plan = leave_one_doc_out(["b", "a", "b", "c"])
    assert plan == FoldPlan("leave_one_doc_out", None, [(["b", "c"], ["a"]), (["a", "c"], ["b"]), (["a", "b"], ["c"])])
    with pytest.raises(ConfigError, match=r"^leave-one-doc-out needs at least 2 docs, got 1"):
        leave_one_doc_out(["a", "a"])


def test_fixed_split_refuses_shared_docs_by_name() -> None:
    assert fixed_split(["b", "a", "a"], ["c"]).folds == [(["a", "b"], ["c"])]
    with pytest.raises(CorpusError) as info:
        fixed_split(["a", "b", "c"], ["c", "b", "d"])
    assert str(info.value) == ("2 doc(s) are in both the training and the test split: 'b', 'c'\n"
                               "  fix: put each doc on one side only; a doc on both sides leaks its sentences "
                               "into the test")
    with pytest.raises(CorpusError, match=r"^a fixed split needs docs on both sides, got 1 training and 0 test docs"):
        fixed_split(["a"], [])


def test_leave_one_book_out_holds_out_all_chapters_of_a_book_together():
    from trainer.evaluation.folds import book_of, leave_one_book_out

    docs = ["varrow-uplands-1", "varrow-uplands-2", "brannick-log-1", "lisle-letters", "brannick-log-2"]
    plan = leave_one_book_out(docs * 2)
    assert book_of("varrow-uplands-12") == "varrow-uplands" and book_of("lisle-letters") == "lisle-letters"
    assert [test for _, test in plan.folds] == [["brannick-log-1", "brannick-log-2"], ["lisle-letters"],
                                                ["varrow-uplands-1", "varrow-uplands-2"]]
    for train, test in plan.folds:
        assert {book_of(d) for d in train}.isdisjoint({book_of(d) for d in test})


@pytest.mark.parametrize("doc, book", [
    ("varrow-uplands-12", "varrow-uplands"), ("varrow_uplands_03", "varrow_uplands"), ("varrow.7", "varrow"),
    ("varrow-ch3", "varrow"), ("varrow_chapter_12b", "varrow"), ("Varrow Uplands, Letter IV", "Varrow Uplands"),
    ("varrow-vol2-ch3", "varrow"), ("Varrow Uplands, vol. 2, chapter IV", "Varrow Uplands"), ("varrow-part-1-day-4", "varrow"),
    # Left as they are: no separator, a roman numeral without a unit word, nothing but a number.
    ("lisle-letters", "lisle-letters"), ("pell-road-vi", "pell-road-vi"), ("ch3", "ch3"), ("12", "12"),
    # Only the last bare number goes: a book named with a number keeps it.
    ("route-66-1", "route-66"),
])
def test_book_of_drops_the_trailing_chapter_in_common_namings(doc, book):
    from trainer.evaluation.folds import book_of

    assert book_of(doc) == book


def test_leave_one_book_out_needs_two_books():
    from trainer.evaluation.folds import leave_one_book_out

    with pytest.raises(ConfigError, match="at least 2 books"):
        leave_one_book_out(["varrow-1", "varrow-2"])
