"""Learning curves: the same folds, trained on growing shares of each fold's training docs.

The full training set (share 1.0) is always a point, and every point carries
each F1 with its bootstrap interval (same settings as the run's intervals).
"""

from __future__ import annotations

import math
from typing import Any, Sequence

import numpy as np

from spacy.tokens import Doc

from trainer.config import ExperimentConfig
from trainer.corpus.records import Record
from trainer.errors import ConfigError
from trainer.evaluation.bootstrap import bootstrap_f1s, interval_warning
from trainer.evaluation.runs import CrossvalRun, Progress
from trainer.experiment.crossval import run_crossval
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


def check_shares(shares: Sequence[float]) -> None:
    """Refuse, before any training, shares of training docs outside (0, 1] or none at all."""
    if not shares or any(not 0 < s <= 1 for s in shares):
        raise ConfigError(f"shares must lie in (0, 1], got {list(shares)}", "e.g. --shares 0.25,0.5,0.75,1")


def learning_curve(
    records: Sequence[Record], configs: Sequence[ExperimentConfig], plans: Sequence[FoldPlan], *,
    shares: Sequence[float] = DEFAULT_SHARES, settings: EvaluationSettings | None = None,
    jobs: int = 1, scheduler: str | None = None, docs: Sequence[Doc] | None = None, progress: Progress | None = None,
    full_run: CrossvalRun | None = None,
) -> dict[str, Any]:
    """Pooled F1 per config and share of training docs: ``{"shares": [...], "systems": {name: [point, ...]}}``.

    Share 1.0 is added when missing. Each point has ``f1`` and ``intervals``
    (name -> [low, high]) for every score. ``docs`` (one per annotated record)
    reuses parses already made, so no record is parsed twice in a run;
    ``full_run`` (the run on ``plans`` itself) serves as the 1.0 point instead of training again.
    """
    check_shares(shares)
    if full_run is not None and [s.name for s in full_run.systems] != [c.name for c in configs]:
        raise ConfigError(f"the full run holds configs {[s.name for s in full_run.systems]}, the curve "
                          f"{[c.name for c in configs]}", "pass the run of exactly these configs, in this order")
    settings = settings or EvaluationSettings()
    annotated = [r for r in records if r.is_annotated]
    auxiliary = None
    shares = sorted({*shares, 1.0})
    curve: dict[str, Any] = {"shares": shares, "systems": {c.name: [] for c in configs}}
    for share in shares:
        if share == 1.0 and full_run is not None:
            run = full_run
        else:
            if progress:
                progress(f"learning curve: {share:.0%} of the training docs")
            shrunk = [shrink_plan(p, share, seed=settings.seed) for p in plans]
            run = run_crossval(annotated, configs, shrunk, docs=docs, auxiliary=auxiliary, jobs=jobs,
                               scheduler=scheduler, progress=progress)
        docs, auxiliary = run.docs, run.auxiliary
        for system in run.systems:
            parts = fold_counts(run, system, roles=system.config.roles, mode=settings.mode)
            counts = pool_folds(system, parts)
            intervals = bootstrap_f1s(counts.units(by=settings.bootstrap_unit), system.config.roles,
                                      samples=settings.bootstrap_samples, seed=settings.seed,
                                      confidence=settings.confidence)
            curve["systems"][system.name].append({
                "share": share,
                "train_records": round(float(np.mean([f.train_records for f in system.folds])), 1),
                "f1": {name: round(value, 6) for name, value in counts.scores().f1s().items()},
                "intervals": {name: [round(low, 6), round(high, 6)] for name, (low, high) in intervals.items()},
                "interval_warning": interval_warning(len(set(counts.doc_of.values()))),
            })
    return curve
