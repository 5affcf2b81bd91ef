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
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from trainer.config import GateConfig
from trainer.errors import ItinerantError

BASELINE_SCHEMA = "itinerant.gate-baseline"
BASELINE_VERSION = 1
PASS, REGRESSION, IMPROVED = "pass", "regression", "improved"


class GateInputError(ItinerantError):
    """A report or baseline that cannot be compared (exit code 2)."""

    exit_code = 2


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
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise GateInputError(f"{path}: no such {what}", "check the path") from None
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
    systems = report.get("systems") or []
    for system in systems:
        if name is None or system.get("name") == name:
            return system
    raise GateInputError(f"no config named {name!r} in the report", f"choose from: {[s.get('name') for s in systems]}")


def baseline_from_report(report: dict[str, Any], *, system: str | None, scores: list[str]) -> dict[str, Any]:
    """The baseline record of one config of a report."""
    chosen = pick_system(report, system)
    f1s = _f1s(chosen)
    missing = [s for s in scores if s not in f1s]
    if missing:
        raise GateInputError(f"the report has no score(s) {missing}", f"gate some of: {', '.join(f1s)}")
    return {
        "schema": BASELINE_SCHEMA,
        "schema_version": BASELINE_VERSION,
        "system": chosen["name"],
        "fingerprints": fingerprints(report),
        "f1": {s: f1s[s] for s in scores},
        "intervals": {s: chosen["intervals"][s] for s in scores},
    }


def _f1s(system: dict[str, Any]) -> dict[str, float]:
    scores = system["scores"]
    out = {role: values["f1"] for role, values in scores["roles"].items()}
    out.update(micro=scores["micro"]["f1"], macro=scores["macro"]["f1"], trigger=scores["trigger"]["f1"])
    return out


def check_baseline(baseline: dict[str, Any]) -> None:
    if baseline.get("schema") != BASELINE_SCHEMA or baseline.get("schema_version") != BASELINE_VERSION:
        raise GateInputError(f"not a gate baseline of version {BASELINE_VERSION} (schema {baseline.get('schema')!r}, "
                             f"version {baseline.get('schema_version')!r})", "record one with `itinerant gate ... --accept`")


def compare(report: dict[str, Any], baseline: dict[str, Any], config: GateConfig, *,
            allow_mismatch: bool = False) -> GateResult:
    """A verdict per gated score; refuses different fingerprints unless ``allow_mismatch``."""
    check_baseline(baseline)
    now_prints, base_prints = fingerprints(report), baseline["fingerprints"]
    mismatches = [f"{key}: baseline {base_prints.get(key)!r}, report {value!r}"
                  for key, value in now_prints.items() if base_prints.get(key) != value]
    if mismatches and not allow_mismatch:
        raise GateInputError("the report and the baseline were made on different " + "; ".join(mismatches),
                             "compare like with like, re-record the baseline with --accept after an intended change, "
                             "or pass --allow-mismatch")
    f1s = _f1s(pick_system(report, baseline["system"]))
    verdicts = []
    for score, before in baseline["f1"].items():
        if score not in f1s:
            raise GateInputError(f"the report has no score {score!r}", "gate a report with the same roles")
        tolerance = config.role_tolerances.get(score, config.tolerance)
        floor = before - tolerance if config.rule == "drop" else baseline["intervals"][score][0] - tolerance
        now = f1s[score]
        verdict = REGRESSION if now < floor - 1e-12 else IMPROVED if now > before + tolerance else PASS
        verdicts.append(Verdict(score, before, now, round(before - floor, 6), round(floor, 6), verdict))
    return GateResult(baseline["system"], config.rule, verdicts, mismatches)


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

    recorded = pick_system(report, system).get("config", {})
    return config_from_dict({"gate": recorded.get("gate", {})}, "the report's config").gate


def accept_baseline(report_path: Path, baseline_path: Path, *, system: str | None, config: GateConfig) -> dict[str, Any]:
    """Record a report's scores as the new baseline (after an intended change)."""
    baseline = baseline_from_report(load_report(report_path), system=system, scores=config.scores)
    baseline_path.parent.mkdir(parents=True, exist_ok=True)
    baseline_path.write_text(json.dumps(baseline, indent=2) + "\n", encoding="utf-8")
    return baseline
