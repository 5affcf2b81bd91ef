"""The machine-readable report: one JSON document per run, its schema versioned.

``report.json`` holds only what the data, config, seed and library versions
determine (no timings, no clock), so the same run gives byte-identical files;
``run-info.json`` holds the timings and the time of the run. The schema is
described in ``docs/reports.md``; any change to its meaning bumps
``SCHEMA_VERSION``.
"""

from __future__ import annotations

import json
import platform
import time
from pathlib import Path
from typing import TYPE_CHECKING, Any, Sequence

from trainer.corpus.reader import fingerprint
from trainer.evaluation.bootstrap import interval_warning
from trainer.evaluation.summary import RunSummary, SystemSummary
from trainer.models.persist import library_versions
from trainer.outputs import write_text

if TYPE_CHECKING:  # only named in hints (see trainer.evaluation.summary)
    from trainer.evaluation.runs import CrossvalRun

SCHEMA = "itinerant.evaluation-report"
SCHEMA_VERSION = 2


def _rounded(pair: tuple[float, float]) -> list[float]:
    return [round(pair[0], 6), round(pair[1], 6)]


def system_to_dict(system: SystemSummary, config: dict[str, Any]) -> dict[str, Any]:
    return {
        "name": system.name,
        "config": config,
        "scores": system.scores.to_dict(),
        "gold_trigger_scores": system.gold_trigger_scores.to_dict(),
        "intervals": {name: _rounded(pair) for name, pair in system.intervals.items()},
        "interval_docs": system.interval_docs,
        "interval_warning": interval_warning(system.interval_docs),
        "fold_f1": system.fold_f1,
        **system.breakdown,
        **{key: system.confidence[key] for key in ("calibration", "thresholds") if key in system.confidence},
        "errors": system.errors.to_dict(),
        "predictions": f"predictions/{system.name}.jsonl",
        "predictions_gold_triggers": f"predictions/{system.name}.gold-triggers.jsonl",
    }


def report_dict(run: CrossvalRun, summary: RunSummary, *, corpus_files: Sequence[str],
                learning_curve: dict[str, Any] | None = None) -> dict[str, Any]:
    """The report as plain data, keys in a fixed order."""
    configs = {s.name: s.config for s in run.systems}
    roles = list(run.systems[0].config.roles)
    return {
        "schema": SCHEMA,
        "schema_version": SCHEMA_VERSION,
        "corpus": {
            "files": list(corpus_files),
            "fingerprint": fingerprint(run.records),
            "records": len(run.records),
            "docs": len({r.doc for r in run.records}),
        },
        "roles": roles,
        "settings": summary.settings.to_dict(),
        "fold_plan_fingerprint": plan_fingerprint(run),
        "folds": [plan.assignment() for plan in run.plans],
        "versions": library_versions(),
        "systems": [system_to_dict(s, configs[s.name].to_dict()) for s in summary.systems],
        "comparisons": [
            {"a": c.a, "b": c.b,
             "tests": {name: {"difference": round(d, 6), "p_value": round(p, 6),
                              "p_holm": round(c.holm[name], 6) if name in c.holm else None}
                       for name, (d, p) in c.tests.items()}}
            for c in summary.comparisons
        ],
        "learning_curve": learning_curve,
    }


def plan_fingerprint(run: CrossvalRun) -> str:
    """A short digest of the fold assignment, so reports on different folds are told apart."""
    import hashlib

    data = json.dumps([plan.assignment() for plan in run.plans], sort_keys=True)
    return hashlib.sha256(data.encode("utf-8")).hexdigest()[:16]


def run_info(run: CrossvalRun, summary: RunSummary, seconds: float) -> dict[str, Any]:
    """What varies between identical runs: clock, machine and timings."""
    return {
        "created": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
        "machine": {"python": platform.python_version(), "platform": platform.platform(), "processor": platform.machine()},
        "seconds": {"total": round(seconds, 2), "parse": round(run.parse_seconds, 2),
                    **{s.name: s.timings for s in summary.systems}},
        "parsed": run.parsed,
        "parsed_from_cache": run.cached,
    }


def dump_json(data: dict[str, Any], path: Path) -> None:
    """Write JSON deterministically: fixed indentation, UTF-8, trailing newline."""
    write_text(path, json.dumps(data, indent=2, ensure_ascii=False) + "\n")
