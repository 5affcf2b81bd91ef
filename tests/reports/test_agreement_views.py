"""Views of an agreement: Markdown, the HTML page, the disagreements table, the files written."""

from __future__ import annotations

import json
from pathlib import Path

from trainer.annotation.agreement import agreement
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.reports.agreement import agreement_html, agreement_markdown, disagreements_tsv, write_agreement

TEXT = "We left <Caddow> for the lake."
ANN = Record("s1", "d", TEXT, (Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (9, 15)),
                                              RoleSpan("destination", (21, 29)))),))
BEA = Record("s1", "d", TEXT, (Event((3, 7), (RoleSpan("path", (9, 15)), RoleSpan("destination", (25, 29)))),))


def result():
    # Roles layer, 9 tokens (< and > are tokens): p_o = 5/9, p_e = (5*7 + 1*1) / 81 = 36/81, kappa = (9/81) / (45/81) = 0.2.
    return agreement({"ann": [ANN], "bea": [BEA]})


def test_markdown_gives_the_tables_kappa_and_disagreements_by_kind() -> None:
    text = agreement_markdown(result())
    assert "Agreement of ann, bea on 1 record(s) annotated by all (9 tokens)" in text
    assert "| ann | 1 | 0 |" in text
    assert "| trigger | 1.000 | 1.000 | 1 | 0 | 0 |" in text
    assert "| destination | 0.000 | 1.000 | 0 | 1 | 1 |" in text
    assert "| path | 0.000 | 0.000 | 0 | 0 | 1 |" in text
    assert "Cohen's kappa on token BIO labels: trigger 1.000, roles 0.200" in text
    assert "### role-label (1): the same words under the same trigger, given different roles\n" in text
    assert "- s1: ann: source 'Caddow' [9, 15] of 'left'; bea: path 'Caddow' [9, 15] of 'left'" in text
    assert "- s1: ann: mover 'We' [0, 2] of 'left'; bea: (nothing)" in text


def test_undefined_f1_reads_n_a_not_zero() -> None:
    plain = Record("s1", "d", "We left.", (Event((3, 7)),))
    text = agreement_markdown(agreement({"a": [plain], "b": [plain]}))
    assert "| mover | n/a | n/a | 0 | 0 | 0 |" in text and "roles n/a" in text
    assert "note: a / b: kappa of the roles layer is undefined" in text


def test_the_html_page_escapes_text_and_marks_what_each_annotator_gave() -> None:
    page = agreement_html(result())
    assert "<Caddow>" not in page and "&lt;Caddow&gt;" in page
    assert page.count('<h3 id="kind-') == 5
    assert '<h3 id="kind-role-label">role-label (1)</h3>' in page
    assert '&lt;<mark class="role-source" title="source">Caddow</mark>&gt;' in page
    assert '&lt;<mark class="role-path" title="path">Caddow</mark>&gt;' in page
    assert '<mark class="trigger" title="trigger">left</mark>' in page
    assert "<script" not in page and "http" not in page


def test_the_tsv_and_the_files(tmp_path: Path) -> None:
    rows = disagreements_tsv(result().disagreements).splitlines()
    assert rows[0] == "kind\tid\tdoc\tfirst\tfirst_gave\tsecond\tsecond_gave"
    assert rows[1] == "role-label\ts1\td\tann\tsource 'Caddow' [9, 15] of 'left'\tbea\tpath 'Caddow' [9, 15] of 'left'"
    assert [r.split("\t")[0] for r in rows[1:]] == ["role-label", "role-boundary", "role-only-one"]
    written = write_agreement(result(), tmp_path / "agreement")
    assert [p.name for p in written] == ["agreement.json", "agreement.html", "disagreements.tsv"]
    data = json.loads(written[0].read_text(encoding="utf-8"))
    assert data["pairs"][0]["kappa"] == {"trigger": 1.0, "roles": 0.2}
    assert data["compared_records"] == 1 and len(data["disagreements"]) == 3
