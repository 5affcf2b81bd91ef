"""The review page driven in real headless Chromium (Debian's /usr/bin/chromium, through Playwright's Python package).

One session, as an annotator works: open a suggested batch, accept a sentence,
correct a role span by dragging over words, add the event the model missed
with keys only, reload, and find exactly those changes in the file; the file
passes the rules of `itinerant check` and merges into the corpus. Then a
change on a copy that went stale (the file edited elsewhere) is refused on
the page and the file keeps the other edit. And a change made while the
server is down waits in the browser, tab closed or not, until it is back.
"""

from __future__ import annotations

import os
import shutil
import signal
from pathlib import Path

import pytest
from review_samples import demo_records, start_server, suggestion, write_batch

from tests.conftest import CHROMIUM_FLAGS, chromium_or_skip

from trainer.annotation.merge import merge_files
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.provenance import events_key
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.corpus.validate import check_files

BOOK = Path(__file__).resolve().parents[3] / "demo_annotations" / "test" / "lisle-letters-1.jsonl"
ACCEPTED, CORRECTED, COMPLETED = "lisle-letters-1-s002", "lisle-letters-1-s004", "lisle-letters-1-s005"


@pytest.fixture
def batch(tmp_path: Path) -> Path:
    """Three suggestions: one right, one with a path cut short ('river road'), one missing the event of 'walk'."""
    gold = demo_records()
    s004 = gold[CORRECTED].events[0]
    short_path = Event(s004.trigger, tuple(RoleSpan(r.role, (25, 35) if r.role == "path" else r.span) for r in s004.roles))
    path = tmp_path / "batch-01.jsonl"
    write_batch(path, [suggestion(gold[ACCEPTED], gold[ACCEPTED].events, 1),
                       suggestion(gold[CORRECTED], (short_path,), 2),
                       suggestion(gold[COMPLETED], gold[COMPLETED].events[:1], 3)])
    return path


@pytest.mark.browser
def test_an_annotation_session_in_chromium_saves_exactly_the_changes_made(batch: Path, tmp_path: Path) -> None:
    binary = chromium_or_skip(playwright=True)
    from playwright.sync_api import expect, sync_playwright

    suggested_copy, session_copy = tmp_path / "suggested.jsonl", tmp_path / "after-session.jsonl"
    shutil.copy(batch, suggested_copy)
    process, url = start_server(batch)
    try:
        with sync_playwright() as playwright:
            browser = playwright.chromium.launch(executable_path=binary, args=CHROMIUM_FLAGS)
            page = browser.new_page(viewport={"width": 1280, "height": 900})
            page.goto(url)
            expect(page.locator("#counter")).to_have_text("reviewed 0 / 3")
            expect(page.locator("#record-id")).to_contain_text(ACCEPTED)
            tokens = page.locator("#sentence .tok")
            # The model's spans show their confidence; the key table is on the page.
            expect(page.locator("#sentence .tag.t.model")).to_have_text("trigger 0.85")
            expect(page.locator("#key-table")).to_contain_text("accept the sentence as it stands")

            page.keyboard.press("a")  # accept as is: gold, and on to the next sentence
            expect(page.locator("#record-id")).to_contain_text(CORRECTED)
            expect(page.locator("#save-state")).to_have_text("all changes saved")

            # Correct the path 'river road' to 'the river road' by dragging from 'the' to 'road', then its role key.
            first, last = tokens.nth(4).bounding_box(), tokens.nth(6).bounding_box()
            assert tokens.nth(4).inner_text() == "the" and tokens.nth(6).inner_text() == "road"
            page.mouse.move(first["x"] + 3, first["y"] + first["height"] / 2)
            page.mouse.down()
            page.mouse.move(first["x"] + 40, first["y"] + first["height"] / 2, steps=3)
            page.mouse.move(last["x"] + last["width"] - 3, last["y"] + last["height"] / 2, steps=5)
            page.mouse.up()
            page.keyboard.press("3")
            expect(page.locator("#message")).to_have_text("path corrected: river road → the river road")
            expect(page.locator("#save-state")).to_have_text("all changes saved")

            # Add the missed event with keys only: 'walk' is the trigger, 'we' its mover, 'the bridge' its path.
            page.keyboard.press("n")
            expect(page.locator("#record-id")).to_contain_text(COMPLETED)
            page.keyboard.press("Home")
            for _ in range(10):
                page.keyboard.press("ArrowRight")
            page.keyboard.press("t")
            page.keyboard.press("Home")
            for _ in range(3):
                page.keyboard.press("ArrowRight")
            page.keyboard.press("1")
            for _ in range(9):
                page.keyboard.press("ArrowRight")
            page.keyboard.press("Shift+ArrowRight")
            page.keyboard.press("3")
            expect(page.locator("#save-state")).to_have_text("all changes saved")
            expect(page.locator("#events > li")).to_have_count(2)

            page.reload()
            expect(page.locator("#counter")).to_have_text("reviewed 3 / 3")
            page.keyboard.press("n")
            page.keyboard.press("n")
            expect(page.locator("#record-id")).to_contain_text(COMPLETED)
            expect(page.locator("#events > li").nth(1)).to_contain_text("walk")
            expect(page.locator("#status")).to_have_text("reviewed (corrected)")
            shutil.copy(batch, session_copy)
            shot = Path(os.environ.get("REVIEW_SCREENSHOT", tmp_path / "review-page.png"))
            page.screenshot(path=str(shot), full_page=True)
            assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

            # The file changes on disk behind the page's back: the page's next change is refused, nothing overwritten.
            elsewhere = read_corpus([batch]).records
            elsewhere[0] = elsewhere[0].with_events(())
            write_jsonl(elsewhere, batch)
            edited_elsewhere = batch.read_bytes()
            page.keyboard.press("X")  # delete the current event
            expect(page.locator("#banner")).to_contain_text("changed on disk since this page loaded it")
            expect(page.locator("#save-state")).to_have_text("1 change(s) not saved")
            assert batch.read_bytes() == edited_elsewhere
            browser.close()
    finally:
        process.kill()
        process.wait()

    # What the session saved (copied before the edit made elsewhere): exactly the three changes, nothing else.
    suggested = read_corpus([suggested_copy]).records
    saved = read_corpus([session_copy]).records
    gold = demo_records()

    def stamped(record: Record, events, provenance: str) -> Record:
        return Record(record.id, record.doc, record.text, tuple(events),
                      {"itinerant": {**record.meta["itinerant"], "provenance": provenance}})

    walk = Event((45, 49), (RoleSpan("mover", (14, 16)), RoleSpan("path", (57, 67))))
    corrected_path = Event(suggested[1].events[0].trigger, tuple(
        RoleSpan("path", (21, 35)) if r.role == "path" else r for r in suggested[1].events[0].roles), suggested[1].events[0].confidence)
    expected = [stamped(suggested[0], gold[ACCEPTED].events, "gold"),
                stamped(suggested[1], (corrected_path,), "corrected"),
                stamped(suggested[2], (*suggested[2].events, walk), "corrected")]
    assert all(s.same_content(e) for s, e in zip(saved, expected, strict=True))
    # Confidences: the accepted sentence lost them; untouched spans of edited ones keep the model's, new spans have none.
    assert [r.confidence for e in saved[0].events for r in e.roles] == [None, None]
    assert [(r.role, r.confidence) for r in saved[1].events[0].roles] == [("mover", 0.55), ("path", None), ("destination", 0.75)]
    assert [r.confidence for r in saved[2].events[1].roles] == [None, None] and saved[2].events[1].confidence is None
    check = check_files([session_copy])
    assert (check.errors, check.warnings) == ([], [])

    # The saved batch merges into the book, where these sentences were unannotated; they then hold the gold events.
    book = tmp_path / "book.jsonl"
    ids = {r.id for r in saved}
    write_jsonl([r.with_events(None) if r.id in ids else r for r in read_corpus([BOOK]).records], book)
    result = merge_files([book], [session_copy], tmp_path / "merged.jsonl")
    assert (result.conflicts, sorted(result.updated)) == ([], sorted(ids))
    merged = {r.id: r for r in read_corpus([tmp_path / "merged.jsonl"]).records}
    assert all(events_key(merged[i].events) == events_key(gold[i].events) for i in ids)


@pytest.mark.browser
def test_a_change_made_while_the_server_is_down_is_kept_and_sent_when_it_is_back(batch: Path) -> None:
    binary = chromium_or_skip(playwright=True)
    from playwright.sync_api import expect, sync_playwright

    process, url = start_server(batch)
    port = int(url.rsplit(":", 1)[1].strip("/"))
    try:
        with sync_playwright() as playwright:
            browser = playwright.chromium.launch(executable_path=binary, args=CHROMIUM_FLAGS)
            context = browser.new_context()
            page = context.new_page()
            page.goto(url)
            expect(page.locator("#counter")).to_have_text("reviewed 0 / 3")
            process.send_signal(signal.SIGKILL)
            process.wait()
            page.keyboard.press("a")  # accept the first sentence while nothing listens
            expect(page.locator("#save-state")).to_contain_text("not saved yet: the server does not answer")
            page.close()  # the tab goes too; the change waits in the browser's storage
            process, _ = start_server(batch, port)
            page = context.new_page()
            page.goto(url)
            expect(page.locator("#save-state")).to_have_text("all changes saved")
            expect(page.locator("#counter")).to_have_text("reviewed 1 / 3")
            browser.close()
    finally:
        process.kill()
        process.wait()
    first = read_corpus([batch]).records[0]
    assert (first.id, first.meta["itinerant"]["provenance"]) == (ACCEPTED, "gold")
