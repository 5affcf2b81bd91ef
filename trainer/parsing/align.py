"""Alignment of character spans to tokens, and back.

Policy (see docs/features.md): a gold span that does not fall on token
boundaries is widened to the smallest run of whole tokens covering it, and is
reported (count and examples). A span that covers no token at all (only
whitespace) cannot be learned from and is reported as dropped. Predictions are
turned back into character offsets from the tokens they cover, so scoring
always stays in characters, against the gold spans as written.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from spacy.tokens import Doc

MAX_EXAMPLES = 10


@dataclass
class AlignmentReport:
    """Spans seen, spans widened to token boundaries, spans dropped, with examples."""

    spans: int = 0
    widened: int = 0
    dropped: int = 0
    examples: list[str] = field(default_factory=list)

    def note(self, kind: str, text: str, span: tuple[int, int], tokens: str) -> None:
        if len(self.examples) < MAX_EXAMPLES:
            self.examples.append(f"{kind}: {text[span[0]:span[1]]!r} at {list(span)} -> {tokens!r}")

    def merge(self, other: "AlignmentReport") -> None:
        self.spans += other.spans
        self.widened += other.widened
        self.dropped += other.dropped
        self.examples.extend(other.examples[: max(0, MAX_EXAMPLES - len(self.examples))])


def span_to_tokens(doc: Doc, span: tuple[int, int], report: AlignmentReport | None = None) -> tuple[int, int] | None:
    """Token indices ``[first, last + 1)`` covering a character span, or None if it covers no token."""
    if report is not None:
        report.spans += 1
    piece = doc.char_span(span[0], span[1], alignment_mode="expand")
    # Whitespace-only spans are dropped even where the tokenizer made a whitespace token ("We  rode").
    if piece is None or len(piece) == 0 or all(t.is_space for t in piece):
        if report is not None:
            report.dropped += 1
            report.note("dropped", doc.text, span, "")
        return None
    if report is not None and (piece.start_char, piece.end_char) != tuple(span):
        report.widened += 1
        report.note("widened", doc.text, span, piece.text)
    return piece.start, piece.end


def tokens_to_span(doc: Doc, first: int, end: int) -> tuple[int, int]:
    """Character offsets ``[start, end)`` of the tokens ``doc[first:end]``."""
    return doc[first].idx, doc[end - 1].idx + len(doc[end - 1].text)


def bio_tags(doc: Doc, labelled: list[tuple[tuple[int, int], str]], report: AlignmentReport | None = None) -> list[str]:
    """BIO tags for labelled token ranges; where two ranges overlap the earlier-listed one wins."""
    tags = ["O"] * len(doc)
    for (first, end), label in labelled:
        if any(tag != "O" for tag in tags[first:end]):
            if report is not None:
                report.dropped += 1
                report.note("overlaps another span", doc.text, tokens_to_span(doc, first, end), label)
            continue
        tags[first] = f"B-{label}"
        for i in range(first + 1, end):
            tags[i] = f"I-{label}"
    return tags


def bio_to_ranges(tags: list[str]) -> list[tuple[int, int, str]]:
    """Token ranges ``(first, end, label)`` of a BIO sequence; a stray I- starts a new range."""
    ranges: list[tuple[int, int, str]] = []
    for i, tag in enumerate(tags):
        if tag == "O":
            continue
        prefix, label = tag.split("-", 1)
        if prefix == "I" and ranges and ranges[-1][1] == i and ranges[-1][2] == label:
            ranges[-1] = (ranges[-1][0], i + 1, label)
        else:
            ranges.append((i, i + 1, label))
    return ranges
