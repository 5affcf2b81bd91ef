"""Property-based tests (hypothesis): every reader, fed generated malformed records, tables and columns,
gives a located error or a clean record; no other exception escapes and nothing changes silently."""

from __future__ import annotations

import csv
import io
import json
import re
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trainer.corpus.convert import read_columns, read_table, write_columns, write_table
from trainer.corpus.jsonl import record_to_dict
from trainer.corpus.records import DEFAULT_ROLES, Event, Record, RoleSpan
from trainer.corpus.validate import check_line
from trainer.errors import ItinerantError

SETTINGS = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
JUNK = st.one_of(st.none(), st.booleans(), st.integers(-5, 60), st.floats(allow_nan=True), st.text(max_size=5),
                 st.lists(st.integers(-5, 60), max_size=3), st.dictionaries(st.text(max_size=3), st.integers(), max_size=2))
TEXTS = st.one_of(st.text(max_size=40), st.just("We left Caddow for Kell Ferry."), st.just("x\ud800y"))


def maybe(value_strategy):
    """A value, a junk value in its place, or the key left out (``...``)."""
    return st.one_of(value_strategy, JUNK, st.just(...))


spans = st.lists(st.integers(-2, 45), min_size=2, max_size=2)
roles = st.fixed_dictionaries({"role": maybe(st.sampled_from([*DEFAULT_ROLES, "vehicle"])), "span": maybe(spans)})
events = st.fixed_dictionaries({"trigger": maybe(spans), "roles": maybe(st.lists(maybe(roles), max_size=3))})
objects = st.fixed_dictionaries({
    "id": maybe(st.text(min_size=0, max_size=6)),
    "doc": maybe(st.sampled_from(["d", "", " ", "book-1"])),
    "text": maybe(TEXTS),
    "events": maybe(st.lists(maybe(events), max_size=3)),
    "meta": maybe(st.dictionaries(st.text(max_size=4), st.integers(), max_size=2)),
})


def without_gaps(value):
    """Drop the keys generated as ``...`` (left out)."""
    if isinstance(value, dict):
        return {k: without_gaps(v) for k, v in value.items() if v is not ...}
    if isinstance(value, list):
        return [without_gaps(v) for v in value if v is not ...]
    return value


def mangle(line: str, how: int, where: int) -> str:
    """Ways files get broken: cut short, a key written twice, wrapped deep, a stray byte, as is."""
    cut = where % (len(line) + 1)
    return [
        line[:cut],
        line.replace('"doc":', '"doc": "x", "doc":', 1),
        "[" * (200 + where) + line + "]" * (200 + where),
        line[:cut] + "\\" + line[cut:],
        line,
    ][how % 5]


@SETTINGS
@given(objects, st.integers(0, 4), st.integers(0, 500))
def test_a_jsonl_line_is_a_clean_record_or_located_problems(obj, how, where):
    obj = without_gaps(obj)
    line = mangle(json.dumps(obj), how, where)
    result = check_line("corpus.jsonl", 7, line, DEFAULT_ROLES, set())
    for problem in result.problems:
        assert str(problem).startswith("corpus.jsonl:7: ") and problem.field and problem.message
    if result.errors:
        assert result.records == []
        return
    (_, _, record), = result.records
    assert result.bad_records == 0
    parsed = json.loads(line)
    # nothing silent: every field read is carried as it was, and the record writes as UTF-8
    known = {k: parsed[k] for k in ("id", "doc", "text", "events", "meta") if k in parsed}
    assert record_to_dict(record) == known
    json.dumps(record_to_dict(record), ensure_ascii=False).encode("utf-8")


# ---------------------------------------------------------------- tables

SAMPLE = [
    Record("r1", "book-1", "We left Caddow and rode to Kell Ferry.",
           (Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14)))),
            Event((19, 23), (RoleSpan("mover", (0, 2)), RoleSpan("destination", (27, 37)))))),
    Record("r2", "book-1", "The road runs north.", ()),
    Record("r3", "book-2", "We hoped to cross the Greyhorn.", None, {"page": 3}),
]
CELL_VALUES = ["", " ", "x", "²", "١", "-1", "3.0", "7", "99", "0", "mover", "vehicle", "annotated", "unannotated",
               "{}", "[1]", '{"a": 1, "a": 2}', "r1", "r2", "book-1", "We"]


def table_rows(tmp_path: Path) -> list[list[str]]:
    path = tmp_path / "t.tsv"
    write_table(SAMPLE, path)
    return list(csv.reader(io.StringIO(path.read_text(encoding="utf-8")), delimiter="\t"))


@SETTINGS
@given(st.data())
def test_an_edited_table_cell_is_read_exactly_or_refused_with_its_row(tmp_path, data):
    rows = table_rows(tmp_path)
    row = data.draw(st.integers(1, len(rows) - 1), label="row")
    column = data.draw(st.integers(0, len(rows[0]) - 1), label="column")
    rows[row][column] = data.draw(st.sampled_from(CELL_VALUES), label="value")
    edited = tmp_path / "edited.tsv"
    with open(edited, "w", encoding="utf-8", newline="") as out:
        csv.writer(out, delimiter="\t", lineterminator="\r\n").writerows(rows)
    try:
        conversion = read_table(edited)
    except ItinerantError as exc:
        assert re.search(r"row \d+", str(exc)), str(exc)  # located: the spreadsheet row
        return
    dropped = {int(n) for n in re.findall(r" row (\d+): [^\n]*; left out", "\n".join(conversion.losses))}
    retexted = {int(n) for n in re.findall(r" row (\d+): [^\n]*; the offsets were kept", "\n".join(conversion.losses))}
    assert len(dropped) + len(retexted) == len(conversion.losses)  # every loss is one of the two, on a row
    back = tmp_path / "back.tsv"
    write_table(conversion.records, back)
    again = list(csv.reader(io.StringIO(back.read_text(encoding="utf-8")), delimiter="\t"))[1:]
    # every row with an id comes back cell for cell (grouped by id, so perhaps in another order), except rows
    # listed as left out, and span texts listed as differing from the text at their offsets
    # (event numbers are positions: a record's events are renumbered 1, 2, ... but none is merged or lost)
    expected = [r for n, r in enumerate(rows[1:], start=2) if r[0] and n not in dropped]
    event = rows[0].index("event")
    assert len({(r[0], r[event]) for r in again}) == len({(r[0], r[event]) for r in expected})
    masked = {event} | ({rows[0].index(c) for c in ("trigger_text", "span_text")} if retexted else set())

    def comparable(table):
        return sorted([cell if i not in masked else "" for i, cell in enumerate(row)] for row in table)

    assert comparable(again) == comparable(expected), conversion.losses


# ---------------------------------------------------------------- columns


@SETTINGS
@given(st.data())
def test_an_edited_columns_file_is_read_exactly_or_refused_with_its_line(tmp_path, data):
    path = tmp_path / "c.cols"
    write_columns(SAMPLE, path)
    lines = path.read_text(encoding="utf-8").split("\n")
    number = data.draw(st.integers(0, len(lines) - 1), label="line")
    edit = data.draw(st.sampled_from(["cell", "drop", "repeat block"]), label="edit")
    if edit == "cell" and "\t" in lines[number]:
        cells = lines[number].split("\t")
        cells[data.draw(st.integers(0, len(cells) - 1))] = data.draw(st.sampled_from(CELL_VALUES + ["B-V", "I-mover", "O"]))
        lines[number] = "\t".join(cells)
    elif edit == "cell":
        lines[number] = lines[number].split("=")[0] + "= " + data.draw(st.sampled_from(CELL_VALUES))
    elif edit == "drop":
        del lines[number]
    else:
        lines += lines[: lines.index("")]  # the first block again: a duplicate id
    edited = tmp_path / "edited.cols"
    edited.write_text("\n".join(lines), encoding="utf-8")
    try:
        conversion = read_columns(edited)
    except ItinerantError as exc:
        assert str(exc).startswith(f"{edited}:"), str(exc)  # located: file and line
        return
    ids = [r.id for r in conversion.records]
    assert len(ids) == len(set(ids))
    if not conversion.losses:  # then the file holds exactly the records read ('# text' lines are for people)
        back = tmp_path / "back.cols"
        write_columns(conversion.records, back)

        def data_lines(all_lines):
            return [line for line in all_lines if line.strip() and not line.startswith("# text =")]

        assert data_lines(back.read_text(encoding="utf-8").split("\n")) == data_lines(lines)


# ---------------------------------------------------------------- inline markup

MARKUP = st.lists(st.sampled_from(["We", " ", "left", "[", "]", "|", "T1", "T2", "mover1", "source2", "path1", ",",
                                   "Caddow", "\ud800", "é", "#", "doc:", "\t"]), max_size=14).map("".join)


@SETTINGS
@given(st.lists(MARKUP, min_size=1, max_size=4))
def test_inline_markup_is_read_into_valid_records_or_refused_with_its_line(tmp_path, lines):
    from trainer.corpus.convert.inline import read_inline
    from trainer.corpus.validate import record_problems

    path = tmp_path / "notes.txt"
    path.write_text("\n".join(lines), encoding="utf-8", errors="surrogatepass")
    try:
        records = read_inline(path)
    except ItinerantError as exc:
        assert str(exc).startswith(str(path)), str(exc)  # located (or the whole file is unreadable)
        return
    ids = [r.id for r in records]
    assert len(ids) == len(set(ids))
    for number, record in enumerate(records, start=1):
        assert record_problems(record, str(path), number, DEFAULT_ROLES) == []
        for event in record.events or ():  # every span covers words of the text, with the markup removed
            assert all("[" not in record.text[s:e] and "|" not in record.text[s:e]
                       for s, e in [event.trigger, *(r.span for r in event.roles)])


# ---------------------------------------------------------------- ISO-Space XML


@SETTINGS
@given(st.data())
def test_edited_isospace_xml_is_read_into_valid_records_or_refused_naming_the_file(tmp_path, data):
    from tests.corpus.test_convert_isospace import BLOG
    from trainer.corpus.convert import read_isospace
    from trainer.corpus.validate import record_problems

    where = data.draw(st.integers(0, len(BLOG)), label="where")
    edit = data.draw(st.sampled_from(["cut", "insert", "delete"]), label="edit")
    piece = data.draw(st.sampled_from(['"', "<", ">", "x", "99", "-1", " id=\"m0\"", "&", "\ud800"]), label="piece")
    xml = {"cut": BLOG[:where], "insert": BLOG[:where] + piece + BLOG[where:],
           "delete": BLOG[:where] + BLOG[where + len(piece):]}[edit]
    path = tmp_path / "blog.xml"
    path.write_bytes(xml.encode("utf-8", "surrogatepass"))
    try:
        conversion = read_isospace(path)
    except ItinerantError as exc:
        assert str(exc).startswith(str(path)), str(exc)
        return
    ids = [r.id for r in conversion.records]
    assert len(ids) == len(set(ids))
    for number, record in enumerate(conversion.records, start=1):
        assert record_problems(record, str(path), number, DEFAULT_ROLES) == []
