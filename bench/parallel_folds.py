"""Cross-validation with --jobs 2 against --jobs 1 on the demo corpus (target: at least 1.6x on two cores).

Both runs reuse the same parses (parsing is timed apart), so the ratio is the
speed-up of the trainings themselves. Usage: python bench/parallel_folds.py [--config ...] [--folds 5]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

from _common import machine

from trainer.config import load_config
from trainer.corpus.reader import read_corpus
from trainer.experiment.crossval import run_crossval
from trainer.evaluation.folds import grouped_kfold
from trainer.evaluation.summary import summarise
from trainer.models.training import parser_for
from trainer.parsing.parse import parse_records
from trainer.reports.json_report import report_dict

REPO = Path(__file__).resolve().parent.parent


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--config", type=Path, default=REPO / "configs" / "default.toml")
    parser.add_argument("--folds", type=int, default=4)
    args = parser.parse_args()
    config = load_config(args.config)
    records = read_corpus([REPO / "demo_annotations" / "train"]).annotated()
    nlp = parser_for(config)
    docs, _ = parse_records(nlp, records, config.parser)
    plans = grouped_kfold([r.doc for r in records], args.folds, seed=13)
    timings, reports = {}, {}
    for jobs in (1, 2):
        started = time.perf_counter()
        run = run_crossval(records, [config], plans, nlp=nlp, docs=docs, jobs=jobs)
        timings[jobs] = time.perf_counter() - started
        reports[jobs] = report_dict(run, summarise(run), corpus_files=[])
    print(f"machine: {machine()}")
    print(f"config {args.config.name}, {args.folds} folds, {len(records)} records")
    print(f"--jobs 1: {timings[1]:.1f} s   --jobs 2: {timings[2]:.1f} s")
    print(f"speed-up jobs 2 / jobs 1: {timings[1] / timings[2]:.2f}x (target >= 1.6x)")
    print(f"identical metrics: {reports[1]['systems'] == reports[2]['systems']}")


if __name__ == "__main__":
    main()
