"""suggest_to_file refuses an input without unannotated sentences (suggesting itself: tests/annotation/test_suggest.py)."""

from __future__ import annotations

import pytest

from trainer.errors import CorpusError
from trainer.experiment.suggesting import suggest_to_file


@pytest.mark.parametrize("name, body, cause", [
    ("blank.txt", "\n  \n\n", "blank.txt: holds no sentences (empty or blank lines only)"),
    ("done.jsonl", '{"id": "a", "doc": "d", "text": "We rode on.", "events": []}\n'
                   '{"id": "b", "doc": "d", "text": "We left Caddow.", "events": [{"trigger": [3, 7], "roles": []}]}\n',
     "done.jsonl: all its 2 record(s) are annotated"),
])
def test_an_input_without_unannotated_sentences_is_refused_and_nothing_written(rules_model_file, tmp_path, name, body, cause):
    source, out = tmp_path / name, tmp_path / "batch.jsonl"
    source.write_text(body, encoding="utf-8")
    with pytest.raises(CorpusError) as raised:
        suggest_to_file(rules_model_file, source, out, count=3)
    assert raised.value.cause.startswith(f"{source.parent}/{cause}")
    assert not out.exists()



def test_a_plain_text_file_that_is_not_utf8_is_refused_with_its_first_bad_byte(rules_model_file, tmp_path):
    from trainer.errors import UnreadableInputError

    source, out = tmp_path / "book.txt", tmp_path / "batch.jsonl"
    source.write_bytes("We rode on.\nWe went to F\u00fcssen.\n".encode("latin-1"))
    with pytest.raises(UnreadableInputError) as raised:
        suggest_to_file(rules_model_file, source, out, count=3)
    assert raised.value.cause == f"{source}: not UTF-8 text: line 2, byte offset 24 (0xfc)"  # 12 bytes on line 1, then "We went to F"
    assert not out.exists()


def test_fewer_suggestions_than_asked_say_why(nlp, demo_train, tmp_path):
    from typer.testing import CliRunner

    from trainer.cli import app
    from trainer.config import config_from_dict
    from trainer.corpus.reader import read_corpus
    from trainer.models.training import fit_extractor, save_extractor

    config = config_from_dict({"parser": {"use_cache": False}, "trigger_model": {"kind": "crf", "iterations": 10},
                               "role_model": {"kind": "crf", "iterations": 10}})
    records = read_corpus([demo_train / "quarne-salt-1.jsonl"]).records
    model = tmp_path / "crf.itin"
    save_extractor(fit_extractor(records, config, nlp=nlp), model, records=records, training_seconds=0.0)
    pool = tmp_path / "pool.jsonl"
    texts = ["We left Caddow at dawn."] * 3 + ["We left Caddow at dawn again."] * 3  # word-set Jaccard 5/6 >= 0.8
    pool.write_text("".join(f'{{"id": "u{i}", "doc": "d", "text": "{t}"}}\n' for i, t in enumerate(texts)),
                    encoding="utf-8")
    result = CliRunner().invoke(app, ["suggest", str(model), str(pool), "-o", str(tmp_path / "b.jsonl"), "-n", "5"])
    assert result.exit_code == 0, result.output
    assert "1 of 6 unannotated record(s) suggested" in result.output
    assert "note: 5 asked for; the others are near duplicates of records already chosen" in result.output
    assert "at least 80% of their words shared" in result.output
