"""Character spans <-> tokens: exact token ranges, widening and dropping reported, BIO round trips."""

from __future__ import annotations

import spacy
from hypothesis import given
from hypothesis import strategies as st
from spacy.tokens import Doc

from trainer.parsing.align import MAX_EXAMPLES, AlignmentReport, bio_tags, bio_to_ranges, span_to_tokens, tokens_to_span

VOCAB = spacy.blank("en").vocab
# "We rode to Kell Ferry." -> We 0-2, rode 3-7, to 8-10, Kell 11-15, Ferry 16-21, . 21-22
WORDS = ["We", "rode", "to", "Kell", "Ferry", "."]
SPACES = [True, True, True, True, False, False]


def doc() -> Doc:
    return Doc(VOCAB, words=WORDS, spaces=SPACES)


def test_the_fixture_text() -> None:
    assert doc().text == "We rode to Kell Ferry."


def test_span_on_token_boundaries_maps_exactly_and_is_not_reported() -> None:
    report = AlignmentReport()
    assert span_to_tokens(doc(), (11, 21), report) == (3, 5)
    assert span_to_tokens(doc(), (0, 2), report) == (0, 1)
    assert report == AlignmentReport(spans=2, widened=0, dropped=0, examples=[])


def test_span_cutting_tokens_is_widened_to_whole_tokens_and_reported() -> None:
    report = AlignmentReport()
    assert span_to_tokens(doc(), (12, 18), report) == (3, 5)
    assert report == AlignmentReport(
        spans=1, widened=1, dropped=0, examples=["widened: 'ell Fe' at [12, 18] -> 'Kell Ferry'"]
    )


def test_whitespace_only_span_is_dropped_and_reported() -> None:
    report = AlignmentReport()
    assert span_to_tokens(doc(), (7, 8), report) is None
    assert report == AlignmentReport(spans=1, widened=0, dropped=1, examples=["dropped: ' ' at [7, 8] -> ''"])


def test_whitespace_only_span_over_a_whitespace_token_is_dropped() -> None:
    spaced = spacy.blank("en")("We  rode")  # the tokenizer makes a whitespace token of the second space
    assert [t.text for t in spaced] == ["We", " ", "rode"]
    report = AlignmentReport()
    assert span_to_tokens(spaced, (2, 4), report) is None
    assert span_to_tokens(spaced, (3, 4), report) is None
    assert (report.spans, report.widened, report.dropped) == (2, 0, 2)


def test_no_report_needed() -> None:
    assert span_to_tokens(doc(), (12, 18)) == (3, 5)
    assert span_to_tokens(doc(), (7, 8)) is None


def test_tokens_to_span_gives_character_offsets_back() -> None:
    assert tokens_to_span(doc(), 3, 5) == (11, 21)
    assert tokens_to_span(doc(), 4, 6) == (16, 22)
    assert tokens_to_span(doc(), 0, 1) == (0, 2)


def test_bio_tags_and_back() -> None:
    labelled = [((0, 1), "mover"), ((3, 5), "destination")]
    tags = bio_tags(doc(), labelled)
    assert tags == ["B-mover", "O", "O", "B-destination", "I-destination", "O"]
    assert bio_to_ranges(tags) == [(0, 1, "mover"), (3, 5, "destination")]


def test_adjacent_spans_of_the_same_label_stay_apart() -> None:
    tags = bio_tags(doc(), [((3, 4), "path"), ((4, 5), "path")])
    assert tags == ["O", "O", "O", "B-path", "B-path", "O"]
    assert bio_to_ranges(tags) == [(3, 4, "path"), (4, 5, "path")]


def test_overlapping_span_is_left_out_and_reported() -> None:
    report = AlignmentReport()
    tags = bio_tags(doc(), [((3, 5), "destination"), ((4, 6), "path")], report)
    assert tags == ["O", "O", "O", "B-destination", "I-destination", "O"]
    assert report == AlignmentReport(
        spans=0, widened=0, dropped=1, examples=["overlaps another span: 'Ferry.' at [16, 22] -> 'path'"]
    )


def test_stray_inside_tags_start_new_ranges() -> None:
    assert bio_to_ranges(["I-path", "I-path", "O", "B-source", "I-mover", "I-mover"]) == [
        (0, 2, "path"),
        (3, 4, "source"),
        (4, 6, "mover"),
    ]


def test_report_merge_adds_counts_and_caps_examples() -> None:
    first = AlignmentReport(spans=3, widened=1, dropped=0, examples=[f"a{i}" for i in range(MAX_EXAMPLES - 2)])
    second = AlignmentReport(spans=2, widened=0, dropped=2, examples=["b0", "b1", "b2"])
    first.merge(second)
    assert (first.spans, first.widened, first.dropped) == (5, 1, 2)
    assert first.examples == [f"a{i}" for i in range(MAX_EXAMPLES - 2)] + ["b0", "b1"]


@st.composite
def labelled_ranges(draw: st.DrawFn) -> tuple[int, list[tuple[tuple[int, int], str]]]:
    """A sentence length and non-overlapping labelled token ranges in it."""
    length = draw(st.integers(min_value=1, max_value=12))
    cuts = sorted(draw(st.sets(st.integers(min_value=0, max_value=length), min_size=2, max_size=8)))
    ranges = []
    for first, end in zip(cuts, cuts[1:]):
        if draw(st.booleans()):
            ranges.append(((first, end), draw(st.sampled_from(["mover", "path", "TRIGGER"]))))
    return length, ranges


@given(labelled_ranges())
def test_bio_round_trip(case: tuple[int, list[tuple[tuple[int, int], str]]]) -> None:
    length, ranges = case
    sentence = Doc(VOCAB, words=["w"] * length)
    assert bio_to_ranges(bio_tags(sentence, ranges)) == [(f, e, label) for (f, e), label in ranges]
