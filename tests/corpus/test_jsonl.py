"""The canonical JSONL reader and writer: exact round trips, editor quirks, random Unicode."""

from __future__ import annotations

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trainer.corpus.jsonl import dumps_record, not_utf8, record_from_dict, write_jsonl
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Event, Record, RoleSpan

SPEC_EXAMPLE = {
    "id": "ledger-2-s014",
    "doc": "ledger-2",
    "text": "At first light the pack train left Harrowgate and wound through the Sallow Gap towards the lake.",
    "events": [
        {"trigger": [30, 34], "roles": [{"role": "mover", "span": [15, 29]}, {"role": "source", "span": [35, 45]}]},
        {"trigger": [50, 55], "roles": [{"role": "mover", "span": [15, 29]}, {"role": "path", "span": [64, 78]},
                                        {"role": "destination", "span": [87, 95]}]},
    ],
}


def test_spec_example_reads_and_writes_back_identically(tmp_path):
    path = tmp_path / "a.jsonl"
    path.write_text(json.dumps(SPEC_EXAMPLE) + "\n", encoding="utf-8")
    record = read_corpus([path]).records[0]
    assert record.span_text(record.events[0].trigger) == "left"
    assert record.span_text(record.events[1].roles[1].span) == "the Sallow Gap"
    assert json.loads(dumps_record(record)) == SPEC_EXAMPLE


def test_negative_unannotated_and_meta_are_kept(tmp_path):
    records = [
        Record("a", "d", "The road runs north.", events=()),
        Record("b", "d", "Unread text.", events=None, meta={"page": 4, "nested": {"k": [1, 2]}}),
    ]
    path = tmp_path / "out.jsonl"
    write_jsonl(records, path)
    lines = path.read_text(encoding="utf-8").splitlines()
    assert json.loads(lines[0])["events"] == []
    assert "events" not in json.loads(lines[1])
    back = read_corpus([path]).records
    assert all(a.same_content(b) for a, b in zip(records, back))
    assert back[1].meta == {"page": 4, "nested": {"k": [1, 2]}}


def test_bom_crlf_and_blank_lines_are_tolerated_and_line_numbers_match_the_editor(tmp_path):
    path = tmp_path / "win.jsonl"
    first = json.dumps({"id": "a", "doc": "d", "text": "We left.", "events": []})
    bad = json.dumps({"id": "b", "doc": "d", "text": "x", "events": [{"trigger": [0, 9], "roles": []}]})
    path.write_bytes(("\ufeff" + first + "\r\n\r\n" + bad + "\r\n").encode("utf-8"))
    from trainer.corpus.validate import check_files

    result = check_files([path])
    assert [r.id for _, _, r in result.records] == ["a"]
    assert [(p.line, p.field) for p in result.errors] == [(3, "events[0].trigger")]


def test_non_ascii_offsets_count_code_points(tmp_path):
    text = "Ærnulf drove the beasts to Café Brûlé — at last."
    start = text.index("Café")
    record = Record("u", "d", text, events=(Event((7, 12), (RoleSpan("mover", (0, 6)), RoleSpan("destination", (start, start + 10)))),))
    path = tmp_path / "u.jsonl"
    write_jsonl([record], path)
    assert "Ærnulf" in path.read_text(encoding="utf-8")  # written as UTF-8, not \u escapes
    back = read_corpus([path]).records[0]
    assert back.span_text(back.events[0].roles[1].span) == "Café Brûlé"
    assert back == record


@st.composite
def records(draw):
    text = draw(st.text(min_size=1, max_size=40).filter(lambda t: t.strip()))
    n = len(text)
    spans = st.tuples(st.integers(0, n - 1), st.integers(1, n)).map(lambda p: (min(p), max(p))).filter(lambda p: p[0] < p[1])
    events = draw(st.one_of(st.none(), st.lists(
        st.builds(Event, spans, st.lists(st.builds(RoleSpan, st.sampled_from(["mover", "source", "path", "destination"]), spans), max_size=3).map(tuple)),
        max_size=3).map(tuple)))
    meta = draw(st.one_of(st.none(), st.dictionaries(st.text(max_size=5), st.integers() | st.text(max_size=5), max_size=3)))
    return Record(id=draw(st.text(min_size=1, max_size=8).filter(str.strip)), doc="doc", text=text, events=events, meta=meta)


@settings(max_examples=150, deadline=None)
@given(records())
def test_property_write_then_parse_gives_the_same_record(record):
    # Property-based: any Unicode text (hypothesis leaves out lone surrogates, which UTF-8 cannot hold) and in-range spans.
    line = dumps_record(record)
    assert "\n" not in line
    back = record_from_dict(json.loads(line))
    assert back.same_content(record)
    for event in back.events or ():
        assert back.span_text(event.trigger) == record.text[event.trigger[0]:event.trigger[1]]


@settings(max_examples=60, deadline=None)
@given(st.lists(records(), min_size=1, max_size=5, unique_by=lambda r: r.id))
def test_property_file_round_trip_through_the_validating_reader(tmp_path_factory, recs):
    path = tmp_path_factory.mktemp("prop") / "r.jsonl"
    write_jsonl(recs, path)
    back = read_corpus([path], skip_bad=True)
    # Random spans may cut words or start with spaces: those are warnings, never errors or losses.
    assert not back.skipped
    assert [r.id for r in back.records] == [r.id for r in recs]
    assert all(a.same_content(b) for a, b in zip(recs, back.records))


@pytest.mark.parametrize("tail, bad", [
    ("\u00e9".encode("utf-8") + b"\nline\nok \xff tail\n", 0xFF),  # a character split across blocks, a stray byte later
    (b"\xc3(\n", 0xC3),  # a lead byte at the end of the first block whose continuation never comes
    (b"\n\nend \xe2\x82", 0xE2),  # a character cut short by the end of the file
])
def test_not_utf8_locates_the_first_bad_byte_across_read_blocks(tmp_path, tail, bad):
    # The file is read in 64 KiB blocks and the tail starts one byte before the second; the reference position
    # is the one Python's own UTF-8 codec reports for the whole file at once.
    body = b"a\n" * 32767 + b"x" + tail
    path = tmp_path / "f.txt"
    path.write_bytes(body)
    with pytest.raises(UnicodeDecodeError) as reference:
        body.decode("utf-8")
    error = not_utf8(path)
    line = body[:reference.value.start].count(b"\n") + 1
    assert error.cause == f"{path}: not UTF-8 text: line {line}, byte offset {reference.value.start} (0x{bad:02x})"


def test_not_utf8_tells_a_binary_file_from_text_in_another_encoding(tmp_path):
    latin = tmp_path / "latin.txt"
    latin.write_bytes("We went to F\u00fcssen.\n".encode("latin-1"))
    assert not_utf8(latin).fix == "re-save the file as UTF-8"
    binary = tmp_path / "model.itin"
    binary.write_bytes(b"ITINERANT-MODEL 1\n{}\n\x80\x04\x95\x00\x00")  # a pickle's opening bytes
    error = not_utf8(binary)
    assert error.cause == f"{binary}: not UTF-8 text: line 3, byte offset 21 (0x80)"
    assert error.fix.startswith("this is a binary file")
