"""Cross-validation time split by stage, with a cold and a warm parse cache.

Stages: parse (through the cache), features (token and role features of every
sentence, as training computes them), training and prediction (per fold; each
includes its own feature computation, which the features line isolates), and
scoring (pooled scores, bootstrap, error analysis). Usage:

    python bench/crossval_stages.py [--config configs/default.toml] [--folds 5]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from dataclasses import replace
from pathlib import Path

from _common import machine

from trainer.config import load_config
from trainer.corpus.reader import read_corpus
from trainer.experiment.crossval import run_crossval
from trainer.evaluation.folds import grouped_kfold
from trainer.evaluation.summary import summarise
from trainer.features.extract import Featurizer
from trainer.models.extractor import gold_targets
from trainer.models.training import parser_for
from trainer.parsing.parse import parse_records

REPO = Path(__file__).resolve().parent.parent


def timed(function, *args, **kwargs):
    started = time.perf_counter()
    result = function(*args, **kwargs)
    return result, time.perf_counter() - started


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--config", type=Path, default=REPO / "configs" / "default.toml")
    parser.add_argument("--folds", type=int, default=5)
    args = parser.parse_args()
    config = load_config(args.config)
    records = read_corpus([REPO / "demo_annotations" / "train"]).annotated()
    nlp = parser_for(config)
    plans = grouped_kfold([r.doc for r in records], args.folds, seed=13)
    with tempfile.TemporaryDirectory() as cache:
        config = replace(config, parser=replace(config.parser, cache_dir=cache))
        rows = {}
        for label in ("cold", "warm"):
            (docs, _), parse_seconds = timed(parse_records, nlp, records, config.parser)
            featurizer = Featurizer.from_config(config.features, nlp)
            targets = gold_targets(records, docs)

            def features():
                for doc, triggers in zip(docs, targets.triggers):
                    base = featurizer.token_features(doc)
                    for trigger in triggers:
                        featurizer.role_features(doc, trigger, base)

            _, feature_seconds = timed(features)
            run, _ = timed(run_crossval, records, [config], plans, nlp=nlp, docs=docs)
            train = sum(f.train_seconds for s in run.systems for f in s.folds)
            predict = sum(f.predict_seconds for s in run.systems for f in s.folds)
            _, score_seconds = timed(summarise, run)
            rows[label] = (parse_seconds, feature_seconds, train, predict, score_seconds)
    print(f"machine: {machine()}")
    print(f"config {args.config.name}, {args.folds} folds, {len(records)} records")
    print(f"{'':6} {'parse':>8} {'features':>9} {'training':>9} {'predict':>8} {'scoring':>8} {'total':>8}")
    for label, values in rows.items():
        print(f"{label:6} " + " ".join(f"{v:8.1f}s" for v in values) + f" {sum(values):7.1f}s")
    print(f"parse cold/warm ratio: {rows['cold'][0] / rows['warm'][0]:.0f}x; "
          f"total cold/warm: {sum(rows['cold']) / sum(rows['warm']):.2f}x")
    print("(training and prediction include their own feature computation; 'features' is one pass on its own)")


if __name__ == "__main__":
    main()
