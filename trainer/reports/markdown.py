"""The Markdown summary: short tables that read well in a terminal or a CI log."""

from __future__ import annotations

from typing import Any

from trainer.evaluation.breakdown import departing_folds, departing_folds_note, fold_name


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


def _modes(group: dict[str, Any]) -> list[str]:
    return [mode for mode in ("exact", "overlap") if mode in group]


def matching_table(system: dict[str, Any], roles: list[str]) -> list[str]:
    """Precision, recall and F1 under exact and overlap matching side by side, per role, micro and trigger."""
    matching = system.get("matching")
    if not matching:
        return []
    modes = _modes(matching)
    lines = ["| score | " + " | ".join(f"{m} P | {m} R | {m} F1" for m in modes) + " |",
             "|---|" + "---:|---:|---:|" * len(modes)]
    for name in [*roles, "micro", "trigger"]:
        cells = []
        for mode in modes:
            s = matching[mode]["roles"].get(name) or matching[mode][name]
            cells += [_f(s["precision"]), _f(s["recall"]), _f(s["f1"])]
        lines.append(f"| {name} | " + " | ".join(cells) + " |")
    return lines


def group_table(label: str, groups: dict[str, dict[str, Any]]) -> list[str]:
    """One row per doc, book or fold: records, gold role instances, micro and trigger F1 in each mode."""
    if not groups:
        return []
    modes = _modes(next(iter(groups.values())))
    lines = [f"| {label} | records | gold | " + " | ".join(f"micro F1 {m} | trigger F1 {m}" for m in modes) + " |",
             "|---|---:|---:|" + "---:|---:|" * len(modes)]
    for name, group in groups.items():
        first = group[modes[0]]
        cells = [c for m in modes for c in (_f(group[m]["micro"]["f1"]), _f(group[m]["trigger"]["f1"]))]
        lines.append(f"| {name} | {first['records']} | {first['micro']['gold']} | " + " | ".join(cells) + " |")
    return lines


def breakdown_lines(system: dict[str, Any], roles: list[str]) -> list[str]:
    """Both matching modes, then scores per book, per doc and per fold, then calibration and thresholds."""
    out: list[str] = []
    if system.get("interval_warning"):
        out += ["", f"- warning: {system['interval_warning']}"]
    if system.get("matching"):
        out += ["", "Exact and overlap matching:", ""] + matching_table(system, roles)
    folds = {fold_name(f): f for f in system.get("per_fold", [])}
    for title, key, groups in (("book", "per_book", None), ("doc", "per_doc", None), ("fold", "per_fold", folds)):
        table = group_table(title, groups if groups is not None else system.get(key, {}))
        if table:
            out += ["", f"Per {title}:", ""] + table
    departing = departing_folds(system.get("per_fold", []))
    if departing:
        out += ["", f"{departing_folds_note(departing, len(folds))} (`[auxiliary] augment_if_conventions_differ`):",
                ""]
        out += [f"- {name}: {'; '.join(found)}" for name, found in departing.items()]
    calibration, thresholds = system.get("calibration"), system.get("thresholds")
    if calibration and not any(c["instances"] for c in calibration.values()):
        out += ["", "Calibration and confidence thresholds: none, the predictions carry no confidences."]
        return out
    if calibration:
        ece = ", ".join(f"{label} {'n/a' if c['ece'] is None else _f(c['ece'])} ({c['instances']})"
                        for label, c in calibration.items())
        out += ["", f"Expected calibration error of held-out confidences (instances): {ece}."]
    best = ", ".join(f"{label} {t['best']['threshold']:.3f} (F1 {_f(t['best']['f1'])})"
                     for label, t in (thresholds or {}).items() if t["best"])
    if best:
        out += ["", f"F1-optimal confidence thresholds on held-out predictions: {best}."]
    return out


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
    missing = report.get("missing_predictions") or {"count": 0, "ids": []}
    if missing["count"]:
        named = ", ".join(missing["ids"][:10]) + (f" and {missing['count'] - 10} more" if missing["count"] > 10 else "")
        out += [f"- warning: {missing['count']} gold record(s) had no prediction and count as missed: {named}", ""]
    out += system_table(report, roles)
    out += breakdown_lines(report, roles)
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
        out += breakdown_lines(system, roles)
    if report["comparisons"]:
        out += ["", "## Paired comparisons (approximate randomization by document)", "",
                "p (Holm): each score's p-values adjusted together over every pair of configs (Holm 1979).", "",
                "| A | B | score | F1(A) − F1(B) | p | p (Holm) |", "|---|---|---|---:|---:|---:|"]
        for comparison in report["comparisons"]:
            for name in ["micro", *roles, "trigger"]:
                test = comparison["tests"][name]
                holm = "" if test.get("p_holm") is None else f"{test['p_holm']:.4f}"
                out.append(f"| {comparison['a']} | {comparison['b']} | {name} | {test['difference']:+.3f} | "
                           f"{test['p_value']:.4f} | {holm} |")
    curve = report.get("learning_curve")
    if curve:
        names = ["micro", *roles, "trigger"]
        out += ["", "## Learning curve (pooled F1 [95% interval] by share of training docs)", ""]
        for name, points in curve["systems"].items():
            out += [f"{name}:", "", "| share | training records | " + " | ".join(names) + " |",
                    "|---:|---:|" + "---|" * len(names)]
            for p in points:
                cells = [_f(p["f1"][n]) + (f" {_ci(p['intervals'][n])}" if n in p.get("intervals", {}) else "")
                         for n in names]
                out.append(f"| {p['share']:.0%} | {p['train_records']:g} | " + " | ".join(cells) + " |")
            out.append("")
        out += sorted({f"- warning: {p['interval_warning']}" for points in curve["systems"].values() for p in points
                       if p.get("interval_warning")})
        out += extrapolation_lines(curve.get("extrapolation"))
    return "\n".join(out) + "\n"
