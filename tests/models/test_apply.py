"""Streaming extraction: batches, progress, and resuming an interrupted run to the same bytes."""

from __future__ import annotations

import pytest

from tests.conftest import DEMO
from trainer.config import config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.models.apply import extract_file, resume_point
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
    with open(target, "a", encoding="utf-8") as out:
        out.write('{"id": "torn-reco')  # a write cut off by the crash


@pytest.mark.parametrize("fmt, source", [("text", CHAPTER), ("jsonl", DEMO / "test" / "lisle-letters-1.jsonl")])
def test_a_resumed_extraction_equals_an_uninterrupted_one(rules_model, nlp, tmp_path, fmt, source):
    whole = tmp_path / "whole.jsonl"
    summary = extract_file(rules_model, source, whole, input_format=fmt, nlp=nlp, batch_size=16)
    broken = tmp_path / "broken.jsonl"
    interrupted(rules_model, nlp, source, broken, fmt, after_batches=2)
    kept = resume_point(broken, plain_text=fmt == "text").records
    assert 0 < kept <= 32
    resumed = extract_file(rules_model, source, broken, input_format=fmt, nlp=nlp, batch_size=16, resume=True)
    assert resumed.resumed == kept
    assert resumed.sentences + kept == summary.sentences
    assert broken.read_bytes() == whole.read_bytes()


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
