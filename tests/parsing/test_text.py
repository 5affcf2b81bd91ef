"""Plain text to sentence records: a paragraph longer than the parser takes is refused with its place."""

from __future__ import annotations

import pytest

from trainer.errors import UnreadableInputError
from trainer.parsing.text import paragraphs, sentence_records


def test_a_paragraph_over_the_parsers_limit_is_refused_with_its_offset(nlp):
    text = "We left Caddow.\n\n" + "We rode on and on. " * 10 + "\n"
    limit = nlp.max_length
    nlp.max_length = 100  # spaCy refuses texts longer than Language.max_length (spaCy docs, error E088)
    try:
        records = sentence_records(nlp, paragraphs(text), doc_name="book", source="book.txt")
        with pytest.raises(UnreadableInputError, match=r"book.txt: the paragraph at character 17 is 189 characters long, "
                                                       r"more than the parser takes \(100\)") as caught:
            list(records)
    finally:
        nlp.max_length = limit
    assert caught.value.exit_code == 2
    assert [r.text for r, _ in sentence_records(nlp, paragraphs("We left Caddow."), doc_name="b", source="b")] == \
        ["We left Caddow."]
