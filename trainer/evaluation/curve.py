"""Learning curves: the same folds, trained on growing shares of each fold's training docs."""

from __future__ import annotations

import math
from typing import Any, Sequence

import numpy as np

from spacy.tokens import Doc

from trainer.config import ExperimentConfig
from trainer.corpus.records import Record
from trainer.errors import ConfigError
from trainer.evaluation.crossval import Progress, run_crossval
from trainer.evaluation.folds import FoldPlan
from trainer.evaluation.summary import EvaluationSettings, fold_counts, pool_folds

DEFAULT_SHARES = (0.25, 0.5, 0.75, 1.0)


def shrink_plan(plan: FoldPlan, share: float, *, seed: int) -> FoldPlan:
    """The plan with each fold's training docs cut to ``share`` (at least one doc), test docs unchanged."""
    rng = np.random.default_rng([seed, plan.repeat, round(share * 1000)])
    folds = []
    for train, test in plan.folds:
        keep = max(1, math.ceil(share * len(train)))
        chosen = sorted(train[i] for i in rng.permutation(len(train))[:keep])
        folds.append((chosen, list(test)))
    return FoldPlan(f"{plan.kind}@{share:g}", plan.seed, folds, plan.repeat)


def learning_curve(
    records: Sequence[Record], configs: Sequence[ExperimentConfig], plans: Sequence[FoldPlan], *,
    shares: Sequence[float] = DEFAULT_SHARES, settings: EvaluationSettings | None = None,
    jobs: int = 1, scheduler: str | None = None, docs: Sequence[Doc] | None = None, progress: Progress | None = None,
) -> dict[str, Any]:
    """Pooled F1 per config and share of training docs: ``{"shares": [...], "systems": {name: [point, ...]}}``.

    ``docs`` (one per annotated record) reuses parses already made, so no record is parsed twice in a run.
    """
    if not shares or any(not 0 < s <= 1 for s in shares):
        raise ConfigError(f"shares must lie in (0, 1], got {list(shares)}", "e.g. --shares 0.25,0.5,0.75,1")
    settings = settings or EvaluationSettings()
    annotated = [r for r in records if r.is_annotated]
    auxiliary = None
    curve: dict[str, Any] = {"shares": sorted(shares), "systems": {c.name: [] for c in configs}}
    for share in sorted(shares):
        if progress:
            progress(f"learning curve: {share:.0%} of the training docs")
        shrunk = [shrink_plan(p, share, seed=settings.seed) for p in plans]
        run = run_crossval(annotated, configs, shrunk, docs=docs, auxiliary=auxiliary, jobs=jobs, scheduler=scheduler,
                           progress=progress)
        docs, auxiliary = run.docs, run.auxiliary
        for system in run.systems:
            parts = fold_counts(run, system, roles=system.config.roles, mode=settings.mode)
            scores = pool_folds(system, parts).scores()
            curve["systems"][system.name].append({
                "share": share,
                "train_records": round(float(np.mean([f.train_records for f in system.folds])), 1),
                "f1": {name: round(value, 6) for name, value in scores.f1s().items()},
            })
    return curve
