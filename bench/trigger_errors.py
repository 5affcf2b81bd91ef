"""Where the default's trigger errors sit on real prose, by what the rules make of each word.

Leave one book out on the real-prose corpus (as ``bench/real_prose.py``): for
each held-out book the default config is trained on the other five (plus its
auxiliary corpus), and every held-out token's trigger probability is compared
with that fold's own threshold. Tokens are grouped by the ``rules`` feature
group's verdict: a word the motion lexicons list and the rules keep, a
particle of a listed phrasal verb, a listed word the rules block (negated,
modal, ...), or a word the lexicons do not list. Printed per group: gold
trigger tokens, those found, and false alarms; then the token-level F1 at the
folds' own thresholds and at the best single and best pair of thresholds
chosen with hindsight (an upper bound on what threshold choice alone can give);
last, each fold's inner-fold F1 curve (what the default chooses its threshold
from) and the token F1 when the threshold is read off those curves in other
ways: smoothed, the lowest or the middle one near the best.

    python bench/trigger_errors.py [--config configs/default.toml] [--corpus PATH...]
"""

from __future__ import annotations

import argparse
from collections import Counter
from pathlib import Path
from statistics import mean
from typing import Callable, Sequence

from real_prose import REAL_PROSE, ROOT, real_prose_records

from trainer.config import load_config
from trainer.errors import ItinerantError
from trainer.evaluation.folds import leave_one_book_out
from trainer.evaluation.scoring import prf
from trainer.models.extractor import THRESHOLD_GRID, best_threshold, gold_targets
from trainer.models.training import fit_extractor, parser_for
from trainer.parsing.parse import parse_records


def group_of(features: dict) -> str:
    """The rules' verdict on one token, from its ``rules`` group features."""
    if features.get("rule_blocked"):
        return "listed, blocked by the rules"
    return {"B": "listed, kept by the rules", "I": "particle of a listed phrasal verb"}.get(
        str(features.get("rule_trigger")), "not listed")


def f1_at(points: list[tuple[float, bool, str, float]], gold: int, thresholds: Sequence[float]) -> float:
    """Token-level trigger F1 with one threshold per point (each point's own fold threshold ignored)."""
    tp = sum(1 for (p, is_gold, _, _), t in zip(points, thresholds) if is_gold and p >= t)
    fp = sum(1 for (p, is_gold, _, _), t in zip(points, thresholds) if not is_gold and p >= t)
    return prf(tp, fp, gold - tp)[2]


def token_f1(points: list[tuple[float, bool, str, float]], gold: int, threshold: dict[str, float]) -> float:
    """Token-level trigger F1 with one threshold per group."""
    return f1_at(points, gold, [threshold[group] for _, _, group, _ in points])


def single_point_threshold(scores: dict[float, float]) -> float:
    """The threshold of the best inner-fold F1 at one grid point, unsmoothed (the highest among equals)."""
    return max(scores, key=lambda t: (scores[t], t))


def _near_best(scores: dict[float, float], within: float) -> list[float]:
    best = max(scores.values())
    return sorted(t for t, f1 in scores.items() if f1 >= best - within)


def lowest_near_best(scores: dict[float, float]) -> float:
    """The lowest threshold whose inner-fold F1 is within 0.005 of the best (recall first)."""
    return _near_best(scores, 0.005)[0]


def middle_near_best(scores: dict[float, float]) -> float:
    """The grid threshold nearest the mean of those within 0.005 of the best (the higher one on a tie)."""
    centre = mean(_near_best(scores, 0.005))
    return min(scores, key=lambda t: (round(abs(t - centre), 9), -t))  # rounded: 0.15 and 0.2 are equally near 0.175


READINGS: tuple[tuple[str, Callable[[dict[float, float]], float]], ...] = (
    ("best after smoothing with the neighbours (the default's own)", best_threshold),
    ("best single point of the curve", single_point_threshold),
    ("lowest within 0.005 of the best", lowest_near_best),
    ("middle of those within 0.005", middle_near_best),
)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--config", type=Path, default=ROOT / "configs" / "default.toml")
    parser.add_argument("--corpus", type=Path, nargs="+", default=[REAL_PROSE], metavar="PATH",
                        help="annotated JSONL files or folders instead of the real-prose corpus (at least two books)")
    args = parser.parse_args()
    try:
        config = load_config(args.config)
        records = real_prose_records(args.corpus)
        plan = leave_one_book_out([r.doc for r in records])
    except ItinerantError as exc:
        parser.error(str(exc))
    learned = config.trigger_model.kind != "rules" and config.trigger_model.tune_threshold
    if "rules" not in config.features.groups or not learned:
        parser.error(f"{args.config}: needs the rules feature group and a learned trigger stage with a tuned "
                     "threshold ([trigger_model] tune_threshold = true), as in configs/default.toml")
    nlp = parser_for(config)
    docs, _ = parse_records(nlp, records, config.parser)
    points: list[tuple[float, bool, str, float]] = []  # (probability, gold, group, fold threshold) per held-out token
    curves: list[dict[float, float]] = []  # per fold, the inner-fold F1 of every threshold of the grid
    fold_of: list[int] = []  # per point, its fold
    for _, test_docs in plan.folds:
        held = set(test_docs)
        train = [i for i, r in enumerate(records) if r.doc not in held]
        test = [i for i, r in enumerate(records) if r.doc in held]
        extractor = fit_extractor([records[i] for i in train], config, nlp=nlp,
                                  docs=[docs[i] for i in train]).extractor
        threshold = extractor.trigger_finder.decision_threshold
        curves.append(dict(extractor.threshold_scores_))
        features = extractor.prediction_features([docs[i] for i in test]).triggers
        distributions = extractor.trigger_finder.tagger.token_distributions(features)
        gold = gold_targets([records[i] for i in test], [docs[i] for i in test]).triggers
        for sentence, rows, triggers in zip(distributions, features, gold):
            inside = {t for first, end in triggers for t in range(first, end)}
            for t, (probs, row) in enumerate(zip(sentence, rows)):
                p = probs.get("B-TRIGGER", 0.0) + probs.get("I-TRIGGER", 0.0)
                points.append((p, t in inside, group_of(row), threshold))
                fold_of.append(len(curves) - 1)
    groups = sorted({point[2] for point in points})
    gold_n, found, alarms = Counter(), Counter(), Counter()
    for p, is_gold, group, threshold in points:
        gold_n[group] += is_gold
        found[group] += is_gold and p >= threshold
        alarms[group] += (not is_gold) and p >= threshold
    total_gold = sum(gold_n.values())
    print(f"{', '.join(map(str, args.corpus))}, leave one book out, {args.config.name}: {total_gold} gold trigger tokens")
    print(f"{'group':36} | gold | found | false alarms")
    for group in groups:
        print(f"{group:36} | {gold_n[group]:4} | {found[group]:5} | {alarms[group]:5}")
    tp, fp = sum(found.values()), sum(alarms.values())
    print(f"token-level F1 at each fold's own threshold: {prf(tp, fp, total_gold - tp)[2]:.3f}")
    # Hindsight over the same grid the inner folds choose from.
    single = max((token_f1(points, total_gold, dict.fromkeys(groups, t)), t) for t in THRESHOLD_GRID)
    listed = "listed, kept by the rules"
    pair = max((token_f1(points, total_gold, {g: a if g == listed else b for g in groups}), a, b)
               for a in THRESHOLD_GRID for b in THRESHOLD_GRID)
    print(f"best single threshold with hindsight: {single[0]:.3f} at {single[1]}")
    print(f"best pair with hindsight (listed and kept; the rest): {pair[0]:.3f} at {pair[1]} and {pair[2]}")
    print("\ninner-fold F1 by threshold, per fold (" + " ".join(f"{t:g}" for t in THRESHOLD_GRID) + "):")
    for k, curve in enumerate(curves):
        print(f"  fold {k + 1}: " + " ".join(f"{curve[t]:.3f}" for t in THRESHOLD_GRID))
    print("token-level F1 with the threshold read off each fold's inner-fold curve:")
    for name, read in READINGS:
        chosen = [read(curve) for curve in curves]
        f1 = f1_at(points, total_gold, [chosen[k] for k in fold_of])
        print(f"  {name:60} {f1:.3f} (thresholds " + ", ".join(f"{t:g}" for t in chosen) + ")")


if __name__ == "__main__":
    main()
