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

With ``--real-prose BOOK`` the same loop runs on the real-prose evaluation
corpus (``tests/external/real-prose/corpus/``) with the default config
(``configs/default.toml``, the packaged demo corpus as auxiliary corpus): the
named book is the test set, the other books' sentences the pool, and the
start is ``--start-sentences`` records drawn from the pool at random
(``--start-seed``), as when a team begins a new book from its first batch;
scoring is in overlap mode, and trigger F1 is printed beside role F1:

    python bench/annotation_study.py --real-prose slocum-alone [--start-sentences 20] [--rounds 3] [--batch 30]
"""

from __future__ import annotations

import argparse
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Sequence

import numpy as np

from trainer.annotation.suggest import suggest_batch
from trainer.config import ExperimentConfig, config_from_dict, load_config
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Record
from trainer.evaluation.folds import book_of
from trainer.evaluation.scoring import score_corpus
from trainer.models.training import fit_extractor, parse_auxiliary, parser_for
from trainer.parsing.parse import parse_records

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_annotations"
REAL_PROSE = ROOT / "tests" / "external" / "real-prose" / "corpus"
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
    """Role micro F1 (and trigger F1) per round for each strategy, and what the run was."""

    start: str  # what was annotated at the start: the docs, or how the sentences were drawn
    pool_size: int
    test_size: int
    batch: int
    measure: str
    diversity: float
    random_seeds: list[int]
    labelled: list[int] = field(default_factory=list)  # training records after each round (0 = start)
    f1: dict[str, list[float]] = field(default_factory=dict)  # role micro F1 of "uncertainty", "random-<seed>"
    trigger_f1: dict[str, list[float]] = field(default_factory=dict)  # trigger F1, same keys
    seconds: float = 0.0

    def random_mean(self, scores: dict[str, list[float]] | None = None) -> list[float]:
        """Per round, the mean over the random runs of ``scores`` (role F1 by default)."""
        scores = self.f1 if scores is None else scores
        runs = [scores[f"random-{seed}"] for seed in self.random_seeds]
        return [float(np.mean(values)) for values in zip(*runs)]

    def mean_over_rounds(self, values: Sequence[float]) -> float:
        """Mean F1 over the rounds after the start (round 0 is shared, so it is left out)."""
        return float(np.mean(values[1:]))

    def table(self, scores: dict[str, list[float]] | None = None) -> str:
        """A Markdown table of ``scores`` (role F1 by default) by round and strategy."""
        scores = self.f1 if scores is None else scores
        seeds = [f"random-{s}" for s in self.random_seeds]
        head = ["round", "labelled", UNCERTAINTY, *seeds, "random mean"]
        lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
        mean = self.random_mean(scores)
        for r, size in enumerate(self.labelled):
            cells = [str(r), str(size), f"{scores[UNCERTAINTY][r]:.3f}", *(f"{scores[s][r]:.3f}" for s in seeds), f"{mean[r]:.3f}"]
            lines.append("| " + " | ".join(cells) + " |")
        cells = ["mean 1..R", "", f"{self.mean_over_rounds(scores[UNCERTAINTY]):.3f}",
                 *(f"{self.mean_over_rounds(scores[s]):.3f}" for s in seeds), f"{self.mean_over_rounds(mean):.3f}"]
        lines.append("| " + " | ".join(cells) + " |")
        return "\n".join(lines)


def simulate(
    config: ExperimentConfig, train: Sequence[Record], test: Sequence[Record], start: Sequence[Record], *,
    start_label: str, rounds: int, batch: int, random_seeds: Sequence[int], measure: str,
    diversity: float, mode: str,
) -> StudyResult:
    """The loop itself: ``start`` records annotated, the rest of ``train`` the pool, ``test`` scored in ``mode``."""
    started = time.perf_counter()
    nlp = parser_for(config)
    docs_of_train, _ = parse_records(nlp, train, config.parser)
    test_docs, _ = parse_records(nlp, test, config.parser)
    auxiliary = parse_auxiliary(config.auxiliary.corpora, target=[*train, *test], nlp=nlp, parser=config.parser,
                                roles=config.roles)
    parsed = {r.id: d for r, d in zip(train, docs_of_train)}
    gold = {r.id: r for r in train}
    chosen_first = {r.id for r in start}
    pool = sorted((r.with_events(None) for r in train if r.id not in chosen_first), key=lambda r: r.id)

    def fit_and_score(records: list[Record]) -> tuple[tuple[float, float], object]:
        trained = fit_extractor(records, config, nlp=nlp, docs=[parsed[r.id] for r in records], auxiliary=auxiliary)
        scores = score_corpus(test, trained.extractor.predict(test, test_docs), roles=config.roles, mode=mode)
        return (scores.micro.f1, scores.trigger.f1), trained

    result = StudyResult(start_label, len(pool), len(test), batch, measure, diversity, list(random_seeds))
    start_scores, start_model = fit_and_score(list(start))
    result.labelled = [len(start) + batch * r for r in range(rounds + 1)]

    def run(choose) -> tuple[list[float], list[float]]:
        labelled, remaining, trained, scores = list(start), list(pool), start_model, [start_scores]
        for _ in range(rounds):
            chosen = set(choose(trained, remaining))
            labelled += [gold[r.id] for r in remaining if r.id in chosen]  # the annotator reveals the gold events
            remaining = [r for r in remaining if r.id not in chosen]
            score, trained = fit_and_score(labelled)
            scores.append(score)
        return [role for role, _ in scores], [trigger for _, trigger in scores]

    def by_uncertainty(trained, remaining: list[Record]) -> list[str]:
        picked = suggest_batch(trained, remaining, batch, measure=measure, diversity=diversity,
                               docs=[parsed[r.id] for r in remaining])
        return [r.id for r in picked]

    result.f1[UNCERTAINTY], result.trigger_f1[UNCERTAINTY] = run(by_uncertainty)
    for random_seed in random_seeds:
        rng = np.random.default_rng(random_seed)
        key = f"random-{random_seed}"
        result.f1[key], result.trigger_f1[key] = run(
            lambda _, remaining: [remaining[i].id for i in rng.choice(len(remaining), size=batch, replace=False)])
    result.seconds = time.perf_counter() - started
    return result


def run_study(
    *, cache_dir: Path | str, rounds: int = 4, batch: int = 25, start_docs: Sequence[str] = START_DOCS,
    random_seeds: Sequence[int] = (1, 2, 3), measure: str = "least_confidence", diversity: float = 0.5,
    max_iterations: int = 50, train_dir: Path = DEMO / "train", test_dir: Path = DEMO / "test",
) -> StudyResult:
    """Run the simulated study on the demo corpus (see the module docstring); exact scoring."""
    config = study_config(cache_dir, max_iterations=max_iterations)
    train = read_corpus([train_dir], roles=config.roles).records
    test = read_corpus([test_dir], roles=config.roles).records
    start = sorted(start_docs)
    unknown = sorted(set(start) - {r.doc for r in train})
    if unknown:
        raise SystemExit(f"start docs {unknown} are not in {train_dir}")
    return simulate(config, train, test, [r for r in train if r.doc in start], start_label=", ".join(start), rounds=rounds,
                    batch=batch, random_seeds=random_seeds, measure=measure, diversity=diversity, mode="exact")


def run_real_prose_study(
    book: str, *, start_sentences: int = 20, start_seed: int = 0, rounds: int = 3, batch: int = 30,
    random_seeds: Sequence[int] = (1, 2), measure: str = "least_confidence", diversity: float = 0.5,
    config_path: Path = ROOT / "configs" / "default.toml", corpus: Path = REAL_PROSE,
) -> StudyResult:
    """The study on the real-prose corpus: ``book`` held out for testing, the other books the pool; overlap scoring."""
    config = load_config(config_path)
    records = read_corpus([corpus], roles=config.roles).records
    books = sorted({book_of(r.doc) for r in records})
    if book not in books:
        raise SystemExit(f"no book {book!r} in {corpus}; its books: {', '.join(books)}")
    train = [r for r in records if book_of(r.doc) != book]
    test = [r for r in records if book_of(r.doc) == book]
    rng = np.random.default_rng(start_seed)
    first = sorted(rng.choice(len(train), size=min(start_sentences, len(train)), replace=False).tolist())
    return simulate(config, train, test, [train[i] for i in first],
                    start_label=f"{start_sentences} sentences drawn with seed {start_seed}", rounds=rounds,
                    batch=batch, random_seeds=random_seeds, measure=measure, diversity=diversity, mode="overlap")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rounds", type=int, help="rounds of annotation (default: 4 on the demo, 3 on real prose)")
    parser.add_argument("--batch", type=int, help="records per round (default: 25 on the demo, 30 on real prose)")
    parser.add_argument("--start-docs", default=",".join(START_DOCS), help="comma-separated training docs to start from")
    parser.add_argument("--random-seeds", help="comma-separated seeds, one random-batch run each "
                        "(default: 1,2,3 on the demo, 1,2 on real prose)")
    parser.add_argument("--measure", default="least_confidence", choices=["least_confidence", "entropy"])
    parser.add_argument("--diversity", type=float, default=0.5)
    parser.add_argument("--max-iterations", type=int, default=50, help="CRF iterations of the demo study's extractor")
    parser.add_argument("--cache-dir", default=str(ROOT / ".itinerant-cache"))
    parser.add_argument("--real-prose", metavar="BOOK",
                        help="run on the real-prose corpus with configs/default.toml, this book held out for testing")
    parser.add_argument("--start-sentences", type=int, default=20, help="real prose: records annotated at the start")
    parser.add_argument("--start-seed", type=int, default=0, help="real prose: seed of the start draw")
    args = parser.parse_args()
    real = args.real_prose is not None
    rounds = args.rounds if args.rounds is not None else 3 if real else 4
    batch = args.batch if args.batch is not None else 30 if real else 25
    seeds = [int(s) for s in (args.random_seeds or ("1,2" if real else "1,2,3")).split(",")]
    if min(rounds, batch, args.start_sentences) < 1:
        parser.error("--rounds, --batch and --start-sentences must be at least 1")
    common = dict(rounds=rounds, batch=batch, random_seeds=seeds, measure=args.measure, diversity=args.diversity)
    if real:
        result = run_real_prose_study(args.real_prose, start_sentences=args.start_sentences,
                                      start_seed=args.start_seed, **common)
        what = f"the real-prose book {args.real_prose} (overlap)"
        model = "configs/default.toml (with its auxiliary corpus)"
    else:
        result = run_study(cache_dir=args.cache_dir, start_docs=args.start_docs.split(","),
                           max_iterations=args.max_iterations, **common)
        what = "demo_annotations/test (exact)"
        model = f"CRF trigger+role, max_iterations {args.max_iterations}"
    print(f"start: {result.start} ({result.labelled[0]} records); pool {result.pool_size} records "
          f"(events hidden); test {result.test_size} records; batch {result.batch}; measure {result.measure}, "
          f"diversity {result.diversity}; {model}")
    print(f"role micro F1 on {what} after each round:\n")
    print(result.table())
    print(f"\ntrigger F1 on {what} after each round:\n")
    print(result.table(result.trigger_f1))
    print(f"\n{result.seconds:.0f} s in all")


if __name__ == "__main__":
    main()
