"""The Markdown summary: short tables that read well in a terminal or a CI log."""

from __future__ import annotations

from typing import Any


def _f(value: float) -> str:
    return f"{value:.3f}"


def _ci(pair: list[float]) -> str:
    return f"[{pair[0]:.3f}, {pair[1]:.3f}]"


def system_table(system: dict[str, Any], roles: list[str]) -> list[str]:
    """Per-role, micro, trigger and macro rows; the fold spread column only when folds were run."""
    scores, ci = system["scores"], system["intervals"]
    folds = system.get("fold_f1", {})
    lines = [
        "| score | precision | recall | F1 | 95% CI | fold mean ± sd | gold | predicted |",
        "|---|---:|---:|---:|---|---|---:|---:|",
    ]
    rows = [(r, scores["roles"][r], r) for r in roles] + [("**micro**", scores["micro"], "micro"),
                                                          ("trigger", scores["trigger"], "trigger")]
    for label, s, key in rows:
        spread = f"{folds[key]['mean']:.3f} ± {folds[key]['std']:.3f}" if key in folds else ""
        lines.append(f"| {label} | {_f(s['precision'])} | {_f(s['recall'])} | {_f(s['f1'])} | {_ci(ci[key])} | "
                     f"{spread} | {s['gold']} | {s['predicted']} |")
    macro = scores["macro"]
    spread = f"{folds['macro']['mean']:.3f} ± {folds['macro']['std']:.3f}" if "macro" in folds else ""
    lines.append(f"| macro | {_f(macro['precision'])} | {_f(macro['recall'])} | {_f(macro['f1'])} | {_ci(ci['macro'])} "
                 f"| {spread} | | |")
    return lines


def extrapolation_lines(extrapolation: dict[str, Any] | None) -> list[str]:
    """Estimated F1 at larger training sizes, with the fit's verdict said plainly."""
    if not extrapolation:
        return []
    out = ["", f"Estimated micro F1 with more annotation (fit: {extrapolation['model']}):", ""]
    for name, fit in extrapolation["systems"].items():
        for e in fit["estimates"]:
            if e["f1"] is None:
                continue
            interval = "" if e["low"] is None else f" [{e['low']:.3f}, {e['high']:.3f}]"
            out.append(f"- {name}: {e['train_records']:g} records ({e['factor']:g}x): {e['f1']:.3f}{interval}")
        verdict = "reliable" if fit["reliable"] else "UNRELIABLE: " + "; ".join(fit["reasons"])
        out.append(f"- {name}: the fit is {verdict}")
    return out


def score_markdown(report: dict[str, Any]) -> str:
    """The result of scoring one prediction file against gold."""
    roles = list(report["scores"]["roles"])
    settings = report["settings"]
    counts = report["errors"]["counts"]
    out = [f"# Scores of {report['predictions']['file']} against {report['gold']['file']}", "",
           f"Scoring: **{settings['mode']}** match; {report['scores']['records']} annotated gold records; intervals: "
           f"{settings['bootstrap_samples']} bootstrap samples by {settings['bootstrap_unit']}, seed {settings['seed']}.", ""]
    out += system_table(report, roles)
    out += ["", "Errors: " + ", ".join(f"{k.replace('_', ' ')} {v}" for k, v in counts.items() if k != "correct")]
    out += [f"- note: {note}" for note in report["scores"]["undefined"]]
    return "\n".join(out) + "\n"


def markdown_summary(report: dict[str, Any]) -> str:
    """The whole run as Markdown: settings, one table per config, comparisons, error counts."""
    settings, roles = report["settings"], report["roles"]
    corpus = report["corpus"]
    folds = report["folds"]
    out = [
        "# itinerant evaluation",
        "",
        f"Corpus: {corpus['records']} annotated records in {corpus['docs']} docs (fingerprint `{corpus['fingerprint'][:12]}`). "
        f"Folds: {folds[0]['kind']}, {len(folds[0]['folds'])} fold(s) x {len(folds)} repeat(s), grouped by doc. "
        f"Scoring: **{settings['mode']}** match; intervals: {settings['bootstrap_samples']} bootstrap samples "
        f"by {settings['bootstrap_unit']}, seed {settings['seed']}.",
    ]
    for system in report["systems"]:
        given = system["gold_trigger_scores"]
        out += ["", f"## {system['name']}", ""]
        out += system_table(system, roles)
        per_role = ", ".join(f"{r} {_f(given['roles'][r]['f1'])}" for r in roles)
        out += ["", f"Roles given gold triggers: micro F1 {_f(given['micro']['f1'])} ({per_role}). "
                    f"Roles ignoring the trigger link: micro F1 {_f(system['scores']['unlinked_micro']['f1'])}."]
        counts = system["errors"]["counts"]
        out += ["", "Errors: " + ", ".join(f"{k.replace('_', ' ')} {v}" for k, v in counts.items() if k != "correct")]
        for note in system["scores"]["undefined"]:
            out.append(f"- note: {note}")
    if report["comparisons"]:
        out += ["", "## Paired comparisons (approximate randomization by document)", "",
                "| A | B | score | F1(A) − F1(B) | p |", "|---|---|---|---:|---:|"]
        for comparison in report["comparisons"]:
            for name in ["micro", *roles, "trigger"]:
                test = comparison["tests"][name]
                out.append(f"| {comparison['a']} | {comparison['b']} | {name} | {test['difference']:+.3f} | {test['p_value']:.4f} |")
    curve = report.get("learning_curve")
    if curve:
        out += ["", "## Learning curve (pooled micro F1 by share of training docs)", "",
                "| config | " + " | ".join(f"{s:.0%}" for s in curve["shares"]) + " |",
                "|---|" + "---:|" * len(curve["shares"])]
        for name, points in curve["systems"].items():
            out.append(f"| {name} | " + " | ".join(_f(p["f1"]["micro"]) for p in points) + " |")
        out += extrapolation_lines(curve.get("extrapolation"))
    return "\n".join(out) + "\n"
