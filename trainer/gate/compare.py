"""Comparing an evaluation report with a baseline, score by score.

A baseline is a small JSON file cut from an evaluation report: the F1 and
bootstrap interval of each gated score for one config, plus fingerprints of
what the numbers depend on (corpus, roles, scoring mode, fold plan). The gate
refuses to compare numbers whose fingerprints differ unless told to.

Rules: ``drop`` fails a score whose F1 fell by more than its tolerance;
``interval`` fails a score whose F1 fell below the lower end of the
baseline's bootstrap interval (minus the tolerance).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from trainer.config import GateConfig
from trainer.errors import GateInputError, opening
from trainer.outputs import check_output, write_text

BASELINE_SCHEMA = "itinerant.gate-baseline"
BASELINE_VERSION = 1
PASS, REGRESSION, IMPROVED = "pass", "regression", "improved"


@dataclass
class Verdict:
    score: str
    baseline: float
    now: float
    allowed_drop: float
    floor: float
    verdict: str

    @property
    def change(self) -> float:
        return self.now - self.baseline


@dataclass
class GateResult:
    system: str
    rule: str
    verdicts: list[Verdict]
    mismatches: list[str] = field(default_factory=list)

    @property
    def passed(self) -> bool:
        return all(v.verdict != REGRESSION for v in self.verdicts)

    @property
    def regressions(self) -> list[str]:
        return [v.score for v in self.verdicts if v.verdict == REGRESSION]


def read_json(path: Path, what: str) -> dict[str, Any]:
    try:
        with opening(path, expected="the JSON file", what=what, error=GateInputError):
            text = Path(path).read_text(encoding="utf-8")
        data = json.loads(text)
    except RecursionError:
        raise GateInputError(f"{path}: nested too deeply to be a {what}", f"regenerate the {what}") from None
    except ValueError as exc:
        raise GateInputError(f"{path}: not valid JSON ({exc})", f"regenerate the {what}") from None
    if not isinstance(data, dict):
        raise GateInputError(f"{path}: not a {what} (expected a JSON object)", f"regenerate the {what}")
    return data


def fingerprints(report: dict[str, Any]) -> dict[str, Any]:
    """What a report's numbers depend on; two reports are comparable when these agree."""
    try:
        return {
            "corpus": report["corpus"]["fingerprint"],
            "roles": list(report["roles"]),
            "mode": report["settings"]["mode"],
            "folds": report["fold_plan_fingerprint"],
        }
    except (KeyError, TypeError):
        raise GateInputError("the report lacks corpus, roles, settings or fold plan fields",
                             "gate a report.json written by `itinerant crossval`") from None


def pick_system(report: dict[str, Any], name: str | None) -> dict[str, Any]:
    systems = report.get("systems")
    if not isinstance(systems, list) or not systems or not all(isinstance(s, dict) for s in systems):
        raise GateInputError("the report has no list of configs ('systems')", "gate a report.json written by `itinerant crossval`")
    for system in systems:
        if name is None or system.get("name") == name:
            return system
    raise GateInputError(f"no config named {name!r} in the report", f"choose from: {[s.get('name') for s in systems]}")


def score_value(value: Any, field: str, what: str) -> float:
    """A finite number, or a :class:`GateInputError` naming the field."""
    if value is None:
        raise GateInputError(f"the {what} has no value for '{field}'", f"regenerate the {what}")
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise GateInputError(f"the {what}'s '{field}' is not a number: {json.dumps(value)[:60]}", f"regenerate the {what}")
    if not math.isfinite(value):
        raise GateInputError(f"the {what}'s '{field}' is {value}, not a finite number", f"regenerate the {what}")
    return float(value)


def _get(data: Any, path: tuple[str, ...]) -> Any:
    for key in path:
        data = data.get(key) if isinstance(data, dict) else None
    return data


def baseline_from_report(report: dict[str, Any], *, system: str | None, scores: list[str]) -> dict[str, Any]:
    """The baseline record of one config of a report."""
    chosen = pick_system(report, system)
    f1s = system_f1s(chosen)
    missing = [s for s in scores if s not in f1s]
    if missing:
        raise GateInputError(f"the report has no score(s) {missing}", f"gate some of: {', '.join(f1s)}")
    return {
        "schema": BASELINE_SCHEMA,
        "schema_version": BASELINE_VERSION,
        "system": chosen["name"],
        "fingerprints": fingerprints(report),
        "f1": {s: f1s[s] for s in scores},
        "intervals": {s: _interval(chosen, s) for s in scores},
    }


def _interval(system: dict[str, Any], score: str) -> list[float]:
    where = f"systems[{system.get('name')!r}].intervals.{score}"
    interval = _get(system, ("intervals", score))
    if not (isinstance(interval, list) and len(interval) == 2):
        raise GateInputError(f"the evaluation report's '{where}' is not a [low, high] pair", "regenerate the report")
    return [score_value(end, f"{where}[{i}]", "evaluation report") for i, end in enumerate(interval)]


def system_f1s(system: dict[str, Any]) -> dict[str, float]:
    """Every F1 of one config of a report, each checked to be a finite number."""
    where = f"systems[{system.get('name')!r}].scores"
    roles = _get(system, ("scores", "roles"))
    if not isinstance(roles, dict):
        raise GateInputError(f"the evaluation report has no '{where}.roles' object", "gate a report.json written by `itinerant crossval`")
    paths = {**{role: ("roles", role, "f1") for role in roles}, **{k: (k, "f1") for k in ("micro", "macro", "trigger")}}
    return {name: score_value(_get(system["scores"], path), f"{where}.{'.'.join(path)}", "evaluation report")
            for name, path in paths.items()}


def check_baseline_scores(baseline: dict[str, Any], required: list[str]) -> None:
    """Every required score has a finite F1 and a two-number interval in the baseline."""
    f1, intervals = baseline.get("f1"), baseline.get("intervals")
    if not isinstance(f1, dict) or not isinstance(intervals, dict):
        raise GateInputError("the baseline has no 'f1' and 'intervals' objects", "record one with `itinerant gate ... --accept`")
    missing = [s for s in required if s not in f1]
    if missing or not f1:
        raise GateInputError(f"the baseline has no F1 for required score(s) {missing or required}",
                             "re-record the baseline with --accept, or change [gate] scores")
    for name, value in f1.items():
        score_value(value, f"f1.{name}", "baseline")
        interval = intervals.get(name)
        if not (isinstance(interval, list) and len(interval) == 2):
            raise GateInputError(f"the baseline's 'intervals.{name}' is not a [low, high] pair", "re-record the baseline with --accept")
        for i, end in enumerate(interval):
            score_value(end, f"intervals.{name}[{i}]", "baseline")


def check_baseline(baseline: dict[str, Any]) -> None:
    if baseline.get("schema") != BASELINE_SCHEMA or baseline.get("schema_version") != BASELINE_VERSION:
        raise GateInputError(f"not a gate baseline of version {BASELINE_VERSION} (schema {baseline.get('schema')!r}, "
                             f"version {baseline.get('schema_version')!r})", "record one with `itinerant gate ... --accept`")
    if not isinstance(baseline.get("system"), str) or not isinstance(baseline.get("fingerprints"), dict):
        raise GateInputError("the baseline lacks its 'system' name or its 'fingerprints'", "record one with `itinerant gate ... --accept`")


def compare(report: dict[str, Any], baseline: dict[str, Any], config: GateConfig, *,
            allow_mismatch: bool = False, system: str | None = None) -> GateResult:
    """A verdict per gated score; refuses different fingerprints unless ``allow_mismatch``.

    ``system`` picks the report's config to gate (default: the one the baseline was cut from).
    Every score of ``config.scores`` must be in both, as a finite number.
    """
    check_baseline(baseline)
    check_baseline_scores(baseline, config.scores)
    now_prints, base_prints = fingerprints(report), baseline["fingerprints"]
    mismatches = [f"{key}: baseline {base_prints.get(key)!r}, report {value!r}"
                  for key, value in now_prints.items() if base_prints.get(key) != value]
    if mismatches and not allow_mismatch:
        raise GateInputError("the report and the baseline were made on different " + "; ".join(mismatches),
                             "compare like with like, re-record the baseline with --accept after an intended change, "
                             "or pass --allow-mismatch")
    gated = system or baseline["system"]
    f1s = system_f1s(pick_system(report, gated))
    verdicts = []
    for score, before in baseline["f1"].items():
        if score not in f1s:
            raise GateInputError(f"the report has no score {score!r} for config {gated!r}", "gate a report with the same roles")
        tolerance = config.role_tolerances.get(score, config.tolerance)
        floor = before - tolerance if config.rule == "drop" else baseline["intervals"][score][0] - tolerance
        now = f1s[score]
        verdict = REGRESSION if now < floor - 1e-12 else IMPROVED if now > before + tolerance else PASS
        verdicts.append(Verdict(score, before, now, round(before - floor, 6), round(floor, 6), verdict))
    return GateResult(gated, config.rule, verdicts, mismatches)


def markdown_table(result: GateResult) -> str:
    """Role, baseline, now, change, verdict: readable at a glance in a CI log."""
    lines = [f"Gate on config `{result.system}` (rule: {result.rule})", "",
             "| score | baseline | now | change | lowest allowed | verdict |", "|---|---:|---:|---:|---:|---|"]
    for v in result.verdicts:
        mark = "**REGRESSION**" if v.verdict == REGRESSION else v.verdict
        lines.append(f"| {v.score} | {v.baseline:.3f} | {v.now:.3f} | {v.change:+.3f} | {v.floor:.3f} | {mark} |")
    lines += [f"- note: compared despite different {m}" for m in result.mismatches]
    lines.append("")
    lines.append("PASSED" if result.passed else f"FAILED: {', '.join(result.regressions)} below the allowed drop")
    return "\n".join(lines) + "\n"


def load_report(path: Path) -> dict[str, Any]:
    """An evaluation report, from its folder or its ``report.json``."""
    path = Path(path)
    return read_json(path / "report.json" if path.is_dir() else path, "evaluation report")


def gate_config_of(report: dict[str, Any], system: str | None) -> GateConfig:
    """The ``[gate]`` settings recorded with the gated config in the report."""
    from trainer.config import config_from_dict

    recorded = pick_system(report, system).get("config")
    gate = recorded.get("gate", {}) if isinstance(recorded, dict) else {}
    if not isinstance(gate, dict):
        raise GateInputError("the report's config has a [gate] section that is not a table", "regenerate the report")
    return config_from_dict({"gate": gate}, "the report's config").gate


def accept_baseline(report_path: Path, baseline_path: Path, *, system: str | None, config: GateConfig) -> dict[str, Any]:
    """Record a report's scores as the new baseline (after an intended change)."""
    report_file = Path(report_path) / "report.json" if Path(report_path).is_dir() else Path(report_path)
    check_output(baseline_path, inputs=[report_path, report_file], what="baseline")
    baseline = baseline_from_report(load_report(report_path), system=system, scores=config.scores)
    write_text(baseline_path, json.dumps(baseline, indent=2) + "\n")
    return baseline
