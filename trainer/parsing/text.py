"""Plain text into sentence records, keeping offsets into the original file.

A plain-text book is read paragraph by paragraph (paragraphs end at blank
lines), so a long book is never held in memory whole, and each paragraph is
split into sentences by the pipeline's parser. Each sentence becomes a record
whose ``meta`` holds the source file, the code-point ``offset`` of its first
character in the file (after a UTF-8 byte-order mark, if any, is dropped;
line ends are counted as they are, ``\\r\\n`` as two) and the ``paragraph``
offset it belongs to, so ``offset + span[0]`` points into the original text
and an interrupted extraction can resume at a paragraph boundary. The parse
is kept with the record, so each sentence is parsed once.
"""

from __future__ import annotations

from collections import deque
from pathlib import Path
from typing import Iterable, Iterator

from spacy.language import Language
from spacy.tokens import Doc

from trainer.corpus.records import Record
from trainer.errors import UnreadableInputError


def read_text_file(path: Path | str) -> str:
    """The file's text exactly as offsets count it: UTF-8, BOM dropped, line ends untouched."""
    with open(path, encoding="utf-8-sig", newline="") as handle:
        return handle.read()


def split_paragraphs(lines: Iterable[str]) -> Iterator[tuple[int, str]]:
    """``(offset, paragraph)`` for each paragraph of an iterable of lines (line ends kept), whitespace trimmed."""
    position = 0
    start = None
    chunk: list[str] = []
    for line in lines:
        if line.strip():
            if start is None:
                start = position
            chunk.append(line)
        elif chunk:
            yield _trimmed(start, "".join(chunk))
            chunk, start = [], None
        position += len(line)
    if chunk:
        yield _trimmed(start, "".join(chunk))


def _trimmed(start: int, text: str) -> tuple[int, str]:
    return start + len(text) - len(text.lstrip()), text.strip()


def iter_paragraphs(path: Path | str) -> Iterator[tuple[int, str]]:
    """Paragraphs of a UTF-8 text file, streamed; offsets as :func:`read_text_file` counts them."""
    with open(path, encoding="utf-8-sig", newline="") as handle:
        yield from split_paragraphs(handle)


def paragraphs(text: str) -> Iterator[tuple[int, str]]:
    """Paragraphs of a string (see :func:`split_paragraphs`)."""
    return split_paragraphs(text.splitlines(keepends=True))


def sentence_id(doc_name: str, number: int) -> str:
    """The id of a plain-text book's sentence: ``<doc_name>-s00001`` for the first."""
    return f"{doc_name}-s{number:05d}"


def sentence_records(
    nlp: Language, paragraph_items: Iterable[tuple[int, str]], *, doc_name: str, source: str,
    batch_size: int = 32, first_number: int = 1,
) -> Iterator[tuple[Record, Doc]]:
    """Sentence records with their parses, in text order, ids ``<doc_name>-s00001``...

    ``first_number`` continues the numbering when resuming part-way through a text.
    """
    number = first_number - 1
    pending: deque[int] = deque()  # offsets of paragraphs handed to the parser and not yet returned

    def texts() -> Iterator[str]:
        for offset, paragraph in paragraph_items:
            if len(paragraph) > nlp.max_length:
                raise UnreadableInputError(
                    f"{source}: the paragraph at character {offset} is {len(paragraph):,} characters long, "
                    f"more than the parser takes ({nlp.max_length:,})",
                    "break it into shorter paragraphs with blank lines")
            pending.append(offset)
            yield paragraph

    for parsed in nlp.pipe(texts(), batch_size=batch_size):
        offset = pending.popleft()
        for sentence in parsed.sents:
            words = [t.i for t in sentence if not t.is_space]
            if not words:
                continue
            span = parsed[words[0] : words[-1] + 1]
            number += 1
            record = Record(
                id=sentence_id(doc_name, number),
                doc=doc_name,
                text=span.text,
                events=None,
                meta={"source": source, "offset": offset + span.start_char, "paragraph": offset},
            )
            yield record, span.as_doc()
