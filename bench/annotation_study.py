"""A simulated annotation study: does choosing batches with ``suggest_batch`` beat random batches?

Starts from a few training docs of the demo corpus (``--start-docs``), turns
the other training docs into an unlabelled pool (events dropped), and holds
out ``demo_annotations/test/`` as the test set. For each round, one batch of
``--batch`` records is chosen from the pool by ``suggest_batch`` (uncertainty
plus diversity) and, separately, at random (one run per ``--random-seeds``
seed); the chosen records' gold events are revealed (a perfect annotator), the
extractor is retrained, and role micro F1 (exact, ``score_corpus``) on the
test docs is recorded. Round 0 is the start model, shared by all strategies.
Every sentence is parsed once (through the parse cache) and reused. All
numbers come from this one run; nothing is asserted.

    python bench/annotation_study.py [--rounds 4] [--batch 25] [--start-docs amsel-pilgrim-1,amsel-pilgrim-2]
        [--random-seeds 1,2,3] [--measure least_confidence] [--diversity 0.5]

tests/annotation/test_study.py runs :func:`run_study` with the same defaults.
"""

from __future__ import annotations

import argparse
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Sequence

import numpy as np

from trainer.annotation.suggest import suggest_batch
from trainer.config import ExperimentConfig, config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Record
from trainer.evaluation.scoring import score_corpus
from trainer.models.training import fit_extractor, parser_for
from trainer.parsing.parse import parse_records

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_annotations"
UNCERTAINTY = "uncertainty"
# One traveller's two journals: the annotator has done the first book and moves on to the others.
START_DOCS = ("amsel-pilgrim-1", "amsel-pilgrim-2")


def study_config(cache_dir: Path | str, *, max_iterations: int = 50) -> ExperimentConfig:
    """The fast extractor the study retrains each round: CRF trigger and role taggers with capped iterations."""
    return config_from_dict({
        "name": f"study-crf-{max_iterations}",
        "parser": {"cache_dir": str(cache_dir)},
        "trigger_model": {"kind": "crf", "iterations": max_iterations},
        "role_model": {"kind": "crf", "iterations": max_iterations},
    })


@dataclass
class StudyResult:
    """Role micro F1 (exact) per round for each strategy, and what the run was."""

    start_docs: list[str]
    pool_size: int
    test_size: int
    batch: int
    measure: str
    diversity: float
    random_seeds: list[int]
    labelled: list[int] = field(default_factory=list)  # training records after each round (0 = start)
    f1: dict[str, list[float]] = field(default_factory=dict)  # "uncertainty", "random-<seed>"
    seconds: float = 0.0

    def random_mean(self) -> list[float]:
        runs = [self.f1[f"random-{seed}"] for seed in self.random_seeds]
        return [float(np.mean(values)) for values in zip(*runs)]

    def mean_over_rounds(self, values: Sequence[float]) -> float:
        """Mean F1 over the rounds after the start (round 0 is shared, so it is left out)."""
        return float(np.mean(values[1:]))

    def table(self) -> str:
        seeds = [f"random-{s}" for s in self.random_seeds]
        head = ["round", "labelled", UNCERTAINTY, *seeds, "random mean"]
        lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
        mean = self.random_mean()
        for r, size in enumerate(self.labelled):
            cells = [str(r), str(size), f"{self.f1[UNCERTAINTY][r]:.3f}", *(f"{self.f1[s][r]:.3f}" for s in seeds), f"{mean[r]:.3f}"]
            lines.append("| " + " | ".join(cells) + " |")
        cells = ["mean 1..R", "", f"{self.mean_over_rounds(self.f1[UNCERTAINTY]):.3f}",
                 *(f"{self.mean_over_rounds(self.f1[s]):.3f}" for s in seeds), f"{self.mean_over_rounds(mean):.3f}"]
        lines.append("| " + " | ".join(cells) + " |")
        return "\n".join(lines)


def run_study(
    *, cache_dir: Path | str, rounds: int = 4, batch: int = 25, start_docs: Sequence[str] = START_DOCS,
    random_seeds: Sequence[int] = (1, 2, 3), measure: str = "least_confidence", diversity: float = 0.5,
    max_iterations: int = 50, train_dir: Path = DEMO / "train", test_dir: Path = DEMO / "test",
) -> StudyResult:
    """Run the simulated study (see the module docstring)."""
    started = time.perf_counter()
    config = study_config(cache_dir, max_iterations=max_iterations)
    nlp = parser_for(config)
    train = read_corpus([train_dir], roles=config.roles).records
    test = read_corpus([test_dir], roles=config.roles).records
    docs_of_train, _ = parse_records(nlp, train, config.parser)
    test_docs, _ = parse_records(nlp, test, config.parser)
    parsed = {r.id: d for r, d in zip(train, docs_of_train)}
    gold = {r.id: r for r in train}

    start = sorted(start_docs)
    unknown = sorted(set(start) - {r.doc for r in train})
    if unknown:
        raise SystemExit(f"start docs {unknown} are not in {train_dir}")
    seed_records = [r for r in train if r.doc in start]
    pool = sorted((r.with_events(None) for r in train if r.doc not in start), key=lambda r: r.id)

    def f1_of(records: list[Record]) -> tuple[float, object]:
        trained = fit_extractor(records, config, nlp=nlp, docs=[parsed[r.id] for r in records])
        predicted = trained.extractor.predict(test, test_docs)
        return score_corpus(test, predicted, roles=config.roles, mode="exact").micro.f1, trained

    result = StudyResult(start, len(pool), len(test), batch, measure, diversity, list(random_seeds))
    start_f1, start_model = f1_of(seed_records)
    result.labelled = [len(seed_records) + batch * r for r in range(rounds + 1)]

    def simulate(choose) -> list[float]:
        labelled, remaining, trained, scores = list(seed_records), list(pool), start_model, [start_f1]
        for _ in range(rounds):
            chosen = set(choose(trained, remaining))
            labelled += [gold[r.id] for r in remaining if r.id in chosen]  # the annotator reveals the gold events
            remaining = [r for r in remaining if r.id not in chosen]
            score, trained = f1_of(labelled)
            scores.append(score)
        return scores

    def by_uncertainty(trained, remaining: list[Record]) -> list[str]:
        picked = suggest_batch(trained, remaining, batch, measure=measure, diversity=diversity,
                               docs=[parsed[r.id] for r in remaining])
        return [r.id for r in picked]

    result.f1[UNCERTAINTY] = simulate(by_uncertainty)
    for random_seed in random_seeds:
        rng = np.random.default_rng(random_seed)
        result.f1[f"random-{random_seed}"] = simulate(
            lambda _, remaining: [remaining[i].id for i in rng.choice(len(remaining), size=batch, replace=False)])
    result.seconds = time.perf_counter() - started
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rounds", type=int, default=4)
    parser.add_argument("--batch", type=int, default=25)
    parser.add_argument("--start-docs", default=",".join(START_DOCS), help="comma-separated training docs to start from")
    parser.add_argument("--random-seeds", default="1,2,3", help="comma-separated seeds, one random-batch run each")
    parser.add_argument("--measure", default="least_confidence", choices=["least_confidence", "entropy"])
    parser.add_argument("--diversity", type=float, default=0.5)
    parser.add_argument("--max-iterations", type=int, default=50)
    parser.add_argument("--cache-dir", default=str(ROOT / ".itinerant-cache"))
    args = parser.parse_args()
    result = run_study(cache_dir=args.cache_dir, rounds=args.rounds, batch=args.batch, start_docs=args.start_docs.split(","),
                       random_seeds=[int(s) for s in args.random_seeds.split(",")],
                       measure=args.measure, diversity=args.diversity, max_iterations=args.max_iterations)
    print(f"start docs {', '.join(result.start_docs)} ({result.labelled[0]} records); pool {result.pool_size} records "
          f"(events hidden); test {result.test_size} records; batch {result.batch}; measure {result.measure}, "
          f"diversity {result.diversity}; CRF trigger+role, max_iterations {args.max_iterations}")
    print("role micro F1 (exact) on demo_annotations/test after each round:\n")
    print(result.table())
    print(f"\n{result.seconds:.0f} s in all")


if __name__ == "__main__":
    main()
