"""Validation: one file with one of each error and warning, reported with file, line and field."""

from __future__ import annotations

import json

import pytest

from trainer.corpus.reader import read_corpus, skipped_summary
from trainer.corpus.validate import check_files, check_line
from trainer.errors import CorpusError, UnreadableInputError

GOOD = {"id": "ok-1", "doc": "d", "text": "We left Caddow.", "events": [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}]}]}


def line(**changes):
    record = json.loads(json.dumps(GOOD))
    record.update(changes)
    return json.dumps(record)


def ev(trigger, *roles):
    return [{"trigger": trigger, "roles": [{"role": r, "span": s} for r, s in roles]}]


# One line per listed error; the expected (line, field, message start) is beside each.
BAD_LINES = [
    (line(), None),
    ('{"id": "broken", "doc": "d", "text": ', ("record", "malformed JSON")),
    (json.dumps({"id": "m1", "text": "We left."}), ("doc", "missing")),
    (line(id="t1", text=7), ("text", "must be a string, got int")),
    (line(id="o1", events=ev([3, 70])), ("events[0].trigger", "[3, 70] is out of range")),
    (line(id="r1", events=ev([7, 3])), ("events[0].trigger", "[7, 3] is reversed")),
    (line(id="e1", events=ev([3, 7], ("mover", [2, 2]))), ("events[0].roles[0].span", "[2, 2] is an empty span")),
    (line(), ("id", "duplicate id 'ok-1'")),
    (line(id="u1", events=ev([3, 7], ("vehicle", [0, 2]))), ("events[0].roles[0].role", "unknown role 'vehicle'")),
    (line(id="w1", events="none"), ("events", "must be a list, got str")),
    (line(id="f1", events=ev(["3", 7])), ("events[0].trigger", "must be [start, end] with two integers")),
]


@pytest.fixture
def bad_file(tmp_path):
    path = tmp_path / "bad.jsonl"
    path.write_text("\n".join(text for text, _ in BAD_LINES) + "\n", encoding="utf-8")
    return path


def test_each_error_is_reported_with_file_line_and_field(bad_file):
    result = check_files([bad_file])
    found = [(p.line, p.field, p.message) for p in result.errors]
    expected = [(n, exp[0], exp[1]) for n, (_, exp) in enumerate(BAD_LINES, start=1) if exp]
    assert [(n, f) for n, f, _ in found] == [(n, f) for n, f, _ in expected]
    for (_, _, message), (_, _, start) in zip(found, expected):
        assert message.startswith(start), message
    assert result.bad_records == len(expected)
    assert [r.id for _, _, r in result.records] == ["ok-1"]
    assert str(result.errors[0]).startswith(f"{bad_file}:2: record: malformed JSON")
    assert "hint:" in str(result.errors[0])


def test_warnings_keep_the_record(tmp_path):
    text = "We left Caddow, crossed the Aun."
    events = [
        {"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}, {"role": "source", "span": [7, 15]}]},  # leading space
        {"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}, {"role": "source", "span": [7, 15]}]},  # duplicate event
        {"trigger": [16, 23], "roles": [{"role": "mover", "span": [24, 31]}, {"role": "path", "span": [24, 31]}]},  # mover = place
        {"trigger": [17, 23], "roles": []},  # cuts 'crossed'
    ]
    path = tmp_path / "w.jsonl"
    path.write_text(json.dumps({"id": "w", "doc": "d", "text": text, "events": events}) + "\n", encoding="utf-8")
    result = check_files([path])
    assert not result.errors and len(result.records) == 1
    messages = [p.field + ": " + p.message for p in result.warnings]
    assert any("events[0].roles[1].span: span ' Caddow,'" in m and "whitespace or punctuation" in m for m in messages)
    assert "events[1]: repeats events[0] exactly" in messages
    assert "events[2].roles: the mover 'the Aun' is also marked as a place" in messages
    assert any(m.startswith("events[3].trigger: span 'rossed' cuts through a word") for m in messages)


def test_spans_of_one_event_overlapping_each_other_or_the_trigger_are_warnings(tmp_path):
    # docs/annotation-guide.md: spans of one event should overlap neither each other nor the trigger; one span
    # may serve two events.
    text = "We went from Caddow Bridge to the lake and came back."
    events = [{"trigger": [3, 7], "roles": [{"role": "source", "span": [13, 26]}, {"role": "path", "span": [20, 26]},
                                            {"role": "mover", "span": [0, 7]}, {"role": "destination", "span": [30, 38]}]},
              {"trigger": [43, 47], "roles": [{"role": "mover", "span": [0, 2]}, {"role": "source", "span": [30, 38]}]}]
    path = tmp_path / "o.jsonl"
    path.write_text(json.dumps({"id": "o", "doc": "d", "text": text, "events": events}) + "\n", encoding="utf-8")
    result = check_files([path])
    assert not result.errors and len(result.records) == 1
    assert [p.field + ": " + p.message for p in result.warnings] == [
        "events[0].roles[1].span: the path 'Bridge' overlaps roles[0], the source 'Caddow Bridge'",
        "events[0].roles[2].span: the mover 'We went' overlaps the trigger 'went'"]


def test_a_span_taking_in_italics_underscores_is_a_warning(tmp_path):
    # Project Gutenberg's plain-text e-texts mark italics with underscores (_Tern_); the words are inside them.
    text = "We sailed in the _Tern_ to Quillon."
    events = [{"trigger": [3, 9], "roles": [{"role": "mover", "span": [0, 2]}, {"role": "path", "span": [17, 23]},
                                            {"role": "destination", "span": [27, 34]}]}]
    path = tmp_path / "i.jsonl"
    path.write_text(json.dumps({"id": "i", "doc": "d", "text": text, "events": events}) + "\n", encoding="utf-8")
    result = check_files([path])
    assert not result.errors and len(result.records) == 1
    assert [p.field + ": " + p.message for p in result.warnings] == [
        "events[0].roles[1].span: span '_Tern_' takes in an underscore, the italics marker of plain-text e-texts"]


def test_a_file_without_records_is_a_warning_that_names_it(tmp_path):
    empty, blank = tmp_path / "empty.jsonl", tmp_path / "blank.jsonl"
    empty.write_text("", encoding="utf-8")
    blank.write_text("\n  \n", encoding="utf-8")
    good = tmp_path / "good.jsonl"
    good.write_text(line() + "\n", encoding="utf-8")
    result = check_files([empty, good, blank])
    assert not result.errors and [r.id for _, _, r in result.records] == ["ok-1"]
    assert [str(p).splitlines()[0] for p in result.warnings] == [
        f"{path}:1: file: warning: holds no records (empty or blank lines only)" for path in (empty, blank)]


def test_reading_for_training_refuses_errors_unless_asked_to_skip(bad_file):
    with pytest.raises(CorpusError) as raised:
        read_corpus([bad_file])
    assert "10 error(s) in 10 record(s)" in str(raised.value)
    assert raised.value.fix == "fix them (run `itinerant check` for the full list) or pass --skip-bad to leave those records out"
    with pytest.raises(CorpusError) as raised:  # a command without --skip-bad does not offer it
        read_corpus([bad_file], skippable=False)
    assert raised.value.fix == "fix them (run `itinerant check` for the full list)"
    corpus = read_corpus([bad_file], skip_bad=True)
    assert [r.id for r in corpus.records] == ["ok-1"]
    summary = skipped_summary(corpus)
    assert summary.splitlines()[-1] == "10 record(s) skipped"
    assert f"skipped {bad_file}:4 (id t1): text: must be a string" in summary


def test_unreadable_files_raise_with_exit_code_2(tmp_path):
    with pytest.raises(UnreadableInputError) as missing:
        check_files([tmp_path / "nope.jsonl"])
    assert missing.value.exit_code == 2
    latin = tmp_path / "latin.jsonl"
    latin.write_bytes('{"id": "a", "doc": "d", "text": "caf\xe9"}\n'.encode("latin-1"))
    with pytest.raises(UnreadableInputError, match=r"latin.jsonl: not UTF-8 text: line 1, byte offset 36 \(0xe9\)"):
        check_files([latin])


def test_role_inventory_is_configurable(tmp_path):
    path = tmp_path / "v.jsonl"
    path.write_text(line(events=ev([3, 7], ("vehicle", [0, 2]))) + "\n", encoding="utf-8")
    assert check_files([path], roles=("mover", "vehicle")).errors == []
    assert check_files([path]).errors[0].message == "unknown role 'vehicle'"


@pytest.mark.parametrize("raw, field, message", [
    ("[" * 3000 + "]" * 3000, "record", "arrays or objects nested more than 32 deep"),  # deeper than json's recursion limit
    (line(meta={"a": json.loads("[" * 32 + "1" + "]" * 32)}), "record", "nested more than 32 deep"),
    ('{"id": "d1", "doc": "d", "doc": "e", "text": "We left."}', "record", "key(s) given twice in one object: doc"),
    ('{"id": "s1", "doc": "d", "text": "We left \\udc80Caddow."}', "text", "holds a lone surrogate \\udc80 at character 8"),
    ('{"id": "s2", "doc": "d", "text": "t", "meta": {"\\ud800": 1}}', "meta.<key>", "holds a lone surrogate"),
    (json.dumps({"id": "long", "doc": "d", "text": "w " * 500_001}), "text",
     "is 1,000,002 characters long, more than the parser takes (1,000,000)"),
])
def test_malformed_json_lines_are_located_errors(tmp_path, raw, field, message):
    path = tmp_path / "bad.jsonl"
    path.write_text(line() + "\n" + raw + "\n", encoding="utf-8")
    result = check_files([path])
    (problem,) = result.errors
    assert (problem.line, problem.field) == (2, field)
    assert problem.message.startswith(message) or message in problem.message
    assert [r.id for _, _, r in result.records] == ["ok-1"]
    with pytest.raises(CorpusError, match="1 error"):
        read_corpus([path])  # the reader fit uses refuses what check reports
    assert [r.id for r in read_corpus([path], skip_bad=True).records] == ["ok-1"]


def test_the_example_record_of_the_annotation_spec_is_valid_and_its_offsets_cover_the_words():
    import re
    from pathlib import Path

    spec = (Path(__file__).resolve().parents[2] / "docs" / "annotation-spec.md").read_text(encoding="utf-8")
    example = json.loads(re.search(r"```json\n(.*?)```", spec, re.S).group(1))
    result = check_line("annotation-spec.md", 1, json.dumps(example), ("mover", "source", "path", "destination"), set())
    assert result.problems == []
    text = example["text"]
    words = [(text[slice(*e["trigger"])], [(r["role"], text[slice(*r["span"])]) for r in e["roles"]]) for e in example["events"]]
    assert words == [("quit", [("mover", "the drovers"), ("source", "Ostley")]),
                     ("pushed", [("mover", "the drovers"), ("path", "the Cairn Moor"), ("destination", "the ferry")])]


def test_a_file_of_another_format_is_sent_to_convert_not_listed_line_by_line(tmp_path):
    table = tmp_path / "batch.tsv"
    table.write_text("id\tdoc\tstatus\nx\td\tnegative\n", encoding="utf-8")
    with pytest.raises(UnreadableInputError) as raised:
        check_files([table])
    assert raised.value.cause == f"{table}: not canonical JSONL (its first record line is not a JSON object)"
    assert raised.value.fix.startswith(f"convert it first: `itinerant convert {table} -o batch.jsonl`")
    named = tmp_path / "records.txt"  # JSON lines under another extension are read as they are
    named.write_text(json.dumps({"id": "a", "doc": "d", "text": "We rode on.", "events": []}) + "\n", encoding="utf-8")
    assert [r.id for _, _, r in check_files([named]).records] == ["a"]
