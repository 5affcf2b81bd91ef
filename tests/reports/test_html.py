"""The HTML report: escaping, highlighted spans (nested too), embedded figures, and the page in Chromium."""

from __future__ import annotations

import importlib.util
import os
import re
import shutil
import subprocess
from contextlib import contextmanager
from html.parser import HTMLParser
from pathlib import Path
from typing import Any, Iterator

import pytest
from report_samples import ROLES, S1, S2, at, gold_records, predictions, tiny_report

from tests.conftest import CHROMIUM_FLAGS, chromium_or_skip

from trainer.reports.html import (
    LineTally,
    Mark,
    config_line,
    css_name,
    highlight,
    html_report,
    sentence_errors,
    span_marks,
)



class MarkCollector(HTMLParser):
    """Every ``<mark>``: its classes and text, and which sentence line (``gold`` or a config) it is on."""

    def __init__(self) -> None:
        super().__init__()
        self.marks: list[tuple[str | None, tuple[str, ...], str]] = []
        self.line: str | None = None
        self._open: list[tuple[tuple[str, ...], list[str]]] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        attributes = dict(attrs)
        classes = tuple((attributes.get("class") or "").split())
        if tag == "div" and "text" in classes:
            self.line = "gold" if "gold" in classes else attributes.get("data-config")
        if tag == "mark":
            self._open.append((classes, []))

    def handle_data(self, data: str) -> None:
        for _, parts in self._open:
            parts.append(data)

    def handle_endtag(self, tag: str) -> None:
        if tag == "mark" and self._open:
            classes, parts = self._open.pop()
            self.marks.append((self.line, classes, "".join(parts)))
        if tag == "ol":
            self.line = None


def marks_of(page: str) -> list[tuple[str | None, tuple[str, ...], str]]:
    collector = MarkCollector()
    collector.feed(page)
    return collector.marks


def page() -> str:
    return html_report(tiny_report(), gold_records(), predictions())


# ---------------------------------------------------------------- highlighting


def test_highlight_escapes_text_and_wraps_each_span_in_its_classes() -> None:
    text = "We <rode> & left"
    marks = [Mark(0, 2, "mover", None, "mover"), Mark(3, 9, "trigger", None, "trigger")]
    assert highlight(text, marks, ROLES) == (
        '<mark class="role-mover" title="mover">We</mark> '
        '<mark class="trigger" title="trigger">&lt;rode&gt;</mark> &amp; left')


def test_highlight_nested_spans_cut_at_every_boundary_with_all_classes() -> None:
    # path "the road to Kell Ferry" [19, 41) holds destination "Kell Ferry" [31, 41)
    marks = [Mark(19, 41, "path", None, "path of “followed”"), Mark(31, 41, "destination", None, "destination")]
    assert highlight(S2, marks, ROLES) == (
        'The mules followed <mark class="role-path" title="path of “followed”">the road to </mark>'
        '<mark class="role-path role-destination" style="background: linear-gradient(180deg, '
        'var(--role-path) 0% 50%, var(--role-destination) 50% 100%)" '
        'title="path of “followed”; destination">Kell Ferry</mark>.')


def test_highlight_crossing_spans_and_status_of_a_shared_piece() -> None:
    # "ab" mover [0, 2) matched, "bc" path [1, 3) unmatched: the shared "b" is not a match
    marks = [Mark(0, 2, "mover", "match", "m"), Mark(1, 3, "path", "nomatch", "p")]
    out = highlight("abcd", marks, ROLES)
    assert '<mark class="role-mover match" title="m">a</mark>' in out
    assert '<mark class="role-mover role-path nomatch"' in out and '>b</mark>' in out
    assert '<mark class="role-path nomatch" title="p (no gold span like it)">c</mark>d' in out


def test_span_marks_merge_a_shared_argument_and_skip_unscored_roles() -> None:
    record = gold_records()[0]
    assert span_marks(record, ROLES, S1) == {
        ("mover", 0, 2): "mover of “left”, “rode”",
        ("trigger", 3, 7): "trigger",
        ("source", 8, 14): "source of “left”",
        ("trigger", 17, 21): "trigger",
        ("path", 25, 35): "path of “rode”",
        ("destination", 39, 49): "destination of “rode”",
    }
    assert span_marks(record, ["path"], S1) == {("trigger", 3, 7): "trigger", ("trigger", 17, 21): "trigger",
                                                ("path", 25, 35): "path of “rode”"}
    assert span_marks(None, ROLES, S1) == {}


def test_config_line_marks_matches_unmatched_and_missed_spans() -> None:
    gold = span_marks(gold_records()[1], ROLES, S2)
    alpha = span_marks(predictions()["alpha"][1], ROLES, S2)
    body, missed, tally = config_line(S2, gold, alpha, ROLES)
    assert tally == LineTally(matched=3, unmatched=1, missed=1)
    assert '<mark class="role-path nomatch" title="path of “followed” (no gold span like it)">the road</mark>' in body
    assert '<mark class="role-destination match" title="destination of “followed”">Kell Ferry</mark>' in body
    assert missed == '<mark class="role-path missed" title="path of “followed”">the road to Kell Ferry</mark>'


def test_css_name_keeps_safe_characters_only() -> None:
    assert css_name("crf-2_b") == "crf-2_b"
    assert css_name('a b"<c>') == "a-b--c-"


# ---------------------------------------------------------------- the page


def test_page_escapes_every_text_with_a_less_than_sign() -> None:
    out = page()
    assert "<ford>" not in out and "<train>" not in out
    assert "tiny/&lt;train&gt;.jsonl" in out
    assert '<mark class="role-path" title="path of “rode”">the &lt;ford&gt;</mark>' in out
    assert "mover of “left”, “rode”" in out
    assert "path “the &lt;ford&gt;” of “rode”" in out  # an error example


def test_page_is_standalone_with_embedded_figures() -> None:
    out = page()
    assert out.startswith("<!DOCTYPE html>")
    # F1 at a glance, then a reliability diagram and a precision-recall figure per config
    assert len(re.findall(r'<img src="data:image/png;base64,[A-Za-z0-9+/=]+"', out)) == 1 + 2 * 2
    with_curve = html_report(tiny_report(curve=True), gold_records(), predictions())
    assert len(re.findall(r'<img src="data:image/png;base64,[A-Za-z0-9+/=]+"', with_curve)) == 1 + 2 * 2 + 1
    assert 'id="learning-curve"' in with_curve and 'id="learning-curve"' not in out
    for external in ("<script src", "<link", 'src="http', "url(", "@import"):
        assert external not in out
    assert out.count("<script>") == 1  # the inline filter and pager of the sentence list


def test_page_score_tables_and_sections() -> None:
    out = page()
    table = re.search(r'<table id="scores-alpha" class="scores">.*?</table>', out).group(0)
    assert ('<tr><th>mover</th><td class="num">0.800</td><td class="num">0.700</td><td class="num">0.750</td>'
            '<td class="num">0.650 – 0.800</td><td class="num">0.750 ± 0.020</td><td class="num">10</td>'
            '<td class="num">9</td></tr>') in table
    assert '<tr class="pooled first-pooled"><th>micro</th>' in table
    assert "<th>macro</th>" in table and "<th>trigger</th>" in table
    assert 'id="scores-beta"' in out and 'id="sentences"' in out and 'id="comparisons"' in out
    assert "no predictions for role source" in out  # beta's undefined note
    assert '<td class="num significant">0.0300</td>' in out and '<td class="num">0.5000</td>' in out
    assert "triggers: crf · roles: logistic · features: lexical, syntax" in out
    assert "the same held-out folds with the gold".lower() in out.lower()


def test_page_lists_every_annotated_sentence() -> None:
    out = page()
    assert "All 4 annotated held-out sentences, 50 to a page" in out
    assert "Unannotated text" not in out and "It rained all day." in out
    assert re.findall(r'<li class="(?:agree|differs)" data-doc="([^"]+)"', out) == ["d1", "d1", "d2", "d2"]
    marks = marks_of(out)
    assert (None, ("role-mover", "nomatch"), "The wind") not in marks
    assert ("beta", ("role-mover", "nomatch"), "The wind") in marks
    assert ("gold", ("role-path", "role-destination"), "Kell Ferry") in marks
    assert ("gold", ("role-path",), "the road to ") in marks
    assert ("alpha", ("role-path", "nomatch"), "the road") in marks
    assert ("alpha", ("role-path", "missed"), "the road to Kell Ferry") in marks
    assert ("beta", ("role-source", "missed"), "Caddow") in marks
    assert ("alpha", ("role-source", "match"), "Caddow") in marks


def test_sentence_errors_name_config_role_and_kind_of_every_instance() -> None:
    gold = {r.id: r for r in gold_records()}
    by_config = {name: {r.id: r for r in records} for name, records in predictions().items()}
    # d1-s2 "followed": alpha cuts the path to "the road" (boundary); beta predicts nothing (all missed).
    assert sentence_errors(gold["d1-s2"], by_config, ROLES) == [
        ("alpha", "destination", "correct"), ("alpha", "mover", "correct"), ("alpha", "path", "boundary"),
        ("alpha", "trigger", "correct"),
        ("beta", "destination", "missed"), ("beta", "mover", "missed"), ("beta", "path", "missed"),
        ("beta", "trigger", "missed")]
    # d2-s2 has no gold event; beta's "rose" with its mover is spurious.
    assert sentence_errors(gold["d2-s2"], by_config, ROLES) == [("beta", "mover", "spurious"),
                                                               ("beta", "trigger", "spurious")]
    out = page()
    assert 'data-errors="[[&quot;beta&quot;, &quot;mover&quot;, &quot;spurious&quot;], ' in out


def test_a_predicted_span_shows_the_features_that_weighed_most_for_it() -> None:
    path = at(S2, "the road")
    explanations = {"alpha": {"d1-s2": {("path", *path): [("gov_prep_cue:path", 1.5), ("-1:lemma:followed", 0.25)]}}}
    out = html_report(tiny_report(), gold_records(), predictions(), explanations=explanations)
    assert ('title="path of “followed” · weighed most: gov_prep_cue:path +1.50, -1:lemma:followed +0.25 '
            '(no gold span like it)"') in out
    assert out.count("weighed most:") == 1  # beta, and alpha's other spans, have none given
    assert "weighed most:" not in page()


def test_page_is_the_same_for_the_same_data() -> None:
    assert page() == page()


# ---------------------------------------------------------------- in a browser


def test_missing_chromium_skips_on_a_developer_machine_and_fails_in_ci(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(shutil, "which", lambda name: None)
    monkeypatch.delenv("CI", raising=False)
    with pytest.raises(pytest.skip.Exception, match="chromium is not installed"):
        chromium_or_skip()
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception, match="but CI is set"):
        chromium_or_skip()


def test_missing_playwright_skips_a_driven_browser_test_on_a_developer_machine_and_fails_in_ci(
        monkeypatch: pytest.MonkeyPatch) -> None:
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec", lambda name, *rest: None if name == "playwright" else real(name, *rest))
    monkeypatch.delenv("CI", raising=False)
    with pytest.raises(pytest.skip.Exception, match="playwright is not installed"):
        chromium_or_skip(playwright=True)
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception, match="but CI is set"):
        chromium_or_skip(playwright=True)


def run_chromium(binary: str, profile: Path, *args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([binary, *CHROMIUM_FLAGS, f"--user-data-dir={profile}", *args],
                          capture_output=True, text=True, timeout=180, check=False)


@pytest.mark.browser
def test_page_renders_in_headless_chromium(tmp_path: Path) -> None:
    binary = chromium_or_skip()
    html_file = tmp_path / "report.html"
    html_file.write_text(html_report(tiny_report(curve=True), gold_records(), predictions()), encoding="utf-8")
    url = html_file.as_uri()

    dumped = run_chromium(binary, tmp_path / "profile-dom", "--dump-dom", url)
    assert dumped.returncode == 0, dumped.stderr[-2000:]
    dom = dumped.stdout
    body = re.search(r'<table id="scores-alpha" class="scores">.*?<tbody>(.*?)</tbody>', dom, re.S)
    assert body is not None
    rows = re.findall(r"<tr[^>]*><th>([^<]+)</th>", body.group(1))
    assert rows == [*ROLES, "micro", "macro", "trigger", "micro, trigger link ignored"]
    assert 'id="sentences"' in dom
    marks = marks_of(dom)
    assert ("gold", ("role-path",), "the <ford>") in marks  # the browser decoded &lt; back to <
    assert ("gold", ("role-path", "role-destination"), "Kell Ferry") in marks
    assert ("alpha", ("role-path", "nomatch"), "the road") in marks
    assert ("beta", ("trigger", "nomatch"), "rose") in marks

    shot = tmp_path / "report.png"
    shown = run_chromium(binary, tmp_path / "profile-shot", f"--screenshot={shot}", "--window-size=1280,2000", url)
    assert shown.returncode == 0, shown.stderr[-2000:]
    assert shot.exists() and shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert shot.stat().st_size > 30_000
    print(f"screenshot of the report: {shot}")


def test_the_role_palette_stays_apart_under_colour_vision_deficiencies_and_keeps_text_readable():
    import itertools

    import numpy as np
    from colorspacious import cspace_convert, deltaE

    from trainer.reports.html import ROLE_COLOURS
    from trainer.reports.plots import CONFIG_COLOURS

    def rgb(colour):
        return np.array([int(colour[i:i + 2], 16) for i in (1, 3, 5)]) / 255

    def closest_pair(colours):
        """Smallest CAM02-UCS colour difference between any two, seen normally and with each full-severity
        deficiency (Machado et al. 2009 simulation, as colorspacious implements it)."""
        smallest = float("inf")
        for cvd in (None, "deuteranomaly", "protanomaly", "tritanomaly"):
            seen = [rgb(c) if cvd is None else
                    np.clip(cspace_convert(rgb(c), {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}, "sRGB1"), 0, 1)
                    for c in colours]
            smallest = min(smallest, min(float(deltaE(a, b, input_space="sRGB1")) for a, b in itertools.combinations(seen, 2)))
        return smallest

    def contrast_with_black(colour):
        # WCAG 2 relative luminance and contrast ratio (W3C WCAG 2.1, 1.4.6)
        linear = [v / 12.92 if v <= 0.04045 else ((v + 0.055) / 1.055) ** 2.4 for v in rgb(colour)]
        return (0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2] + 0.05) / 0.05

    # A CAM02-UCS difference above 10 is clearly visible side by side (a rule of thumb, from memory).
    assert closest_pair(ROLE_COLOURS.values()) > 14
    assert closest_pair(CONFIG_COLOURS[:6]) > 10
    assert min(contrast_with_black(c) for c in ROLE_COLOURS.values()) >= 9  # WCAG AAA asks 7:1
    old_toolkit_tints = ("#ffd8a8", "#a5d8ff", "#b2f2bb", "#eebefa")
    assert closest_pair(old_toolkit_tints) < 3  # the palette it replaces: deuteranomaly merges two roles


@contextmanager
def page_in_chromium(binary: str, html_file: Path) -> Iterator[Any]:
    """``html_file`` open in headless Chromium, driven by Playwright pointed at that binary (nothing downloaded)."""
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=binary, args=CHROMIUM_FLAGS)
        try:
            page = browser.new_page(viewport={"width": 1280, "height": 900})
            page.goto(html_file.as_uri())
            yield page
        finally:
            browser.close()


@pytest.mark.browser
def test_new_sections_render_in_chromium_both_modes_groups_confidence_warnings_holm(tmp_path: Path) -> None:
    """Exact/overlap, per book/doc, calibration and thresholds, the few-docs warning and Holm's column, as drawn."""
    binary = chromium_or_skip(playwright=True)
    html_file = tmp_path / "report.html"
    weighed = {"alpha": {"d1-s2": {("path", *at(S2, "the road")): [("gov_prep_cue:path", 1.5)]}}}
    html_file.write_text(html_report(tiny_report(curve=True), gold_records(), predictions(), explanations=weighed),
                         encoding="utf-8")
    shot = Path(os.environ.get("REPORT_SCREENSHOT") or tmp_path / "sections.png")
    with page_in_chromium(binary, html_file) as page:
        alpha = page.locator("#config-alpha")
        head = alpha.locator("table.matching thead th").all_inner_texts()
        assert head == ["score", "exact P", "exact R", "exact F1", "overlap P", "overlap R", "overlap F1"]
        assert alpha.locator("table.matching tbody th").all_inner_texts() == [*ROLES, "micro", "trigger"]
        assert alpha.locator("table.per-book tbody th").all_inner_texts() == ["d1", "d2"]
        assert alpha.locator("table.per-doc tbody th").all_inner_texts() == ["d1", "d2"]
        labels = alpha.locator("table.confidence tbody th").all_inner_texts()
        assert labels == ["trigger", *ROLES, "all_roles"]
        warning = alpha.locator("p.warning").first
        assert warning.is_visible() and "only 2 doc(s)" in warning.inner_text()
        assert warning.evaluate("e => getComputedStyle(e).backgroundColor") == "rgb(251, 237, 227)"
        figures = alpha.locator("img")
        assert figures.count() == 2
        sizes = figures.evaluate_all("imgs => imgs.map(i => [i.complete, i.naturalWidth, i.naturalHeight])")
        assert all(done and width > 300 and height > 200 for done, width, height in sizes)  # decoded PNGs
        holm = page.locator("#comparisons thead th").all_inner_texts()
        assert holm[-2:] == ["p", "p (Holm)"]
        curve = page.locator("#learning-curve table.curve tbody tr").first.locator("td").nth(3).inner_text()
        assert "–" in curve  # each learning-curve cell shows its interval under the F1
        hover = page.locator('.text.pred[data-config="alpha"] mark.nomatch').first.get_attribute("title")
        assert hover == "path of “followed” · weighed most: gov_prep_cue:path +1.50 (no gold span like it)"
        alpha.screenshot(path=str(shot))
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and shot.stat().st_size > 30_000
    print(f"screenshot of the new report sections: {shot}")


@pytest.mark.browser
def test_sentence_list_filters_by_config_doc_role_and_kind_and_pages_in_chromium(tmp_path: Path) -> None:
    binary = chromium_or_skip(playwright=True)
    html_file = tmp_path / "report.html"
    html_file.write_text(html_report(tiny_report(), gold_records(), predictions(), page_size=2), encoding="utf-8")
    shot = Path(os.environ.get("SENTENCES_SCREENSHOT") or tmp_path / "sentences.png")
    with page_in_chromium(binary, html_file) as page:

        def shown() -> list[str]:
            return [t.split(" ·")[0] for t in page.locator("ol.sentences > li:visible .sid").all_inner_texts()]

        status = page.locator("#page-status")
        assert shown() == ["d1-s1", "d1-s2"] and status.inner_text() == "sentences 1–2 of 4 matching (page 1 of 2)"
        assert page.locator("#page-previous").is_disabled()
        page.click("#page-next")
        assert shown() == ["d2-s1", "d2-s2"] and page.locator("#page-next").is_disabled()
        form = page.locator("#sentence-filter")
        form.locator('select[name="kind"]').select_option("boundary")
        assert shown() == ["d1-s2"] and status.inner_text() == "sentences 1–1 of 1 matching (page 1 of 1)"
        form.locator('select[name="kind"]').select_option("spurious")
        form.locator('select[name="config"]').select_option("beta")
        assert shown() == ["d2-s2"]
        form.locator('select[name="config"]').select_option("alpha")
        assert shown() == [] and status.inner_text() == "no sentence matches"
        form.locator('select[name="kind"]').select_option("error")
        form.locator('select[name="role"]').select_option("path")
        assert shown() == ["d1-s2"]  # alpha's only path error: the boundary in d1-s2
        form.locator('select[name="config"]').select_option("beta")
        form.locator('select[name="role"]').select_option("source")
        assert shown() == ["d1-s1"]  # beta missed the source "Caddow"
        for name in ("config", "role", "kind"):
            form.locator(f'select[name="{name}"]').select_option("")
        form.locator('select[name="doc"]').select_option("d2")
        assert shown() == ["d2-s1", "d2-s2"]
        form.locator('select[name="doc"]').select_option("")
        form.locator('select[name="size"]').select_option("25")
        assert shown() == ["d1-s1", "d1-s2", "d2-s1", "d2-s2"]
        page.locator("#sentences").screenshot(path=str(shot))
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and shot.stat().st_size > 20_000
    print(f"screenshot of the sentence list: {shot}")
