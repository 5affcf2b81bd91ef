"""What a cross-validation run produced: held-out predictions per config and fold, before any scoring.

Plain records, so a run can be scored (:mod:`trainer.evaluation.summary`),
rescored and rendered without loading the parser or the models; running one is
:func:`trainer.experiment.crossval.run_crossval`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Callable

from trainer.corpus.records import Record
from trainer.evaluation.folds import FoldPlan

if TYPE_CHECKING:  # named in hints only: a saved run is scored without the parser and the models
    from spacy.tokens import Doc

    from trainer.config import ExperimentConfig
    from trainer.models.explain import SpanKey
    from trainer.models.training import ParsedAuxiliary

Progress = Callable[[str], None]


@dataclass
class FoldOutput:
    """Held-out predictions of one config on one fold."""

    config: str
    repeat: int
    fold: int
    predicted: list[Record]
    predicted_gold_triggers: list[Record]
    train_seconds: float
    predict_seconds: float
    train_records: int  # of the target corpus; auxiliary corpora come on top
    # record id -> (label, start, end) -> the features that weighed most for that predicted span (if asked for)
    explanations: dict[str, dict[SpanKey, list[tuple[str, float]]]] = field(default_factory=dict)
    # Where this fold's training annotation departs from its auxiliary corpora's conventions (the departing stage's
    # features then augmented)
    departures: list[str] = field(default_factory=list)


@dataclass
class SystemRun:
    """One config's held-out predictions over all folds (corpus order, per repeat)."""

    name: str
    config: ExperimentConfig
    folds: list[FoldOutput] = field(default_factory=list)

    def predictions(self, repeat: int = 0, *, gold_triggers: bool = False) -> list[Record]:
        """All held-out predictions of one repeat, sorted by record id."""
        out = [r for f in self.folds if f.repeat == repeat
               for r in (f.predicted_gold_triggers if gold_triggers else f.predicted)]
        return sorted(out, key=lambda r: r.id)

    def explanations(self, repeat: int = 0) -> dict[str, dict[SpanKey, list[tuple[str, float]]]]:
        """The span explanations of one repeat's held-out predictions, by record id (empty unless asked for)."""
        return {rid: spans for f in self.folds if f.repeat == repeat for rid, spans in f.explanations.items()}


@dataclass
class CrossvalRun:
    """Gold records, the fold plans and each config's held-out predictions."""

    records: list[Record]
    plans: list[FoldPlan]
    systems: list[SystemRun]
    parse_seconds: float
    parsed: int
    cached: int
    docs: list[Doc] = field(default_factory=list, repr=False)
    auxiliary: dict[str, ParsedAuxiliary] = field(default_factory=dict, repr=False)
