"""The HTML report: one standalone page that opens offline in any browser.

:func:`html_report` reads the report dict of :mod:`trainer.reports.json_report`
(the same numbers as ``report.json`` and ``summary.md``), the gold records and
each config's held-out predictions, and returns the page as a string. The page
needs nothing else: the CSS is inline, the one script (filtering and paging
the sentence list) is inline, the figures of :mod:`trainer.reports.plots` are
embedded as ``data:image/png;base64`` URIs, and every piece of text is
escaped with :func:`html.escape`.

Sections: the run's settings; the figures; per config the score table
(``id="scores-<config>"``), both matching modes, per book, doc and fold,
calibration and thresholds, the roles given gold triggers and the error
analysis; the paired comparisons; the learning curve; and every held-out
sentence (``id="sentences"``), gold and predicted spans highlighted,
filterable by config, doc, role and error kind, in pages.

Highlighting: the text is cut at every span boundary, so a piece covered by
several spans (a trigger inside a path, two roles on the same words) is one
``<mark>`` with all their classes: ``trigger``, ``role-<role>``, and on a
config's line ``match`` (every span covering it is a gold span of the same
kind and the same characters) or ``nomatch``. The link between an argument
and its trigger is not drawn; the score tables count it.
"""

from __future__ import annotations

import base64
import html
import json
import re
from dataclasses import dataclass
from typing import Any, Iterable, Mapping, Sequence

from trainer.corpus.records import Record
from trainer.evaluation.breakdown import departing_folds, departing_folds_note, fold_name
from trainer.evaluation.error_analysis import classify_record
from trainer.reports.plots import learning_curve_plot, precision_recall_plot, reliability_plot, role_f1_plot

PAGE_SIZE = 50
TRIGGER = "trigger"
NONE = "none"
SIGNIFICANT = 0.05

# Background colours of role marks; roles beyond these take EXTRA_COLOURS in report order. Our own tints
# (mixed with white) of the Okabe-Ito colour-universal-design hues, chosen so the four stay apart under
# simulated deuteranomaly, protanomaly and tritanomaly and black text on them keeps a contrast above 9:1
# (tests/reports/test_html.py measures both).
ROLE_COLOURS = {"mover": "#f8e2b2", "source": "#b3ddf5", "path": "#66c5ab", "destination": "#e69e66"}
EXTRA_COLOURS = ("#f6ef9e", "#e8c3d7", "#b3d5e8", "#d9d9d9", "#c6e8de", "#f2cfb3")

KIND_NOTES = {
    "correct": "same trigger, role and argument",
    "boundary": "same trigger and role, the argument overlaps but differs",
    "wrong_role": "same trigger and argument, another role",
    "wrong_trigger_link": "same role and argument, attached to another trigger",
    "missed": "a gold instance with no prediction left to pair it with",
    "spurious": "a prediction with no gold instance left to pair it with",
}

CSS = """
:root { --ink: #23262a; --muted: #62676e; --rule: #d7dbe0; --band: #f4f6f8; --good: #0072b2; --bad: #c85a00; }
* { box-sizing: border-box; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
       color: var(--ink); margin: 0; background: #fff; }
main { max-width: 1180px; margin: 0 auto; padding: 1.5rem 1.5rem 4rem; }
h1 { font-size: 1.6rem; margin: 0 0 .4rem; }
h2 { font-size: 1.3rem; margin: 2.2rem 0 .6rem; padding-bottom: .25rem; border-bottom: 2px solid var(--rule); }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
p, ul { margin: .4rem 0; }
.muted, .note { color: var(--muted); }
.note { font-size: .9em; }
nav { margin: .6rem 0 0; font-size: .95em; }
nav a { margin-right: .9rem; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: .15rem 1rem; margin: .6rem 0; }
dl.facts dt { font-weight: 600; }
dl.facts dd { margin: 0; }
code { font-size: .92em; background: var(--band); padding: 0 .2em; border-radius: 3px; }
table { border-collapse: collapse; margin: .4rem 0 .8rem; font-variant-numeric: tabular-nums; }
th, td { padding: .22rem .6rem; border-bottom: 1px solid var(--rule); text-align: left; vertical-align: top; }
thead th { border-bottom: 2px solid #b4bac1; background: var(--band); font-weight: 600; }
td.num, th.num { text-align: right; white-space: nowrap; }
tr.pooled td, tr.pooled th { background: #fafbfc; }
tr.first-pooled td, tr.first-pooled th { border-top: 2px solid #b4bac1; }
td.diag { font-weight: 700; background: #e3eff7; }
td.off { background: #fbede3; }
td.zero { color: #c3c8ce; }
td.significant { font-weight: 700; }
.tables { display: flex; flex-wrap: wrap; gap: 0 2rem; align-items: flex-start; }
.tables h3 { font-size: .98rem; }
figure { margin: .8rem 0; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { color: var(--muted); font-size: .9em; }
section.config { border-left: 4px solid var(--rule); padding-left: 1rem; margin-top: 1.6rem; }
table.examples td.text { max-width: 34rem; }
mark { color: inherit; padding: 0 1px; border-radius: 2px; }
mark.trigger { font-weight: 700; background: #d7dbe0; text-decoration: underline 2px; text-underline-offset: 3px; }
mark.match { outline: 2px solid var(--good); outline-offset: -1px; }
mark.nomatch { outline: 2px dashed var(--bad); outline-offset: -1px; }
mark.missed { background: none; outline: 2px dotted var(--bad); outline-offset: -1px; }
.legend { display: flex; flex-wrap: wrap; gap: .3rem 1.2rem; margin: .6rem 0; padding: .5rem .8rem;
          background: var(--band); border-radius: 4px; }
.legend span { white-space: nowrap; }
ol.sentences { list-style: none; padding: 0; margin: .6rem 0; }
ol.sentences > li { padding: .5rem 0 .6rem; border-bottom: 1px solid var(--rule); }
.sid { font-size: .85em; color: var(--muted); margin-bottom: .2rem; }
.lines { display: grid; grid-template-columns: 6.5rem minmax(0, 1fr) 11rem; gap: .25rem .8rem; align-items: baseline; }
.lines .who { font-size: .85em; font-weight: 600; color: var(--muted); text-align: right; }
.lines .text { line-height: 1.9; }
.lines .tally { font-size: .85em; color: var(--muted); }
.lines .tally span { white-space: nowrap; }
.lines .tally .bad { color: var(--bad); font-weight: 600; }
.lines .tally .good { color: var(--good); font-weight: 600; }
.missed-list { font-size: .88em; line-height: 1.9; }
.missed-list::before { content: "missed: "; color: var(--bad); font-weight: 600; }
form.filters { display: flex; flex-wrap: wrap; gap: .4rem 1rem; align-items: center; margin: .6rem 0;
                padding: .5rem .8rem; border: 1px solid var(--rule); border-radius: 4px; }
form.filters select, form.filters button { font: inherit; }
p.warning { background: #fbede3; border-left: 4px solid var(--bad); padding: .35rem .7rem; }
details.breakdown summary { cursor: pointer; font-weight: 600; margin: .4rem 0; }
"""


# ---------------------------------------------------------------- small helpers


def _e(value: object) -> str:
    """Text or attribute value, escaped (``&``, ``<``, ``>``, both quotes)."""
    return html.escape(str(value), quote=True)


def css_name(name: str) -> str:
    """A name usable in a class or id: characters other than letters, digits, ``-`` and ``_`` become ``-``."""
    return re.sub(r"[^A-Za-z0-9_-]", "-", name)


def _f(value: float) -> str:
    return f"{value:.3f}"


def _interval(pair: Sequence[float] | None) -> str:
    return f"{pair[0]:.3f} – {pair[1]:.3f}" if pair else ""


def _spread(fold: Mapping[str, Any] | None) -> str:
    return f"{fold['mean']:.3f} ± {fold['std']:.3f}" if fold else ""


def role_colours(roles: Sequence[str]) -> dict[str, str]:
    """The mark colour of each role: ours for the four default roles, :data:`EXTRA_COLOURS` in turn for others."""
    others = [role for role in roles if role not in ROLE_COLOURS]
    return {role: ROLE_COLOURS.get(role) or EXTRA_COLOURS[others.index(role) % len(EXTRA_COLOURS)] for role in roles}


def _role_css(roles: Sequence[str]) -> str:
    colours = role_colours(roles)
    lines = [f":root {{ {' '.join(f'--role-{css_name(r)}: {c};' for r, c in colours.items())} }}"]
    lines += [f"mark.role-{css_name(r)} {{ background: var(--role-{css_name(r)}); }}" for r in roles]
    return "\n".join(lines)


def png_data_uri(png: bytes) -> str:
    """A ``data:`` URI holding PNG bytes (base64)."""
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


def _table(head: Sequence[tuple[str, bool]], rows: Iterable[str], *, attrs: str = "") -> str:
    """A table: ``head`` is ``(label, numeric)`` pairs, ``rows`` ready ``<tr>`` strings."""
    cells = "".join(f'<th class="num">{_e(label)}</th>' if numeric else f"<th>{_e(label)}</th>" for label, numeric in head)
    return f"<table{attrs}><thead><tr>{cells}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def _row(label: str, cells: Sequence[str], *, numeric: Sequence[bool], css: str = "") -> str:
    klass = f' class="{css}"' if css else ""
    tds = "".join(f'<td class="num">{_e(c)}</td>' if n else f"<td>{_e(c)}</td>" for c, n in zip(cells, numeric))
    return f"<tr{klass}><th>{_e(label)}</th>{tds}</tr>"


# ---------------------------------------------------------------- run settings and figures


def header_section(report: dict[str, Any]) -> str:
    """Title, navigation and what the run was: corpus, folds, scoring mode, intervals, seed, versions."""
    corpus, settings, plans = report["corpus"], report["settings"], report["folds"]
    folds = f"{plans[0]['kind']}, {len(plans[0]['folds'])} fold(s) × {len(plans)} repeat(s), docs never split" if plans else "none"
    links = [f'<a href="#config-{_e(css_name(s["name"]))}">{_e(s["name"])}</a>' for s in report["systems"]]
    if report["comparisons"]:
        links.append('<a href="#comparisons">comparisons</a>')
    if report.get("learning_curve"):
        links.append('<a href="#learning-curve">learning curve</a>')
    links.append('<a href="#sentences">held-out sentences</a>')
    versions = ", ".join(f"{name} {version}" for name, version in report.get("versions", {}).items())
    facts = [
        ("Corpus", f"{corpus['records']} annotated records in {corpus['docs']} docs from "
                   f"{', '.join(corpus['files'])} (fingerprint {corpus['fingerprint'][:12]})"),
        ("Folds", f"{folds} (plan {report.get('fold_plan_fingerprint', '')})"),
        ("Scoring", f"{settings['mode']} match; roles: {', '.join(report['roles'])}"),
        ("Intervals", f"{settings['confidence']:.0%} percentile bootstrap, {settings['bootstrap_samples']} samples "
                      f"by {settings['bootstrap_unit']}"),
        ("Comparisons", f"paired approximate randomization by doc, {settings['trials']} trials"),
        ("Seed", str(settings["seed"])),
        ("Versions", versions),
    ]
    body = "".join(f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in facts)
    return (f"<header><h1>itinerant evaluation report</h1>"
            f"<p class=\"muted\">Held-out scores of {len(report['systems'])} config(s), "
            f"schema {_e(report['schema'])} v{_e(report['schema_version'])}.</p>"
            f"<nav>{' '.join(links)}</nav><dl class=\"facts\">{body}</dl></header>")


def figures_section(report: dict[str, Any]) -> str:
    """The F1 figure with interval whiskers for every config."""
    uri = png_data_uri(role_f1_plot(report))
    return ('<section id="figures"><h2>F1 at a glance</h2><figure>'
            f'<img src="{uri}" alt="F1 per role, micro and trigger for each config, with 95% interval whiskers">'
            "<figcaption>Pooled held-out F1 per role, micro and trigger; whiskers are the bootstrap intervals "
            "of the tables below.</figcaption></figure></section>")


# ---------------------------------------------------------------- one config


def score_table(report: dict[str, Any], system: dict[str, Any]) -> str:
    """Per-role precision, recall, F1, interval, fold spread and counts; then micro, macro, trigger, unlinked micro."""
    scores, intervals, folds = system["scores"], system["intervals"], system["fold_f1"]
    numeric = [True] * 7
    rows = []
    named = [(role, scores["roles"][role], role, "") for role in report["roles"]]
    named += [("micro", scores["micro"], "micro", "pooled first-pooled"), ("macro", scores["macro"], "macro", "pooled"),
              ("trigger", scores["trigger"], "trigger", "pooled")]
    if "unlinked_micro" in scores:
        named.append(("micro, trigger link ignored", scores["unlinked_micro"], "unlinked:micro", "pooled"))
    for label, s, key, css in named:
        cells = [_f(s["precision"]), _f(s["recall"]), _f(s["f1"]), _interval(intervals.get(key)),
                 _spread(folds.get(key)), str(s.get("gold", "")), str(s.get("predicted", ""))]
        rows.append(_row(label, cells, numeric=numeric, css=css))
    head = [("score", False), ("precision", True), ("recall", True), ("F1", True),
            (f"{report['settings']['confidence']:.0%} CI", True), ("fold mean ± sd", True), ("gold", True),
            ("predicted", True)]
    return _table(head, rows, attrs=f' id="scores-{_e(css_name(system["name"]))}" class="scores"')


def gold_trigger_table(report: dict[str, Any], system: dict[str, Any]) -> str:
    """Role scores when the gold triggers are given: how well roles are found apart from trigger errors."""
    given = system["gold_trigger_scores"]
    named = [(role, given["roles"][role], "") for role in report["roles"]]
    named += [("micro", given["micro"], "pooled first-pooled"), ("macro", given["macro"], "pooled")]
    rows = [_row(label, [_f(s["precision"]), _f(s["recall"]), _f(s["f1"]), str(s.get("gold", "")),
                         str(s.get("predicted", ""))], numeric=[True] * 5, css=css) for label, s, css in named]
    head = [("score", False), ("precision", True), ("recall", True), ("F1", True), ("gold", True), ("predicted", True)]
    return _table(head, rows, attrs=' class="given"')


def _instance(role: str | None, trigger: str | None, span: str | None) -> str:
    if role is None:
        return "—"
    return f"{role} “{span}” of “{trigger}”"


def error_tables(report: dict[str, Any], system: dict[str, Any]) -> str:
    """Counts per kind, the role confusion table, the words most often wrong, and example sentences."""
    errors = system["errors"]
    counts = errors["counts"]
    total = sum(counts.values()) or 1
    count_rows = [f"<tr><th>{_e(kind.replace('_', ' '))}</th><td class=\"num\">{n}</td>"
                  f"<td class=\"num\">{n / total:.1%}</td><td class=\"muted\">{_e(KIND_NOTES.get(kind, ''))}</td></tr>"
                  for kind, n in counts.items()]
    kinds = _table([("kind", False), ("instances", True), ("share", True), ("meaning", False)], count_rows,
                   attrs=' class="kinds"')

    labels = list(errors["confusion"])
    conf_rows = []
    for gold in labels:
        cells = []
        for pred in labels:
            n = errors["confusion"][gold].get(pred, 0)
            css = "zero" if n == 0 else ("diag" if gold == pred else "off")
            cells.append(f'<td class="num {css}">{n}</td>')
        conf_rows.append(f"<tr><th>{_e('(none)' if gold == NONE else gold)}</th>{''.join(cells)}</tr>")
    head = [("gold ↓ / predicted →", False)] + [("(none)" if label == NONE else label, True) for label in labels]
    confusion = _table(head, conf_rows, attrs=' class="confusion"')

    def words(title: str, pairs: list[list[Any]]) -> str:
        rows = [f"<tr><td>{_e(word)}</td><td class=\"num\">{n}</td></tr>" for word, n in pairs]
        if not rows:
            rows = ['<tr><td colspan="2" class="muted">none</td></tr>']
        return _table([(title, False), ("errors", True)], rows)

    example_rows = []
    for kind, items in errors.get("examples", {}).items():
        if kind == "correct":
            continue
        for item in items:
            example_rows.append(
                f"<tr><td>{_e(kind.replace('_', ' '))}</td>"
                f"<td>{_e(_instance(item['gold_role'], item['gold_trigger'], item['gold_span']))}</td>"
                f"<td>{_e(_instance(item['predicted_role'], item['predicted_trigger'], item['predicted_span']))}</td>"
                f"<td class=\"text\"><span class=\"muted\">{_e(item['id'])}</span> {_e(item['text'])}</td></tr>")
    examples = (_table([("kind", False), ("gold", False), ("predicted", False), ("sentence", False)], example_rows,
                       attrs=' class="examples"') if example_rows else '<p class="muted">No errors to show.</p>')
    return (f"<h3>Errors</h3><p class=\"note\">Every gold and predicted role instance (trigger, role, argument) "
            f"gets one kind; the kinds are decided in the order listed.</p>{kinds}"
            f"<div class=\"tables\"><div><h3>Role confusion</h3>{confusion}</div>"
            f"<div><h3>Triggers in errors</h3>{words('trigger', errors['triggers'])}</div>"
            f"<div><h3>Word before the argument</h3>{words('word', errors['prepositions'])}</div></div>"
            f"<h3>Examples</h3>{examples}")


def _config_line(config: Mapping[str, Any]) -> str:
    """One line on how the config was built, from whatever of it is there."""
    parts = []
    for key, label in (("trigger_model", "triggers"), ("role_model", "roles")):
        kind = (config.get(key) or {}).get("kind")
        if kind:
            parts.append(f"{label}: {kind}")
    groups = (config.get("features") or {}).get("groups")
    if groups:
        parts.append(f"features: {', '.join(groups)}")
    return " · ".join(parts)


def system_section(report: dict[str, Any], system: dict[str, Any]) -> str:
    """Everything about one config."""
    name = system["name"]
    notes = "".join(f"<li>{_e(note)}</li>" for note in system["scores"].get("undefined", []))
    summary = _config_line(system.get("config") or {})
    given = system["gold_trigger_scores"]
    return (
        f'<section class="config" id="config-{_e(css_name(name))}"><h2>{_e(name)}</h2>'
        + (f'<p class="muted">{_e(summary)}</p>' if summary else "")
        + "<h3>Scores</h3>"
        + score_table(report, system)
        + '<p class="note">Pooled over all held-out folds; CI: bootstrap interval by '
        + f"{_e(report['settings']['bootstrap_unit'])}; fold mean ± sd: F1 of each fold scored on its own.</p>"
        + warning(system.get("interval_warning"))
        + (f'<ul class="note">{notes}</ul>' if notes else "")
        + breakdown_section(report, system)
        + confidence_section(system)
        + "<h3>Roles given the gold triggers</h3><p class=\"note\">The same held-out folds with the gold "
        + f"triggers handed to the role labeller (micro F1 {_f(given['micro']['f1'])}): role errors apart from "
        + "trigger errors.</p>"
        + gold_trigger_table(report, system)
        + error_tables(report, system)
        + "</section>"
    )


def warning(text: str | None) -> str:
    """A warning paragraph (``class="warning"``), or nothing."""
    return f'<p class="warning">Warning: {_e(text)}</p>' if text else ""


def _modes(group: Mapping[str, Any]) -> list[str]:
    return [mode for mode in ("exact", "overlap") if mode in group]


def matching_table(report: dict[str, Any], system: dict[str, Any]) -> str:
    """Precision, recall and F1 under exact and overlap matching side by side (``class="matching"``)."""
    matching = system.get("matching")
    if not matching:
        return ""
    modes = _modes(matching)
    rows = []
    for name in [*report["roles"], "micro", "trigger"]:
        cells = [_f(score[key]) for mode in modes
                 for score in [matching[mode]["roles"].get(name) or matching[mode][name]]
                 for key in ("precision", "recall", "f1")]
        rows.append(_row(name, cells, numeric=[True] * len(cells), css="pooled" if name in ("micro", "trigger") else ""))
    head = [("score", False)] + [(f"{mode} {key}", True) for mode in modes for key in ("P", "R", "F1")]
    return "<h3>Exact and overlap matching</h3>" + _table(head, rows, attrs=' class="matching"')


def group_table(label: str, groups: Mapping[str, Mapping[str, Any]], css: str) -> str:
    """One row per doc, book or fold: records, gold, micro and trigger P/R/F1 in each mode."""
    if not groups:
        return ""
    modes = _modes(next(iter(groups.values())))
    rows = []
    for name, group in groups.items():
        first = group[modes[0]]
        cells = [str(first["records"]), str(first["micro"]["gold"]), str(first["trigger"]["gold"])]
        cells += [_f(group[mode][key]["f1"]) for mode in modes for key in ("micro", "trigger")]
        rows.append(_row(name, cells, numeric=[True] * len(cells)))
    head = [(label, False), ("records", True), ("gold roles", True), ("gold triggers", True)]
    head += [(f"{key} F1 {mode}", True) for mode in modes for key in ("micro", "trigger")]
    return _table(head, rows, attrs=f' class="{css}"')


def breakdown_section(report: dict[str, Any], system: dict[str, Any]) -> str:
    """Both matching modes, then per book, per doc and per fold (each table folds open)."""
    folds = {fold_name(f): f for f in system.get("per_fold", [])}
    parts = [("book", system.get("per_book", {}), "per-book"), ("doc", system.get("per_doc", {}), "per-doc"),
             ("fold", folds, "per-fold")]
    details = "".join(f'<details class="breakdown" open><summary>Per {title} ({len(groups)})</summary>'
                      f"{group_table(title, groups, css)}</details>" for title, groups, css in parts if groups)
    departing = departing_folds(system.get("per_fold", []))
    if departing:
        items = "".join(f"<li>{_e(name)}: {_e('; '.join(found))}</li>" for name, found in departing.items())
        details += (f'<p class="note">{_e(departing_folds_note(departing, len(folds)))} '
                    f"(<code>[auxiliary] augment_if_conventions_differ</code>):</p><ul>{items}</ul>")
    return (matching_table(report, system)
            + ("<h3>Per book, doc and fold</h3><p class=\"note\">The same held-out counts grouped by book (doc name "
               "without its trailing chapter number), by doc and by fold; each mode's groups add up to its pooled counts.</p>"
               + details if details else ""))


def confidence_section(system: dict[str, Any]) -> str:
    """Reliability diagram and ECE, precision-recall curves and the F1-optimal thresholds of held-out confidences."""
    calibration, thresholds = system.get("calibration") or {}, system.get("thresholds") or {}
    reliability, pr = reliability_plot(system), precision_recall_plot(system)
    if reliability is None and pr is None:
        return ""
    rows = []
    for label, item in calibration.items():
        best = (thresholds.get(label) or {}).get("best") or {}
        cells = [str(item["instances"]), "" if item["ece"] is None else _f(item["ece"]),
                 _f(best["threshold"]) if best else "", _f(best["precision"]) if best else "",
                 _f(best["recall"]) if best else "", _f(best["f1"]) if best else ""]
        rows.append(_row(label, cells, numeric=[True] * len(cells)))
    head = [("predictions", False), ("with confidence", True), ("ECE", True), ("F1-optimal threshold", True),
            ("precision", True), ("recall", True), ("F1", True)]
    figures = "".join(f'<figure><img src="{png_data_uri(png)}" alt="{_e(alt)}"></figure>'
                      for png, alt in ((reliability, "Reliability diagram: share correct against mean confidence"),
                                       (pr, "Precision against recall as the confidence threshold falls"))
                      if png is not None)
    return ("<h3>Confidence: calibration and thresholds</h3><p class=\"note\">Held-out predictions of the first "
            "repeat. Reliability: 10 equal-width confidence bins; ECE is the instance-weighted mean gap between "
            "share correct and mean confidence. Thresholds: keeping predictions at or above a confidence; recall "
            "counts every gold instance.</p>"
            + _table(head, rows, attrs=' class="confidence"') + f'<div class="tables">{figures}</div>')


# ---------------------------------------------------------------- comparisons and learning curve


def comparisons_section(report: dict[str, Any]) -> str:
    """Every pair of configs: the difference of F1 and its p-value, per score."""
    if not report["comparisons"]:
        return ""
    rows = []
    for comparison in report["comparisons"]:
        for name, test in comparison["tests"].items():
            css = " significant" if test["p_value"] < SIGNIFICANT else ""
            holm = test.get("p_holm")
            holm_css = " significant" if holm is not None and holm < SIGNIFICANT else ""
            rows.append(f"<tr><td>{_e(comparison['a'])}</td><td>{_e(comparison['b'])}</td><td>{_e(name)}</td>"
                        f"<td class=\"num\">{test['difference']:+.3f}</td>"
                        f"<td class=\"num{css}\">{test['p_value']:.4f}</td>"
                        f"<td class=\"num{holm_css}\">{'' if holm is None else f'{holm:.4f}'}</td></tr>")
    head = [("A", False), ("B", False), ("score", False), ("F1(A) − F1(B)", True), ("p", True), ("p (Holm)", True)]
    return ('<section id="comparisons"><h2>Paired comparisons</h2>'
            f"<p class=\"note\">Approximate randomization by document, {report['settings']['trials']} trials. "
            f"p below {SIGNIFICANT} in bold. p (Holm): each score's p-values adjusted together over every pair of "
            "configs (Holm 1979), so that testing many pairs does not inflate the chance of a false finding; "
            "the raw p-values are not corrected.</p>" + _table(head, rows, attrs=' class="comparisons"') + "</section>")


def learning_curve_section(report: dict[str, Any]) -> str:
    """The learning-curve figure and its numbers."""
    png = learning_curve_plot(report)
    if png is None:
        return ""
    curve = report["learning_curve"]
    names = ["micro", *report["roles"], "trigger"]
    rows = []
    warnings = sorted({p["interval_warning"] for points in curve["systems"].values() for p in points
                       if p.get("interval_warning")})
    for system, points in curve["systems"].items():
        for point in points:
            cells = "".join(f'<td class="num">{_f(point["f1"][n])}<br><span class="muted">'
                            f'{_interval(point.get("intervals", {}).get(n))}</span></td>'
                            if n in point["f1"] else "<td></td>" for n in names)
            rows.append(f"<tr><td>{_e(system)}</td><td class=\"num\">{point['share']:.0%}</td>"
                        f"<td class=\"num\">{point['train_records']:g}</td>{cells}</tr>")
    head = [("config", False), ("share of training docs", True), ("mean training records", True)]
    head += [(f"F1 {n}", True) for n in names]
    return ('<section id="learning-curve"><h2>Learning curve</h2><figure>'
            f'<img src="{png_data_uri(png)}" alt="Micro, per-role and trigger F1 against mean training records, a line per config">'
            "<figcaption>Each fold's training docs cut to a share (test docs unchanged; 100% is the full training "
            "set); pooled held-out F1, shaded: bootstrap interval.</figcaption>"
            "</figure>" + "".join(warning(w) for w in warnings) + _table(head, rows, attrs=' class="curve"')
            + "</section>")


# ---------------------------------------------------------------- highlighted sentences


@dataclass(frozen=True)
class Mark:
    """One highlighted span: a trigger or a role, its status on a config's line, and a hover text."""

    start: int
    end: int
    label: str  # "trigger" or a role
    status: str | None = None  # "match", "nomatch" or None (gold line)
    title: str = ""


def span_marks(record: Record | None, roles: Sequence[str], text: str) -> dict[tuple[str, int, int], str]:
    """``(label, start, end) -> hover text`` for the record's triggers and role spans, within ``text``.

    A role span shared by several events is one mark (its hover text names
    every trigger); roles not in ``roles`` are left out, as the scorer does.
    """
    found: dict[tuple[str, int, int], list[str]] = {}
    for event in (record.events or ()) if record is not None else ():
        start, end = max(0, event.trigger[0]), min(len(text), event.trigger[1])
        if start < end:
            found.setdefault((TRIGGER, start, end), [])
        for argument in event.roles:
            a, b = max(0, argument.span[0]), min(len(text), argument.span[1])
            if argument.role in roles and a < b:
                found.setdefault((argument.role, a, b), []).append(text[event.trigger[0]:event.trigger[1]])
    out = {}
    for key in sorted(found, key=lambda k: (k[1], k[2], k[0])):
        label = key[0]
        of = sorted(set(found[key]))
        out[key] = label if label == TRIGGER else f"{label} of " + ", ".join(f"“{t}”" for t in of)
    return out


def highlight(text: str, marks: Sequence[Mark], roles: Sequence[str]) -> str:
    """The text as escaped HTML, each piece covered by marks wrapped in one ``<mark>`` with all their classes.

    The text is cut at every mark boundary. A piece's classes are ``trigger``
    if a trigger covers it, ``role-<role>`` for each role covering it (in
    ``roles`` order), and ``match`` when every covering mark matched, else
    ``nomatch`` (config lines only). Under two or more roles the background
    is split into bands, one colour per role.
    """
    cuts = sorted({0, len(text), *(m.start for m in marks), *(m.end for m in marks)})
    order = {role: i for i, role in enumerate(roles)}
    pieces = []
    for start, end in zip(cuts, cuts[1:]):
        piece = _e(text[start:end])
        covering = [m for m in marks if m.start <= start and end <= m.end]
        if not covering:
            pieces.append(piece)
            continue
        labels = sorted({m.label for m in covering}, key=lambda label: (label != TRIGGER, order.get(label, len(order))))
        classes = [TRIGGER if label == TRIGGER else f"role-{css_name(label)}" for label in labels]
        statuses = {m.status for m in covering if m.status}
        if statuses:
            classes.append("match" if statuses == {"match"} else "nomatch")
        role_labels = [label for label in labels if label != TRIGGER]
        style = ""
        if len(role_labels) > 1:
            step = 100 / len(role_labels)
            bands = ", ".join(f"var(--role-{css_name(label)}) {i * step:g}% {(i + 1) * step:g}%"
                              for i, label in enumerate(role_labels))
            style = f' style="background: linear-gradient(180deg, {bands})"'
        title = "; ".join(m.title + ("" if m.status in (None, "match") else " (no gold span like it)")
                          for m in sorted(covering, key=lambda m: (m.start, m.end, m.label)))
        pieces.append(f'<mark class="{" ".join(classes)}"{style} title="{_e(title)}">{piece}</mark>')
    return "".join(pieces)


@dataclass(frozen=True)
class LineTally:
    """How a config's line compares with gold: matched, unmatched (predicted) and missed (gold) spans."""

    matched: int
    unmatched: int
    missed: int

    @property
    def agrees(self) -> bool:
        return self.unmatched == 0 and self.missed == 0


def config_line(text: str, gold: dict[tuple[str, int, int], str], pred: dict[tuple[str, int, int], str],
                roles: Sequence[str]) -> tuple[str, str, LineTally]:
    """A config's highlighted text, the list of gold spans it missed (HTML), and its tally."""
    marks = [Mark(key[1], key[2], key[0], "match" if key in gold else "nomatch", title) for key, title in pred.items()]
    missed = [key for key in gold if key not in pred]
    missed_html = " ".join(
        f'<mark class="{TRIGGER if label == TRIGGER else "role-" + css_name(label)} missed" title="{_e(gold[(label, a, b)])}">'
        f"{_e(text[a:b])}</mark>" for label, a, b in missed)
    tally = LineTally(sum(m.status == "match" for m in marks), sum(m.status == "nomatch" for m in marks), len(missed))
    return highlight(text, marks, roles), missed_html, tally


def _tally_html(tally: LineTally) -> str:
    if tally.agrees:
        return f'<span class="good">✓ all {tally.matched}</span>' if tally.matched else '<span class="good">✓ none</span>'
    parts = [f"<span>{tally.matched} match</span>"] if tally.matched else []
    parts += [f'<span class="bad">{n} {what}</span>' for n, what in ((tally.unmatched, "unmatched"),
                                                                   (tally.missed, "missed")) if n]
    return " · ".join(parts)


def legend(roles: Sequence[str]) -> str:
    """What the colours and outlines mean."""
    sample = f"role-{css_name(roles[0])}" if roles else TRIGGER
    items = [f'<span><mark class="role-{css_name(role)}">{_e(role)}</mark></span>' for role in roles]
    items += [
        f'<span><mark class="{TRIGGER}">trigger</mark></span>',
        f'<span><mark class="{sample} match">solid green</mark> same label and characters as a gold span</span>',
        f'<span><mark class="{sample} nomatch">dashed red</mark> no gold span like it</span>',
        f'<span><mark class="{sample} missed">dotted red</mark> gold span the config missed</span>',
    ]
    return f'<div class="legend">{"".join(items)}</div>'


def sentence_errors(record: Record, predictions: Mapping[str, Mapping[str, Record]],
                    roles: Sequence[str]) -> list[tuple[str, str, str]]:
    """``(config, role or "trigger", kind)`` of every instance of one sentence, per config, sorted and unique.

    Role instances get the kinds of :func:`~trainer.evaluation.error_analysis.classify_record` (a
    ``wrong_role`` pair under both its roles); trigger spans are ``correct``, ``missed`` or ``spurious``.
    """
    out: set[tuple[str, str, str]] = set()
    gold_triggers = {tuple(e.trigger) for e in record.events or ()}
    for name, records in predictions.items():
        predicted = records.get(record.id) or record.with_events(())
        for item in classify_record(record, predicted, roles=roles):
            out.update((name, side[1], item.kind) for side in (item.gold, item.pred) if side is not None)
        pred_triggers = {tuple(e.trigger) for e in predicted.events or ()}
        out.update((name, TRIGGER, kind) for kind, spans in (("correct", gold_triggers & pred_triggers),
                                                             ("missed", gold_triggers - pred_triggers),
                                                             ("spurious", pred_triggers - gold_triggers)) if spans)
    return sorted(out)


def _option(value: str, label: str) -> str:
    return f'<option value="{_e(value)}">{_e(label)}</option>'


def filter_form(configs: Sequence[str], docs: Sequence[str], roles: Sequence[str], page_size: int) -> str:
    """The filters of the sentence list (config, doc, role, kind), the page size and the pager."""
    selects = [("config", "config", configs), ("doc", "doc", docs), ("role", "role or trigger", [*roles, TRIGGER])]
    html_selects = "".join(
        f'<label>{_e(label)} <select name="{name}">{_option("", "any")}'
        + "".join(_option(v, v) for v in values) + "</select></label>" for name, label, values in selects)
    kinds = _option("", "any") + _option("error", "any error") + "".join(
        _option(kind, kind.replace("_", " ")) for kind in KIND_NOTES)
    sizes = "".join(f'<option value="{n}"{" selected" if n == page_size else ""}>{n}</option>'
                    for n in sorted({page_size, 25, 50, 100, 200}))
    return (f'<form id="sentence-filter" class="filters">{html_selects}'
            f'<label>kind <select name="kind">{kinds}</select></label>'
            f'<label>per page <select name="size">{sizes}</select></label>'
            '<button type="button" id="page-previous">previous</button>'
            '<button type="button" id="page-next">next</button>'
            '<span id="page-status" class="muted" aria-live="polite"></span></form>')


FILTER_SCRIPT = """
(function () {
  var form = document.getElementById("sentence-filter");
  var items = Array.prototype.slice.call(document.querySelectorAll("ol.sentences > li"));
  var status = document.getElementById("page-status");
  var previous = document.getElementById("page-previous"), next = document.getElementById("page-next");
  var page = 0;
  function value(name) { return form.elements[name].value; }
  function keep(li) {
    var doc = value("doc"), config = value("config"), role = value("role"), kind = value("kind");
    if (doc && li.getAttribute("data-doc") !== doc) { return false; }
    if (!config && !role && !kind) { return true; }
    return JSON.parse(li.getAttribute("data-errors")).some(function (e) {
      return (!config || e[0] === config) && (!role || e[1] === role) &&
             (!kind || e[2] === kind || (kind === "error" && e[2] !== "correct"));
    });
  }
  function show() {
    var size = parseInt(value("size"), 10), kept = items.filter(keep);
    var pages = Math.max(1, Math.ceil(kept.length / size));
    page = Math.min(Math.max(page, 0), pages - 1);
    items.forEach(function (li) { li.hidden = true; });
    kept.slice(page * size, (page + 1) * size).forEach(function (li) { li.hidden = false; });
    status.textContent = kept.length === 0 ? "no sentence matches" :
      "sentences " + (page * size + 1) + "–" + Math.min(kept.length, (page + 1) * size) + " of " +
      kept.length + " matching (page " + (page + 1) + " of " + pages + ")";
    previous.disabled = page === 0;
    next.disabled = page >= pages - 1;
  }
  form.addEventListener("change", function () { page = 0; show(); });
  previous.addEventListener("click", function () { page -= 1; show(); });
  next.addEventListener("click", function () { page += 1; show(); });
  show();
})();
"""


Explanations = Mapping[str, Mapping[str, Mapping[tuple[str, int, int], Sequence[tuple[str, float]]]]]


def with_explanations(spans: dict[tuple[str, int, int], str],
                      weighed: Mapping[tuple[str, int, int], Sequence[tuple[str, float]]]) -> dict[tuple[str, int, int], str]:
    """Hover texts of predicted spans with the features that weighed most for each, where known."""
    return {key: title + (" · weighed most: " + ", ".join(f"{f} {w:+.2f}" for f, w in weighed[key])
                          if weighed.get(key) else "") for key, title in spans.items()}


def sentences_section(report: dict[str, Any], gold: Sequence[Record], predictions: Mapping[str, Sequence[Record]],
                      *, page_size: int = PAGE_SIZE, explanations: Explanations | None = None) -> str:
    """Every held-out sentence: the gold line and one line per config, spans highlighted (see :func:`highlight`).

    Each ``<li>`` carries its doc (``data-doc``) and its instances' ``(config, role, kind)`` as JSON
    (``data-errors``, see :func:`sentence_errors`); a small inline script filters and pages the list.
    Without script every sentence is listed. ``explanations`` (config -> record id -> span key -> features)
    adds to a predicted span's hover text the features that weighed most for it.
    """
    explanations = explanations or {}
    roles = report["roles"]
    by_config = {name: {r.id: r for r in records} for name, records in predictions.items()}
    chosen = [r for r in gold if r.is_annotated]
    items = []
    for record in chosen:
        text = record.text
        gold_spans = span_marks(record, roles, text)
        gold_marks = [Mark(k[1], k[2], k[0], None, title) for k, title in gold_spans.items()]
        lines = [f'<div class="who">gold</div><div class="text gold">{highlight(text, gold_marks, roles)}</div>'
                 '<div class="tally"></div>']
        agrees = True
        for name, records in by_config.items():
            pred_spans = with_explanations(span_marks(records.get(record.id), roles, text),
                                           explanations.get(name, {}).get(record.id, {}))
            body, missed, tally = config_line(text, gold_spans, pred_spans, roles)
            agrees &= tally.agrees
            missed_div = f'<div class="missed-list">{missed}</div>' if missed else ""
            lines.append(f'<div class="who">{_e(name)}</div>'
                         f'<div class="text pred" data-config="{_e(name)}">{body}{missed_div}</div>'
                         f'<div class="tally">{_tally_html(tally)}</div>')
        errors = json.dumps([list(e) for e in sentence_errors(record, by_config, roles)], ensure_ascii=False)
        items.append(f'<li class="{"agree" if agrees else "differs"}" data-doc="{_e(record.doc)}" '
                     f'data-errors="{_e(errors)}"><div class="sid">{_e(record.id)} '
                     f'· {_e(record.doc)}</div><div class="lines">{"".join(lines)}</div></li>')
    docs = sorted({r.doc for r in chosen})
    return ('<section id="sentences"><h2>Held-out sentences</h2>'
            f'<p class="note">All {len(chosen)} annotated held-out sentences, {page_size} to a page; filter them by '
            "config, doc, role (or trigger) and error kind: a sentence stays when one of its instances matches "
            "every filter set. Each config line shows that config's held-out prediction (first repeat). "
            "Spans are compared one by one here; whether an argument is attached to the right trigger is "
            "scored in the tables and in the kinds (wrong trigger link), not drawn. Hovering over a predicted "
            "span shows what it is and, for learned models, the features that weighed most for it (their "
            "contributions to the label's score). Without JavaScript every sentence is listed.</p>"
            + legend(roles) + filter_form(list(by_config), docs, roles, page_size)
            + f'<ol class="sentences">{"".join(items)}</ol>'
            + f"<script>{FILTER_SCRIPT}</script></section>")


# ---------------------------------------------------------------- the page


def html_report(report: dict[str, Any], gold: Sequence[Record], predictions: dict[str, list[Record]], *,
                page_size: int = PAGE_SIZE, explanations: Explanations | None = None) -> str:
    """The whole report as one standalone HTML page.

    ``report`` is the dict of :func:`trainer.reports.json_report.report_dict`;
    ``gold`` the run's gold records; ``predictions`` maps each config name to
    its held-out predicted records (matched to gold by ``id``). Every annotated
    sentence is on the page, ``page_size`` to a page once the script runs. ``explanations`` (from
    :meth:`trainer.evaluation.runs.SystemRun.explanations`, per config) adds the features that
    weighed most for each predicted span to its hover text.
    """
    body = (header_section(report) + figures_section(report)
            + "".join(system_section(report, s) for s in report["systems"])
            + comparisons_section(report) + learning_curve_section(report)
            + sentences_section(report, gold, predictions, page_size=page_size, explanations=explanations))
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>itinerant report: {_e(', '.join(s['name'] for s in report['systems']))}</title>"
            f"<style>{CSS}\n{_role_css(report['roles'])}</style></head>"
            f"<body><main>{body}</main></body></html>\n")
