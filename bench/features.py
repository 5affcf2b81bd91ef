"""Feature extraction speed against parsing speed on the demo corpus.

Prints sentences per second of ``Featurizer.token_features`` (all feature
groups, the demo gazetteer) and of parsing alone (``nlp.pipe``, no cache) on
the same sentences, and the ratio feature_time / parse_time (target: at most
0.25). Also prints the time of ``role_features`` for the gold triggers, which
adds the trigger-relative group. Each figure is the best of ``--repeats``
runs, all measured in this one run of the script. No assertions.

    python bench/features.py [--repeats 3] [--profile]
"""

from __future__ import annotations

import argparse
import cProfile
import pstats
import time
from pathlib import Path
from typing import Callable

from trainer.config import FeatureConfig
from trainer.corpus.reader import read_corpus
from trainer.features.extract import Featurizer
from trainer.parsing.align import span_to_tokens
from trainer.parsing.pipeline import load_pipeline, parse_texts

ROOT = Path(__file__).resolve().parents[1]
TARGET = 0.25


def best_time(run: Callable[[], object], repeats: int) -> float:
    """The shortest wall-clock time of ``repeats`` calls."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        run()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--profile", action="store_true", help="print the top functions of token_features by own time")
    args = parser.parse_args()

    records = read_corpus(sorted((ROOT / "demo_annotations" / "train").glob("*.jsonl"))).records
    texts = [r.text for r in records]
    config = FeatureConfig(gazetteer=str(ROOT / "demo_annotations" / "gazetteer.tsv"))
    nlp = load_pipeline(groups=config.groups)
    featurizer = Featurizer.from_config(config, nlp)

    parse_time = best_time(lambda: parse_texts(nlp, texts), args.repeats)
    docs = parse_texts(nlp, texts)
    feature_time = best_time(lambda: [featurizer.token_features(d) for d in docs], args.repeats)
    triggers = [
        [t for t in (span_to_tokens(d, e.trigger) for e in r.events or ()) if t is not None]
        for r, d in zip(records, docs)
    ]

    def role_run() -> None:
        for doc, doc_triggers in zip(docs, triggers):
            base = featurizer.token_features(doc)
            for trigger in doc_triggers:
                featurizer.role_features(doc, trigger, base)

    role_time = best_time(role_run, args.repeats)
    n, tokens, n_triggers = len(docs), sum(len(d) for d in docs), sum(map(len, triggers))
    print(f"sentences: {n}, tokens: {tokens}, gold triggers: {n_triggers}, best of {args.repeats}")
    print(f"parsing ({','.join(nlp.pipe_names)}): {parse_time:.3f} s, {n / parse_time:.0f} sentences/s")
    print(f"token_features ({','.join(config.groups)}): {feature_time:.3f} s, {n / feature_time:.0f} sentences/s")
    print(f"token_features + role_features per gold trigger: {role_time:.3f} s, {n / role_time:.0f} sentences/s")
    ratio = feature_time / parse_time
    print(f"feature_time / parse_time: {ratio:.3f} (target <= {TARGET}: {'met' if ratio <= TARGET else 'NOT met'})")
    print(f"(token_features + role_features) / parse_time: {role_time / parse_time:.3f}")

    if args.profile:
        profiler = cProfile.Profile()
        profiler.enable()
        role_run()
        profiler.disable()
        pstats.Stats(profiler).sort_stats("tottime").print_stats(15)


if __name__ == "__main__":
    main()
