"""Plain text into sentence records, keeping offsets into the original file.

A plain-text book is split into paragraphs (blank lines) and each paragraph
into sentences by the pipeline's parser. Each sentence becomes a record whose
``meta`` holds the file it came from and the code-point offset of its first
character in that file (after a UTF-8 byte-order mark, if any, is removed), so
``offset + span[0]`` points into the original text. The parse is kept with the
record, so each sentence is parsed once.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Iterator

from spacy.language import Language
from spacy.tokens import Doc

from trainer.corpus.records import Record

_PARAGRAPH_BREAK = re.compile(r"\n[ \t]*\n")


def paragraphs(text: str) -> Iterator[tuple[int, str]]:
    """``(offset, paragraph)`` for each non-blank paragraph, with its surrounding whitespace trimmed."""
    start = 0
    for match in list(_PARAGRAPH_BREAK.finditer(text)) + [None]:
        end = match.start() if match else len(text)
        chunk = text[start:end]
        stripped = chunk.strip()
        if stripped:
            yield start + (len(chunk) - len(chunk.lstrip())), stripped
        start = match.end() if match else len(text)


def read_text_file(path: Path | str) -> str:
    """The file's text exactly as offsets count it: UTF-8, BOM dropped, line ends untouched."""
    with open(path, encoding="utf-8-sig", newline="") as handle:
        return handle.read()


def sentence_records(
    nlp: Language, text: str, *, doc_name: str, source: str, batch_size: int = 32
) -> Iterator[tuple[Record, Doc]]:
    """Sentence records with their parses, in text order, ids ``<doc_name>-s00001``..."""
    number = 0
    items = list(paragraphs(text))
    for (offset, _), parsed in zip(items, nlp.pipe((p for _, p in items), batch_size=batch_size)):
        for sentence in parsed.sents:
            words = [t.i for t in sentence if not t.is_space]
            if not words:
                continue
            span = parsed[words[0] : words[-1] + 1]
            number += 1
            record = Record(
                id=f"{doc_name}-s{number:05d}",
                doc=doc_name,
                text=span.text,
                events=None,
                meta={"source": source, "offset": offset + span.start_char},
            )
            yield record, span.as_doc()
