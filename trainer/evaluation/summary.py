"""Scoring a cross-validation run: pooled scores, spread across folds, intervals, tests, errors.

Everything here is computed from gold records and held-out predictions, so a
saved run's predictions can be rescored with another mode or seed.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from itertools import combinations
from statistics import mean, pstdev
from typing import Any, Sequence

from trainer.config import DEFAULT_BOOTSTRAP_SAMPLES, DEFAULT_BOOTSTRAP_UNIT, DEFAULT_CONFIDENCE, DEFAULT_MODE, DEFAULT_SEED, DEFAULT_TRIALS, SCORING_MODES
from trainer.evaluation.bootstrap import bootstrap_f1s
from trainer.evaluation.breakdown import breakdown, fold_breakdown
from trainer.evaluation.confidence import confidence_report
from trainer.evaluation.error_analysis import ErrorAnalysis, error_analysis
from trainer.evaluation.runs import CrossvalRun, SystemRun
from trainer.evaluation.scoring import CorpusCounts, Scores, count_corpus, merge_counts
from trainer.evaluation.significance import compare_f1s, holm


@dataclass
class EvaluationSettings:
    """How scores, intervals and tests are computed (recorded in every report)."""

    mode: str = DEFAULT_MODE
    bootstrap_samples: int = DEFAULT_BOOTSTRAP_SAMPLES
    bootstrap_unit: str = DEFAULT_BOOTSTRAP_UNIT
    confidence: float = DEFAULT_CONFIDENCE
    seed: int = DEFAULT_SEED
    trials: int = DEFAULT_TRIALS

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass
class SystemSummary:
    """The evaluation of one config."""

    name: str
    scores: Scores
    gold_trigger_scores: Scores
    intervals: dict[str, tuple[float, float]]
    fold_f1: dict[str, dict[str, Any]]
    errors: ErrorAnalysis
    counts: CorpusCounts = field(repr=False)
    timings: dict[str, float] = field(default_factory=dict)
    interval_docs: int = 0  # documents the intervals resample (their number, whatever the unit)
    breakdown: dict[str, Any] = field(default_factory=dict)  # both modes; per doc, book and fold
    confidence: dict[str, Any] = field(default_factory=dict)  # calibration and thresholds of held-out confidences


@dataclass
class Comparison:
    """A paired test between two configs: ``(F1 of a - F1 of b, p-value)`` per score name.

    ``holm``: each score's p-value Holm-adjusted over every pair of configs in the run.
    """

    a: str
    b: str
    tests: dict[str, tuple[float, float]]
    holm: dict[str, float] = field(default_factory=dict)


@dataclass
class RunSummary:
    settings: EvaluationSettings
    systems: list[SystemSummary]
    comparisons: list[Comparison]


def fold_counts(run: CrossvalRun, system: SystemRun, *, roles: Sequence[str], mode: str,
                gold_triggers: bool = False) -> list[CorpusCounts]:
    """Counts of each fold's held-out predictions against the gold of those records only."""
    gold_by_id = {r.id: r for r in run.records}
    out = []
    for fold in system.folds:
        predicted = fold.predicted_gold_triggers if gold_triggers else fold.predicted
        out.append(count_corpus([gold_by_id[r.id] for r in predicted], predicted, roles=roles, mode=mode))
    return out


def pool_folds(system: SystemRun, parts: Sequence[CorpusCounts]) -> CorpusCounts:
    """The folds' counts pooled; with repeats each record counts once per repeat (keyed ``id#repeat``)."""
    repeats = sorted({f.repeat for f in system.folds})
    per_repeat = [merge_counts(part for fold, part in zip(system.folds, parts) if fold.repeat == r) for r in repeats]
    if len(per_repeat) == 1:
        return per_repeat[0]
    first = per_repeat[0]
    pooled = CorpusCounts(first.mode, first.roles, {}, {}, list(first.unannotated))
    for repeat, counts in zip(repeats, per_repeat):
        for record_id, record_counts in counts.by_record.items():
            pooled.by_record[f"{record_id}#{repeat}"] = record_counts
            pooled.doc_of[f"{record_id}#{repeat}"] = counts.doc_of[record_id]
    return pooled


def fold_spread(parts: Sequence[CorpusCounts]) -> dict[str, dict[str, Any]]:
    """Each F1 on every fold separately, with its mean and (population) standard deviation."""
    per_fold = [part.scores().f1s() for part in parts]
    names = list(per_fold[0]) if per_fold else []
    return {name: {"mean": round(mean(f[name] for f in per_fold), 6),
                   "std": round(pstdev(f[name] for f in per_fold), 6),
                   "per_fold": [round(f[name], 6) for f in per_fold]} for name in names}


def summarise_system(run: CrossvalRun, system: SystemRun, settings: EvaluationSettings) -> SystemSummary:
    """Pooled scores, intervals, fold spread and errors of one config; only held-out records are scored."""
    roles = system.config.roles
    parts_by_mode = {mode: fold_counts(run, system, roles=roles, mode=mode) for mode in SCORING_MODES}
    parts = parts_by_mode[settings.mode]
    counts = pool_folds(system, parts)
    given = pool_folds(system, fold_counts(run, system, roles=roles, mode=settings.mode, gold_triggers=True))
    intervals = bootstrap_f1s(counts.units(by=settings.bootstrap_unit), roles, samples=settings.bootstrap_samples,
                              seed=settings.seed, confidence=settings.confidence)
    first_repeat = system.predictions(min(f.repeat for f in system.folds))
    gold_by_id = {r.id: r for r in run.records}
    first_gold = [gold_by_id[r.id] for r in first_repeat]
    per_fold = fold_breakdown(parts_by_mode, [(f.repeat, f.fold) for f in system.folds])
    for entry, fold in zip(per_fold, system.folds):
        if fold.departures:
            entry["conventions_departing"] = list(fold.departures)
    return SystemSummary(
        name=system.name,
        scores=counts.scores(),
        gold_trigger_scores=given.scores(),
        intervals=intervals,
        fold_f1=fold_spread(parts),
        errors=error_analysis(first_gold, first_repeat, roles=roles),
        counts=counts,
        timings={"train_seconds": round(sum(f.train_seconds for f in system.folds), 2),
                 "predict_seconds": round(sum(f.predict_seconds for f in system.folds), 2)},
        interval_docs=len(set(counts.doc_of.values())),
        breakdown={**breakdown({mode: pool_folds(system, p) for mode, p in parts_by_mode.items()}),
                   "per_fold": per_fold},
        confidence=confidence_report(first_gold, first_repeat, roles=roles, mode=settings.mode),
    )


def compare_systems(systems: Sequence[SystemSummary], settings: EvaluationSettings) -> list[Comparison]:
    """A paired approximate randomization test, by document, for every pair of configs.

    Each score's p-values are then Holm-adjusted together across the pairs (one pair: unchanged).
    """
    out = []
    for a, b in combinations(systems, 2):
        tests = compare_f1s(a.counts.units(by="doc"), b.counts.units(by="doc"), a.scores.roles,
                            trials=settings.trials, seed=settings.seed)
        out.append(Comparison(a.name, b.name, tests))
    for name in out[0].tests if out else ():
        for comparison, adjusted in zip(out, holm([c.tests[name][1] for c in out])):
            comparison.holm[name] = adjusted
    return out


def summarise(run: CrossvalRun, settings: EvaluationSettings | None = None) -> RunSummary:
    """Score every config of a run and test every pair."""
    settings = settings or EvaluationSettings()
    systems = [summarise_system(run, system, settings) for system in run.systems]
    return RunSummary(settings, systems, compare_systems(systems, settings))
