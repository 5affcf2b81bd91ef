"""Start-up of the light commands: wall time of `itinerant score` and `itinerant gate` on small inputs,
each a whole process (median of a few runs), against a process that only starts Python (target: under 1.5 s).

Usage:

    python bench/startup.py [--runs 5]
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _common import REPO, machine

GOLD = REPO / "demo_annotations" / "test" / "lisle-letters-1.jsonl"
ITINERANT = [sys.executable, "-m", "trainer.cli"]
ROLES = ["mover", "source", "path", "destination"]


def small_report() -> dict:
    """A report.json with one config, enough for the gate (the shape `itinerant crossval` writes)."""
    def score(f1: float) -> dict:
        return {"precision": f1, "recall": f1, "f1": f1, "tp": 8, "fp": 2, "fn": 2, "gold": 10, "predicted": 10}

    return {"corpus": {"fingerprint": "0" * 64, "files": [], "records": 10, "docs": 2}, "roles": ROLES,
            "settings": {"mode": "exact"}, "fold_plan_fingerprint": "0" * 16,
            "systems": [{"name": "small", "config": {},
                         "scores": {"roles": {r: score(0.8) for r in ROLES}, "micro": score(0.8),
                                    "macro": {"precision": 0.8, "recall": 0.8, "f1": 0.8}, "trigger": score(0.8)},
                         "intervals": {k: [0.7, 0.9] for k in [*ROLES, "micro", "macro", "trigger"]}}]}


def wall(command: list[str], runs: int) -> float:
    times = []
    for _ in range(runs):
        started = time.perf_counter()
        subprocess.run(command, check=True, capture_output=True)
        times.append(time.perf_counter() - started)
    return statistics.median(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        run = Path(tmp) / "run"
        run.mkdir()
        (run / "report.json").write_text(json.dumps(small_report()), encoding="utf-8")
        baseline = Path(tmp) / "baseline.json"
        subprocess.run([*ITINERANT, "gate", str(run), "--baseline", str(baseline), "--accept"], check=True,
                       capture_output=True)
        python = wall([sys.executable, "-c", "pass"], args.runs)
        score = wall([*ITINERANT, "score", str(GOLD), str(GOLD)], args.runs)
        gate = wall([*ITINERANT, "gate", str(run), "--baseline", str(baseline)], args.runs)
    print(f"machine: {machine()}; median of {args.runs} runs each")
    print(f"python -c pass : {python:5.2f} s")
    print(f"score ({GOLD.name}, {sum(1 for _ in open(GOLD, encoding='utf-8'))} records, 1000 bootstrap samples): "
          f"{score:5.2f} s (target < 1.5 s); {score / python:.1f}x bare Python start-up")
    print(f"gate (one config)  : {gate:5.2f} s (target < 1.5 s); {gate / python:.1f}x bare Python start-up")


if __name__ == "__main__":
    main()
