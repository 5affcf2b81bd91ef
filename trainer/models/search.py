"""Hyperparameter search for one stage, inside the training documents only.

The grid comes from ``[trigger_model.grid]`` / ``[role_model.grid]`` in the
config (e.g. ``c1 = [0.01, 0.1]``); candidates run in parallel under joblib's
active settings. Candidates are compared by exact-match F1
on inner folds grouped by document, made from the training records alone, so
a cross-validation's held-out documents never influence the choice.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any, Callable, Sequence

from joblib import Parallel, delayed
from sklearn.model_selection import ParameterGrid
from spacy.tokens import Doc

from trainer.config import ModelConfig
from trainer.corpus.records import Record

INNER_FOLDS = 3


def inner_folds(records: Sequence[Record], n: int = INNER_FOLDS) -> list[tuple[list[int], list[int]]]:
    """``(train, test)`` record indices, docs dealt round-robin in sorted order (no doc split)."""
    docs = sorted({r.doc for r in records})
    n = min(n, len(docs))
    held = {doc: i % n for i, doc in enumerate(docs)}
    return [([i for i, r in enumerate(records) if held[r.doc] != k], [i for i, r in enumerate(records) if held[r.doc] == k])
            for k in range(n)]


def f1_of_sets(gold: list[set], predicted: list[set]) -> float:
    """Exact-match F1 over per-sentence sets of items (pooled counts)."""
    tp = sum(len(g & p) for g, p in zip(gold, predicted))
    size = sum(len(g) for g in gold) + sum(len(p) for p in predicted)
    return 2 * tp / size if size else 0.0


def search_stage(
    config: ModelConfig, records: Sequence[Record], docs: Sequence[Doc],
    evaluate: Callable[[ModelConfig, list[int], list[int]], float],
) -> tuple[ModelConfig, list[dict[str, Any]]]:
    """The grid candidate with the best mean inner-fold score, and every candidate's score.

    ``evaluate(candidate, train_indices, test_indices)`` trains the stage on one
    inner fold and returns its F1. With fewer than two training docs, or no
    grid, the config is returned unchanged.
    """
    folds = inner_folds(records)
    if not config.grid or len(folds) < 2:
        return config, []
    grid = list(ParameterGrid(config.grid))
    # Candidates x inner folds run under the active joblib settings: serial by default, in parallel
    # inside `joblib.parallel_config(n_jobs=N)` (as `itinerant fit --jobs N` sets it). Order is kept.
    flat = Parallel()(delayed(evaluate)(replace(config, **params), train, test) for params in grid for train, test in folds)
    results = []
    for k, params in enumerate(grid):
        scores = flat[k * len(folds) : (k + 1) * len(folds)]
        results.append({"params": params, "mean_f1": round(sum(scores) / len(scores), 6)})
    best = max(results, key=lambda r: r["mean_f1"])  # first of equals: grid order is deterministic
    return replace(config, **best["params"]), results
