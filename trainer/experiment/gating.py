"""Gate checks: a cross-validation report against a committed baseline, or a report recorded as the new baseline."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Sequence

from trainer.config import load_config
from trainer.errors import GateInputError
from trainer.gate.compare import (GateResult, accept_baseline, check_baseline, compare, gate_config_of, load_report,
                                  pick_system, read_json, system_f1s)
from trainer.gate.junit import junit_xml
from trainer.outputs import check_output, write_text

GATE_RULES = ("drop", "interval")


@dataclass(frozen=True)
class GateRequest:
    """A gate check's inputs and command-line overrides of the gate settings (``None`` keeps the report's)."""

    report: Path
    baseline: Path
    config: Path | None = None
    system: str | None = None
    rule: str | None = None
    tolerance: float | None = None
    role_tolerances: Sequence[str] = field(default_factory=tuple)  # NAME=NUMBER
    junit: Path | None = None
    allow_mismatch: bool = False
    accept: bool = False

    def __post_init__(self) -> None:  # paths may be given as strings from Python
        for name in ("report", "baseline", "config", "junit"):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, Path(value))


@dataclass
class GateOutcome:
    """Either the comparison (``result``) or the baseline written (``accepted``, with ``--accept``)."""

    result: GateResult | None = None
    accepted: dict[str, Any] | None = None

    @property
    def passed(self) -> bool:
        return self.result is None or self.result.passed


def role_tolerances(items: Sequence[str]) -> dict[str, float]:
    """``NAME=NUMBER`` items as a dict, each tolerance in [0, 1]."""
    out: dict[str, float] = {}
    for item in items:
        name, _, value = item.partition("=")
        try:
            out[name.strip()] = float(value)
        except ValueError:
            raise GateInputError(f"--role-tolerance {item!r} is not NAME=NUMBER", "e.g. --role-tolerance mover=0.03") from None
        if not 0 <= out[name.strip()] <= 1:
            raise GateInputError(f"--role-tolerance {item!r}: the tolerance must lie in [0, 1]", "e.g. --role-tolerance mover=0.03")
    return out


def run_gate(request: GateRequest) -> GateOutcome:
    """Check every output and setting first, then compare (writing JUnit XML when asked) or accept.

    ``--tolerance`` sets the allowed drop of every score, the config's per-score
    tolerances included; ``--role-tolerance`` then sets single scores, each of
    which must be a score of the gated report.
    """
    report_file = request.report / "report.json" if request.report.is_dir() else request.report
    if request.junit:
        check_output(request.junit, inputs=[request.report, report_file, request.baseline], what="JUnit file")
    if request.accept:
        check_output(request.baseline, inputs=[request.report, report_file], what="baseline")
    if request.rule is not None and request.rule not in GATE_RULES:
        raise GateInputError(f"--rule {request.rule!r} is not a gate rule", f"use {' or '.join(GATE_RULES)}")
    if request.tolerance is not None and not 0 <= request.tolerance <= 1:
        raise GateInputError(f"--tolerance {request.tolerance:g}: an allowed F1 drop must lie in [0, 1]",
                             "e.g. --tolerance 0.02")
    overrides = role_tolerances(request.role_tolerances)
    data = load_report(request.report)
    base = None if request.accept else read_json(request.baseline, "baseline")
    if base is not None:
        check_baseline(base)
    system = request.system or (base or {}).get("system")
    known = sorted(base["f1"]) if base is not None and isinstance(base.get("f1"), dict) else sorted(
        system_f1s(pick_system(data, system)))
    unknown = [name for name in overrides if name not in known]
    if unknown:
        raise GateInputError(f"--role-tolerance names no score of the {'baseline' if base is not None else 'report'}: "
                             f"{', '.join(unknown)}", f"choose from: {', '.join(known)}")
    settings = load_config(request.config).gate if request.config else gate_config_of(data, system)
    kept = settings.role_tolerances if request.tolerance is None else {}
    settings = replace(settings, rule=request.rule or settings.rule,
                       tolerance=settings.tolerance if request.tolerance is None else request.tolerance,
                       role_tolerances={**kept, **overrides})
    if request.accept:
        return GateOutcome(accepted=accept_baseline(request.report, request.baseline, system=request.system,
                                                    config=settings))
    result = compare(data, base, settings, allow_mismatch=request.allow_mismatch, system=request.system)
    if request.junit:
        write_text(request.junit, junit_xml(result))
    return GateOutcome(result=result)
