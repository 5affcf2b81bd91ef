"""Compile the demo's inline-markup sources into canonical JSONL and print counts.

The demo journals are written by hand in inline markup (``source/*.txt``, see
``trainer/corpus/convert/inline.py``); this script turns each into
``train/``, ``test/`` or ``auxiliary/<doc>.jsonl`` according to its ``# split:``
header, and concatenates the training and auxiliary journals into
``trainer/data/demo-train.jsonl`` (the packaged auxiliary corpus ``packaged:demo``).
Run it after editing a source file:

    python demo_annotations/build_demo.py            # write and summarise
    python demo_annotations/build_demo.py --check    # fail if outputs are stale
"""

from __future__ import annotations

import sys
from collections import Counter
from pathlib import Path

from trainer.corpus.convert.inline import read_inline
from trainer.corpus.jsonl import dumps_record
from trainer.outputs import refresh_generated

HERE = Path(__file__).resolve().parent
# The training and auxiliary journals also ship inside the package as the auxiliary corpus ``packaged:demo``.
PACKAGED = HERE.parent / "trainer" / "data" / "demo-train.jsonl"
SPLITS = ("train", "test", "auxiliary")
PACKAGED_SPLITS = ("train", "auxiliary")


def split_of(source: Path) -> str:
    for line in source.read_text(encoding="utf-8").splitlines():
        if line.startswith("# split:") and line.partition(":")[2].strip() in SPLITS:
            return line.partition(":")[2].strip()
    raise SystemExit(f"{source}: no '# split: {'|'.join(SPLITS)}' header")


def main(argv: list[str]) -> int:
    check_only = "--check" in argv
    stale = []
    totals: Counter[str] = Counter()
    triggers: Counter[str] = Counter()
    for source in sorted((HERE / "source").glob("*.txt")):
        records = read_inline(source)
        target = HERE / split_of(source) / f"{source.stem}.jsonl"
        if not refresh_generated(target, "".join(dumps_record(r) + "\n" for r in records), check_only=check_only):
            stale.append(str(target))
        negatives = sum(1 for r in records if not r.events)
        events = [e for r in records for e in r.events]
        roles = Counter(role.role for e in events for role in e.roles)
        triggers.update(r.span_text(e.trigger).lower() for r in records for e in r.events)
        totals.update(records=len(records), negatives=negatives, events=len(events), **roles)
        print(f"{source.stem:22} records={len(records):4} negatives={negatives:4} events={len(events):4} {dict(roles)}")
    packaged = "".join(p.read_text(encoding="utf-8") for split in PACKAGED_SPLITS
                       for p in sorted((HERE / split).glob("*.jsonl")))
    if not refresh_generated(PACKAGED, packaged, check_only=check_only):
        stale.append(str(PACKAGED))
    print(f"TOTAL {dict(totals)}; negative share {totals['negatives'] / max(totals['records'], 1):.2f}; "
          f"distinct trigger forms {len(triggers)}")
    if stale:
        print("stale outputs (run build_demo.py):", *stale, sep="\n  ")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
