"""Streaming extraction: batches, progress, and resuming an interrupted run to the same bytes."""

from __future__ import annotations

import pytest

from tests.conftest import DEMO
from trainer.config import config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.models.apply import extract_file, input_note_path, partial_path, resume_point
from trainer.models.training import fit_extractor
from trainer.parsing.text import paragraphs, read_text_file, split_paragraphs

CHAPTER = DEMO / "unannotated" / "delacott-survey-3.txt"


@pytest.fixture(scope="module")
def rules_model(nlp, demo_train):
    config = config_from_dict({"parser": {"use_cache": False}, "trigger_model": {"kind": "rules"},
                               "role_model": {"kind": "rules"}})
    return fit_extractor(read_corpus([demo_train / "quarne-salt-1.jsonl"]).records, config, nlp=nlp)


class Stop(Exception):
    pass


def interrupted(model, nlp, source, target, fmt, after_batches):
    """Run an extraction that dies after some batches, leaving a torn last line behind."""
    calls = []

    def die(sentences, share):
        calls.append(share)
        if len(calls) == after_batches:
            raise Stop

    with pytest.raises(Stop):
        extract_file(model, source, target, input_format=fmt, nlp=nlp, batch_size=16, on_progress=die)
    with open(partial_path(target), "a", encoding="utf-8") as out:
        out.write('{"id": "torn-reco')  # a write cut off by the crash


@pytest.mark.parametrize("fmt, source", [("text", CHAPTER), ("jsonl", DEMO / "test" / "lisle-letters-1.jsonl")])
def test_a_resumed_extraction_equals_an_uninterrupted_one(rules_model, nlp, tmp_path, fmt, source):
    whole = tmp_path / "whole.jsonl"
    summary = extract_file(rules_model, source, whole, input_format=fmt, nlp=nlp, batch_size=16)
    broken = tmp_path / "broken.jsonl"
    broken.write_text("an earlier output\n")
    interrupted(rules_model, nlp, source, broken, fmt, after_batches=2)
    assert broken.read_text() == "an earlier output\n"  # untouched until the new output is complete
    kept = resume_point(partial_path(broken), plain_text=fmt == "text").records
    assert 0 < kept <= 32
    resumed = extract_file(rules_model, source, broken, input_format=fmt, nlp=nlp, batch_size=16, resume=True)
    assert resumed.resumed == kept
    assert resumed.sentences + kept == summary.sentences
    assert broken.read_bytes() == whole.read_bytes()
    assert not partial_path(broken).exists() and input_note_path(broken).exists()


def test_resume_refuses_another_input(rules_model, nlp, tmp_path):
    from trainer.errors import CorpusError

    out = tmp_path / "o.jsonl"
    extract_file(rules_model, DEMO / "test" / "lisle-letters-1.jsonl", out, input_format="jsonl", nlp=nlp)
    with pytest.raises(CorpusError, match="resume only with the same input"):
        extract_file(rules_model, DEMO / "test" / "ruddock-drove-1.jsonl", out, input_format="jsonl", nlp=nlp, resume=True)


def test_progress_reports_growing_counts_up_to_the_whole_input(rules_model, nlp, tmp_path):
    seen = []
    extract_file(rules_model, CHAPTER, tmp_path / "o.jsonl", nlp=nlp, batch_size=40,
                 on_progress=lambda n, share: seen.append((n, share)))
    assert [n for n, _ in seen] == sorted(n for n, _ in seen)
    assert all(0 < share <= 1 for _, share in seen)
    assert seen[-1][1] == 1.0 and seen[-2][1] < 1.0


def test_streamed_paragraphs_match_the_whole_text_offsets(tmp_path):
    text = "\ufeffFirst line,\r\nsame paragraph.\r\n\r\n  Second — para.\n\n\n\tThird.\n"
    path = tmp_path / "t.txt"
    path.write_bytes(text.encode("utf-8"))
    original = read_text_file(path)
    streamed = list(split_paragraphs(open(path, encoding="utf-8-sig", newline="")))
    assert streamed == list(paragraphs(original))
    assert [p for _, p in streamed] == ["First line,\r\nsame paragraph.", "Second — para.", "Third."]
    for offset, paragraph in streamed:
        assert original[offset : offset + len(paragraph)] == paragraph


def test_a_second_writer_to_one_output_is_refused_and_the_output_kept(rules_model, nlp, tmp_path):
    import subprocess
    import sys

    from trainer.errors import OutputError
    from trainer.outputs import lock_path

    out = tmp_path / "o.jsonl"
    out.write_text("earlier\n")
    first = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])  # stands for a running extract
    try:
        lock_path(out).write_text(f"{first.pid}\n")
        with pytest.raises(OutputError, match=f"another itinerant process \\(pid {first.pid}\\) is writing it"):
            extract_file(rules_model, CHAPTER, out, nlp=nlp)
    finally:
        first.kill()
        first.wait()
    assert out.read_text() == "earlier\n" and not partial_path(out).exists()


def test_resume_of_a_partial_output_refuses_another_input(rules_model, nlp, tmp_path):
    from trainer.errors import CorpusError

    out = tmp_path / "o.jsonl"
    interrupted(rules_model, nlp, CHAPTER, out, "text", after_batches=1)
    other = tmp_path / "other.txt"
    other.write_text(CHAPTER.read_text(encoding="utf-8").replace("the", "a"), encoding="utf-8")
    with pytest.raises(CorpusError, match="o.jsonl.partial was not made from this input"):
        extract_file(rules_model, other, out, nlp=nlp, resume=True)
    with pytest.raises(CorpusError, match="not made from this input"):  # same bytes, another doc name: other ids
        extract_file(rules_model, CHAPTER, out, nlp=nlp, resume=True, doc_name="renamed")
    assert not out.exists() and partial_path(out).exists()
    input_note_path(partial_path(out)).unlink()  # an output whose input nobody recorded
    with pytest.raises(CorpusError, match="o.jsonl.partial has no readable record of its input"):
        extract_file(rules_model, CHAPTER, out, nlp=nlp, resume=True)


def test_an_extraction_output_follows_the_umask_and_may_not_be_its_input(rules_model, nlp, tmp_path):
    import os
    import stat
    import shutil

    from trainer.errors import OutputError

    old = os.umask(0o027)
    try:
        extract_file(rules_model, DEMO / "test" / "lisle-letters-1.jsonl", tmp_path / "o.jsonl", input_format="jsonl", nlp=nlp)
    finally:
        os.umask(old)
    assert stat.S_IMODE((tmp_path / "o.jsonl").stat().st_mode) == 0o640  # 0666 & ~0027
    source = tmp_path / "in.jsonl"
    shutil.copy(DEMO / "test" / "lisle-letters-1.jsonl", source)
    before = source.read_bytes()
    with pytest.raises(OutputError, match="also an input"):
        extract_file(rules_model, source, source, input_format="jsonl", nlp=nlp)
    assert source.read_bytes() == before


def test_a_full_disk_during_extraction_is_a_message_and_keeps_the_earlier_output(rules_model, nlp, tmp_path, monkeypatch):
    import errno

    from trainer import outputs
    from trainer.errors import OutputError

    out = tmp_path / "o.jsonl"
    out.write_text("earlier\n")

    real, calls = outputs.os.fsync, []

    def full_after_the_side_file(fd):  # the side file is written first; the disk fills before the records are
        calls.append(fd)
        if len(calls) > 1:
            raise OSError(errno.ENOSPC, "No space left on device")
        real(fd)

    monkeypatch.setattr(outputs.os, "fsync", full_after_the_side_file)
    with pytest.raises(OutputError, match="o.jsonl: writing failed \\(No space left on device\\)"):
        extract_file(rules_model, DEMO / "test" / "lisle-letters-1.jsonl", out, input_format="jsonl", nlp=nlp)
    assert out.read_text() == "earlier\n"


@pytest.mark.parametrize("fmt, name, body", [
    ("text", "book.txt", "We left Caddow at dawn.\n\nThen we rode to M\xe9rle.\n".encode("latin-1")),
    ("jsonl", "book.jsonl", '{"id": "a", "doc": "d", "text": "We rode to M\xe9rle."}\n'.encode("latin-1")),
])
def test_an_input_that_is_not_utf8_is_located_and_leaves_no_partial_output(rules_model, nlp, tmp_path, fmt, name, body):
    from trainer.errors import UnreadableInputError

    source, out = tmp_path / name, tmp_path / "o.jsonl"
    source.write_bytes(body)
    out.write_text("earlier\n")
    bad = body.index(b"\xe9")
    line = body[:bad].count(b"\n") + 1
    with pytest.raises(UnreadableInputError, match=f"not UTF-8 text: line {line}, byte offset {bad} \\(0xe9\\)"):
        extract_file(rules_model, source, out, input_format=fmt, nlp=nlp)
    assert out.read_text() == "earlier\n"  # the earlier output is kept, and no partial file or its note is left
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([name, "o.jsonl"])
