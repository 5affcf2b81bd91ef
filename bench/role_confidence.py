"""What role confidences are worth on held-out predictions, and what a confidence floor buys, from a saved run.

Reads the gold corpus and one config's held-out predictions from a
``crossval`` report folder (``predictions/<config>.jsonl``), written by a
model whose role confidences cover the whole role instance (the role stage's
confidence given the trigger times the trigger's; ``docs/models.md``). Prints:

1. over all role instances, the expected calibration error (10 bins) and the
   area under the ROC curve of confidence against right or wrong (scikit-learn's
   ``roc_auc_score``), for the role stage's own confidence (recovered as the
   role's confidence over its trigger's) and for the product as written;
2. for confidence floors from none to 0.9, as ``itinerant itinerary
   --min-confidence`` applies them (``trainer.annotation.itinerary.above_floor``):
   events kept, trigger precision and recall, and precision, recall and F1 of
   the place roles (source, path, destination) pooled.

    python bench/role_confidence.py GOLD RUN_FOLDER [--config default] [--mode overlap]

For example, after ``itinerant crossval tests/external/real-prose/corpus
--leave-one-book-out --mode overlap -o runs/real``:
``python bench/role_confidence.py tests/external/real-prose/corpus runs/real``.
"""

from __future__ import annotations

import argparse
from dataclasses import replace
from pathlib import Path

from sklearn.metrics import roc_auc_score

from trainer.annotation.itinerary import above_floor
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.errors import ItinerantError
from trainer.evaluation.confidence import pooled_roles, reliability, scored_predictions
from trainer.evaluation.scoring import prf, score_corpus

FLOORS = (None, 0.3, 0.5, 0.7, 0.9)
PLACES = ("source", "path", "destination")


def own_confidences(record: Record) -> Record:
    """The record with each role's confidence divided by its event's: the role stage's own, given the trigger."""
    events = [replace(e, roles=tuple(replace(r, confidence=min(1.0, r.confidence / e.confidence)) for r in e.roles))
              if e.confidence else e for e in record.events or ()]
    return record.with_events(events) if record.events is not None else record


def floored(record: Record, floor: float | None) -> Record:
    """The record as a confidence floor leaves it (events below it out, role spans below it out)."""
    if record.events is None:
        return record
    return record.with_events([kept for e in record.events if (kept := above_floor(e, floor)) is not None])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("gold", type=Path)
    parser.add_argument("run", type=Path, help="a crossval report folder")
    parser.add_argument("--config", default="default", help="the config whose predictions to read")
    parser.add_argument("--mode", default="overlap", choices=("exact", "overlap"))
    args = parser.parse_args()
    predictions = args.run / "predictions" / f"{args.config}.jsonl"
    if not predictions.is_file():
        parser.error(f"{predictions}: no such predictions file (run `itinerant crossval ... -o {args.run}` first)")
    try:
        gold = read_corpus([args.gold]).records
        predicted = read_corpus([predictions]).records
    except ItinerantError as error:
        parser.error(str(error))

    print(f"{predictions}, {args.mode} matching")
    print("| role confidence | instances | ECE | ROC AUC | mean confidence | share right |")
    print("|---|---|---|---|---|---|")
    for name, records in (("role stage's own", [own_confidences(r) for r in predicted]), ("product (as written)", predicted)):
        pooled = pooled_roles(scored_predictions(gold, records, roles=DEFAULT_ROLES, mode=args.mode), DEFAULT_ROLES)
        print(f"| {name} | {len(pooled.confidence)} | {reliability(pooled)['ece']:.3f} | "
              f"{roc_auc_score(pooled.correct, pooled.confidence):.3f} | {pooled.confidence.mean():.3f} | "
              f"{pooled.correct.mean():.3f} |")

    print()
    print("| floor | events kept | trigger precision / recall | places precision / recall / F1 | place spans kept |")
    print("|---|---|---|---|---|")
    for floor in FLOORS:
        scores = score_corpus(gold, [floored(r, floor) for r in predicted], roles=DEFAULT_ROLES, mode=args.mode)
        tp, fp, fn = (sum(getattr(scores.per_role[role], k) for role in PLACES) for k in ("tp", "fp", "fn"))
        precision, recall, f1 = prf(tp, fp, fn)
        print(f"| {'none' if floor is None else floor} | {scores.trigger.predicted} | "
              f"{scores.trigger.precision:.3f} / {scores.trigger.recall:.3f} | "
              f"{precision:.3f} / {recall:.3f} / {f1:.3f} | {tp + fp} |")


if __name__ == "__main__":
    main()
