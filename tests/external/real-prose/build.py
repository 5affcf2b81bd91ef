"""Compile the real-prose evaluation corpus from its inline-markup sources and print counts.

Each ``source/<book>.txt`` holds sentences copied word for word from one
public-domain travel narrative (``SOURCES.md`` names the book, edition,
chapters and where the text was read), annotated by hand in inline markup
(``trainer/corpus/convert/inline.py``). This script writes one canonical
JSONL file per book into ``corpus/``:

    python tests/external/real-prose/build.py            # write and summarise
    python tests/external/real-prose/build.py --check    # fail if outputs are stale
"""

from __future__ import annotations

import sys
from collections import Counter
from pathlib import Path

from trainer.corpus.convert.inline import read_inline
from trainer.corpus.jsonl import dumps_record
from trainer.outputs import refresh_generated

HERE = Path(__file__).resolve().parent


def main(argv: list[str]) -> int:
    check_only = "--check" in argv
    stale = []
    totals: Counter[str] = Counter()
    for source in sorted((HERE / "source").glob("*.txt")):
        records = read_inline(source)
        target = HERE / "corpus" / f"{source.stem}.jsonl"
        if not refresh_generated(target, "".join(dumps_record(r) + "\n" for r in records), check_only=check_only):
            stale.append(str(target))
        with_events = sum(1 for r in records if r.events)
        events = [e for r in records for e in r.events]
        roles = Counter(role.role for e in events for role in e.roles)
        totals.update(records=len(records), with_events=with_events, events=len(events), **roles)
        print(f"{source.stem:22} records={len(records):4} with_events={with_events:4} events={len(events):4} {dict(roles)}")
    print(f"TOTAL {dict(totals)}; share with events {totals['with_events'] / max(totals['records'], 1):.2f}")
    if stale:
        print("stale outputs (run build.py):", *stale, sep="\n  ")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
