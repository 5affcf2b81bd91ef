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
