"""Views of an annotator agreement (:class:`trainer.annotation.agreement.Agreement`): Markdown, a standalone HTML page, files.

The numbers are those of :meth:`Agreement.to_dict`; the views only lay them
out. The HTML page has inline CSS, no script, and every text escaped; each
disagreement shows the sentence twice, once with what each annotator marked.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from trainer.annotation.agreement import KINDS, LAYERS, MODES, Agreement, Disagreement, f1_table
from trainer.outputs import check_output, write_text
from trainer.reports.html import CSS, Mark, _e, _role_css, _table, css_name, highlight

DISAGREEMENT_COLUMNS = ("kind", "id", "doc", "first", "first_gave", "second", "second_gave")


def _number(value: float | None) -> str:
    return "n/a" if value is None else f"{value:.3f}"


def _score_rows(result: Agreement, pair_index: int) -> list[tuple[str, str, str, int, int, int]]:
    pair = result.pairs[pair_index]
    tables = {mode: f1_table(pair.scores[mode]) for mode in MODES}
    names = ("trigger", *result.roles, "micro")
    return [(name, _number(tables["exact"][name]["f1"]), _number(tables["overlap"][name]["f1"]),
             tables["exact"][name]["both"], tables["exact"][name]["only_first"], tables["exact"][name]["only_second"])
            for name in names]


def _grouped(disagreements: list[Disagreement]) -> dict[str, list[Disagreement]]:
    return {kind: [d for d in disagreements if d.kind == kind] for kind in KINDS}


def agreement_markdown(result: Agreement) -> str:
    """The summary, one table per pair, kappa, and the disagreements grouped by kind."""
    lines = [f"Agreement of {', '.join(result.annotators)} on {len(result.compared)} record(s) annotated by all "
             f"({result.tokens} tokens)", "",
             "| annotator | annotated records | unreviewed, left out |", "|---|---:|---:|"]
    lines += [f"| {name} | {result.annotated[name]} | {result.unreviewed[name]} |" for name in result.annotators]
    for index, pair in enumerate(result.pairs):
        lines += ["", f"## {pair.first} / {pair.second}", "",
                  f"| score | F1 exact | F1 overlap | both (exact) | only {pair.first} | only {pair.second} |",
                  "|---|---:|---:|---:|---:|---:|"]
        lines += [f"| {name} | {exact} | {overlap} | {both} | {only_a} | {only_b} |"
                  for name, exact, overlap, both, only_a, only_b in _score_rows(result, index)]
        kappas = ", ".join(f"{layer} {_number(pair.kappa[layer])}" for layer in LAYERS)
        lines += ["", f"Cohen's kappa on token BIO labels: {kappas}"]
    if result.fleiss is not None:
        lines += ["", f"Fleiss' kappa, all {len(result.annotators)} annotators: "
                  + ", ".join(f"{layer} {_number(result.fleiss[layer])}" for layer in LAYERS)]
    lines += ["", f"## Disagreements ({len(result.disagreements)})"]
    for kind, found in _grouped(result.disagreements).items():
        lines += ["", f"### {kind} ({len(found)}): {KINDS[kind]}"]
        lines += [f"- {d.record_id}: {d.first}: {d.first_gave or '(nothing)'}; {d.second}: {d.second_gave or '(nothing)'}"
                  for d in found]
    lines += [f"\nnote: {note}" for note in result.notes]
    return "\n".join(lines)


def _marks(spans: tuple[tuple[str, tuple[int, int]], ...]) -> list[Mark]:
    return [Mark(span[0], span[1], label, None, label) for label, span in spans]


def _disagreement_rows(found: list[Disagreement], roles: tuple[str, ...]) -> list[str]:
    rows = []
    for d in found:
        first = highlight(d.text, _marks(d.first_spans), roles)
        second = highlight(d.text, _marks(d.second_spans), roles)
        rows.append(f"<tr><td>{_e(d.record_id)}</td>"
                    f"<td><div class=\"who\">{_e(d.first)}: {_e(d.first_gave or '(nothing)')}</div><div class=\"text\">{first}</div>"
                    f"<div class=\"who\">{_e(d.second)}: {_e(d.second_gave or '(nothing)')}</div><div class=\"text\">{second}</div></td></tr>")
    return rows


def _legend(roles: tuple[str, ...]) -> str:
    items = [f'<span><mark class="role-{css_name(role)}">{_e(role)}</mark></span>' for role in roles]
    items.append('<span><mark class="trigger">trigger</mark></span>')
    return f'<div class="legend">{"".join(items)}<span>each sentence is shown twice: what the first, then the second annotator marked</span></div>'


def agreement_html(result: Agreement) -> str:
    """A standalone page: who annotated what, F1 and kappa per pair, and every disagreement grouped by kind."""
    parts = [f"<h1>Agreement between annotators</h1><p>{len(result.compared)} record(s) annotated by all of "
             f"{_e(', '.join(result.annotators))}; {result.tokens} tokens.</p>"]
    parts.append(_table((("annotator", False), ("annotated records", True), ("unreviewed, left out", True)),
                        [f"<tr><td>{_e(n)}</td><td class=\"num\">{result.annotated[n]}</td>"
                         f"<td class=\"num\">{result.unreviewed[n]}</td></tr>" for n in result.annotators]))
    for index, pair in enumerate(result.pairs):
        head = (("score", False), ("F1 exact", True), ("F1 overlap", True), ("both (exact)", True),
                (f"only {pair.first}", True), (f"only {pair.second}", True))
        rows = [f"<tr><th>{_e(name)}</th>" + "".join(f"<td class=\"num\">{_e(v)}</td>" for v in values) + "</tr>"
                for name, *values in _score_rows(result, index)]
        kappas = ", ".join(f"{layer} <b>{_number(pair.kappa[layer])}</b>" for layer in LAYERS)
        parts.append(f"<h2>{_e(pair.first)} / {_e(pair.second)}</h2>{_table(head, rows)}"
                     f"<p>Cohen's kappa on token BIO labels: {kappas}</p>")
    if result.fleiss is not None:
        parts.append("<p>Fleiss' kappa, all annotators: "
                     + ", ".join(f"{layer} <b>{_number(result.fleiss[layer])}</b>" for layer in LAYERS) + "</p>")
    parts.append(f"<h2 id=\"disagreements\">Disagreements ({len(result.disagreements)})</h2>{_legend(result.roles)}")
    for kind, found in _grouped(result.disagreements).items():
        parts.append(f"<h3 id=\"kind-{kind}\">{_e(kind)} ({len(found)})</h3><p class=\"note\">{_e(KINDS[kind])}</p>")
        if found:
            parts.append(_table((("record", False), ("what each marked", False)), _disagreement_rows(found, result.roles),
                                attrs=' class="examples"'))
    parts += [f"<p class=\"note\">note: {_e(note)}</p>" for note in result.notes]
    style = CSS + _role_css(result.roles) + "\n.who { font-size: .85em; color: var(--muted); }\n"
    return (f"<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><title>Agreement</title>"
            f"<style>{style}</style></head><body><main>{''.join(parts)}</main></body></html>\n")


def disagreements_tsv(disagreements: list[Disagreement]) -> str:
    """The disagreements as tab-separated rows with a header, grouped by kind."""
    out = io.StringIO()
    writer = csv.writer(out, delimiter="\t", lineterminator="\n")
    writer.writerow(DISAGREEMENT_COLUMNS)
    for found in _grouped(disagreements).values():
        for d in found:
            row = d.to_dict()
            writer.writerow([row[column] for column in DISAGREEMENT_COLUMNS])
    return out.getvalue()


def write_agreement(result: Agreement, folder: Path | str) -> list[Path]:
    """Write ``agreement.json``, ``agreement.html`` and ``disagreements.tsv`` into ``folder`` (each atomically); return their paths."""
    folder = check_output(folder, folder=True, what="agreement folder")
    contents = {"agreement.json": json.dumps(result.to_dict(), indent=2, ensure_ascii=False) + "\n",
                "agreement.html": agreement_html(result),
                "disagreements.tsv": disagreements_tsv(result.disagreements)}
    written = []
    for name, text in contents.items():
        written.append(write_text(folder / name, text))
    return written
