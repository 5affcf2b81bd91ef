"""The flat table (CSV/TSV): row layout, exact round trips, edited cells reported by row."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from trainer.corpus.convert import FORMATS, convert_file, read_table, write_table
from trainer.corpus.convert.inline import parse_inline
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import CorpusError, UnknownFormatError

DEMO_TRAIN = Path(__file__).resolve().parents[2] / "demo_annotations" / "train"


def inline(line: str, record_id: str, **changes: object) -> Record:
    return replace(parse_inline(line, record_id=record_id, doc="demo"), **changes)


def sample_records() -> list[Record]:
    """Shared movers, two path spans, non-ASCII, cells that need quoting, negatives, meta, an id like 001."""
    return [
        inline("[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].", "001"),
        inline("[The mules|mover1] [went|T1] through [Arlo|path1] and [Brenn|path1] to [the lake|destination1].", "002"),
        inline('  «[Wir|mover1] [zogen|T1] über [Zürich|path1], "sagte" er,\tnach [Ærø 🐪|destination1]». ', "003",
               meta={"page": 12, "note": 'comma, "quotes"'}),
        inline("The road runs north to Holm Averly.", "004"),
        inline("We hoped to cross the Greyhorn.", "005", events=None, meta={}),
        inline("At dawn we [set out|T1].", "006"),
    ]


def assert_same(got: list[Record], want: list[Record]) -> None:
    assert len(got) == len(want)
    for mine, theirs in zip(got, want):
        assert mine.same_content(theirs), (mine, theirs)


def test_rows_per_role_event_negative_and_unannotated(tmp_path: Path) -> None:
    path = tmp_path / "sample.tsv"
    records = sample_records()
    assert write_table([records[0], records[3], records[4], records[5]], path) == []
    text1, text4 = records[0].text, records[3].text
    assert path.read_bytes().decode("utf-8").split("\r\n") == [
        "id\tdoc\tstatus\tevent\ttrigger_start\ttrigger_end\ttrigger_text\trole\tstart\tend\tspan_text\ttext\tmeta",
        f"001\tdemo\tannotated\t1\t3\t7\tleft\tmover\t0\t2\tWe\t{text1}\t",
        f"001\tdemo\tannotated\t1\t3\t7\tleft\tsource\t8\t14\tCaddow\t{text1}\t",
        f"001\tdemo\tannotated\t2\t19\t23\trode\tmover\t0\t2\tWe\t{text1}\t",
        f"001\tdemo\tannotated\t2\t19\t23\trode\tdestination\t27\t37\tKell Ferry\t{text1}\t",
        f"004\tdemo\tannotated\t\t\t\t\t\t\t\t\t{text4}\t",
        "005\tdemo\tunannotated\t\t\t\t\t\t\t\t\tWe hoped to cross the Greyhorn.\t{}",
        "006\tdemo\tannotated\t1\t11\t18\tset out\t\t\t\t\tAt dawn we set out.\t",
        "",
    ]


@pytest.mark.parametrize("suffix", [".csv", ".tsv"])
def test_round_trip_is_exact(tmp_path: Path, suffix: str) -> None:
    path = tmp_path / f"sample{suffix}"
    assert write_table(sample_records(), path) == []
    back = read_table(path)
    assert back.losses == []
    assert_same(back.records, sample_records())
    assert back.records[0].id == "001"


def test_rows_of_one_id_are_grouped_in_first_seen_order(tmp_path: Path) -> None:
    path = tmp_path / "sample.csv"
    write_table(sample_records()[:2], path)
    header, *rows, end = path.read_text(encoding="utf-8").split("\n")
    shuffled = [rows[4], rows[0], rows[1], rows[5], rows[2], rows[3], rows[6], rows[7]]  # 002 first, rows interleaved
    path.write_text("\n".join([header, *shuffled, end]), encoding="utf-8")
    assert_same(read_table(path).records, [sample_records()[1], sample_records()[0]])


def edit_cell(path: Path, row: int, column: str, value: str) -> None:
    """Change one cell of a TSV file (row numbers as in a spreadsheet: the header is row 1)."""
    lines = path.read_text(encoding="utf-8").split("\n")
    header = lines[0].split("\t")
    cells = lines[row - 1].split("\t")
    cells[header.index(column)] = value
    lines[row - 1] = "\t".join(cells)
    path.write_text("\n".join(lines), encoding="utf-8")


def test_edited_text_cells_are_reported_and_offsets_kept(tmp_path: Path) -> None:
    path = tmp_path / "sample.tsv"
    write_table(sample_records()[:1], path)
    edit_cell(path, 3, "span_text", "Caddow Quay")  # the annotator edited the text, not the offsets
    edit_cell(path, 5, "start", "28")  # the annotator edited the offsets, not the text
    back = read_table(path)
    assert back.losses == [
        f"{path} row 3: span_text 'Caddow Quay' differs from the text at start/end [8, 14), 'Caddow'; the offsets were kept",
        f"{path} row 5: span_text 'Kell Ferry' differs from the text at start/end [28, 37), 'ell Ferry'; the offsets were kept",
    ]
    assert back.records[0].events[1].roles[1] == RoleSpan("destination", (28, 37))


def test_rows_that_cannot_be_read_are_all_listed(tmp_path: Path) -> None:
    path = tmp_path / "sample.tsv"
    records = sample_records()
    write_table([records[0], records[3], records[1]], path)  # rows 2-5, 6, 7-10
    edit_cell(path, 2, "end", "two")
    edit_cell(path, 5, "trigger_start", "4")
    edit_cell(path, 6, "status", "done")
    edit_cell(path, 8, "text", "The mules went.")
    with pytest.raises(CorpusError) as caught:
        read_table(path)
    assert str(caught.value).split("\n") == [
        f"{path}: 4 row error(s):",
        "row 2: start/end '0'/'two' are not whole numbers",
        "row 5: event 2 has another trigger than on row 4",
        "row 6: status 'done'; write 'annotated' or 'unannotated'",
        "row 8: text differs from row 7 of the same id '002'",
        "  fix: correct those cells (row numbers count the header as row 1)",
    ]


def test_unknown_roles_and_extra_columns_are_listed(tmp_path: Path) -> None:
    path = tmp_path / "sample.tsv"
    write_table(sample_records()[:1], path)
    edit_cell(path, 3, "role", "goal")
    path.write_text(path.read_text(encoding="utf-8").replace("\tmeta\n", "\tmeta\tnotes\n"), encoding="utf-8")
    back = read_table(path)
    assert back.losses == [
        f"{path}: column(s) notes are not part of the table format; ignored",
        f"{path} row 3: role 'goal' is not in the inventory (mover, source, path, destination); left out",
    ]
    assert back.records[0].events[0].roles == (RoleSpan("mover", (0, 2)),)


def test_confidences_are_listed_as_lost(tmp_path: Path) -> None:
    record = Record("p1", "demo", "We left.", events=(Event((3, 7), (RoleSpan("mover", (0, 2), 0.8),), 0.9),))
    assert write_table([record], tmp_path / "pred.csv") == [
        "p1: confidence scores cannot be written in this format; left out"
    ]


def test_the_extension_picks_the_separator(tmp_path: Path) -> None:
    with pytest.raises(UnknownFormatError) as caught:
        write_table(sample_records(), tmp_path / "sample.xlsx")
    assert str(caught.value) == (
        f"{tmp_path / 'sample.xlsx'}: a table must end in .csv or .tsv, not '.xlsx'\n"
        "  fix: rename the file (.csv for commas, .tsv for tabs)"
    )


def test_convert_file_jsonl_to_table_and_back(tmp_path: Path) -> None:
    write_jsonl(sample_records(), tmp_path / "sample.jsonl")
    there = convert_file(tmp_path / "sample.jsonl", tmp_path / "sample.csv", from_format="jsonl", to_format="table")
    back = convert_file(tmp_path / "sample.csv", tmp_path / "back.jsonl", from_format="table", to_format="jsonl")
    assert there.losses == back.losses == []
    assert_same(FORMATS["jsonl"].reader(tmp_path / "back.jsonl").records, sample_records())


def test_a_csv_cut_by_semicolons_is_refused_with_how_to_save_it(tmp_path: Path) -> None:
    # Spreadsheets in locales with a decimal comma save "CSV" with semicolons (common practice).
    write_table(sample_records(), tmp_path / "sample.csv")
    semicolons = tmp_path / "semi.csv"
    semicolons.write_text((tmp_path / "sample.csv").read_text(encoding="utf-8").replace(",", ";"), encoding="utf-8")
    with pytest.raises(CorpusError) as caught:
        read_table(semicolons)
    assert caught.value.cause == f"{semicolons}: its header row is cut by semicolons, but a .csv table is cut by commas"
    assert "as tab-separated .tsv" in caught.value.fix


@pytest.mark.parametrize("suffix", [".csv", ".tsv"])
def test_an_empty_table_file_is_refused_naming_the_header(tmp_path: Path, suffix: str) -> None:
    path = tmp_path / f"empty{suffix}"
    path.write_text("", encoding="utf-8")
    with pytest.raises(CorpusError) as caught:
        read_table(path)
    assert caught.value.cause == f"{path}: is empty, not even a header row"
    assert "id, doc, status, event," in caught.value.fix


def test_unknown_input_format_names_the_allowed_ones(tmp_path: Path) -> None:
    with pytest.raises(UnknownFormatError) as caught:
        convert_file(tmp_path / "a.xlsx", tmp_path / "b.jsonl", from_format="excel", to_format="jsonl")
    assert str(caught.value) == (
        f"{tmp_path / 'a.xlsx'}: 'excel' is not an input format\n"
        "  fix: --input-format takes one of: jsonl, columns, table, isospace, inline"
    )


def test_demo_corpus_round_trips_through_the_table(tmp_path: Path) -> None:
    files = sorted(DEMO_TRAIN.glob("*.jsonl"))
    if not files:
        pytest.skip(f"demo corpus not built yet: no {DEMO_TRAIN}/*.jsonl (run python demo_annotations/build_demo.py)")
    for source in files:
        original = FORMATS["jsonl"].reader(source).records
        there = convert_file(source, tmp_path / f"{source.stem}.tsv", from_format="jsonl", to_format="table")
        back = read_table(tmp_path / f"{source.stem}.tsv")
        assert there.losses == back.losses == [], source
        assert_same(back.records, original)


def _edited_table(tmp_path: Path, edit) -> Path:
    path = tmp_path / "t.tsv"
    write_table([inline("[We|mover1] [left|T1] [Caddow|source1].", "a1")], path)
    lines = path.read_bytes().decode("utf-8").split("\r\n")
    rows = [cells.split("\t") for cells in lines if cells]
    edit({name: i for i, name in enumerate(rows[0])}, rows)
    path.write_text("\r\n".join("\t".join(r) for r in rows) + "\r\n", encoding="utf-8")
    return path


@pytest.mark.parametrize("edit, message", [
    (lambda c, rows: rows[1].__setitem__(c["role"], ""),
     "row 2: column role is empty but column(s) start, end, span_text hold a span; name the role or clear those cells"),
    (lambda c, rows: rows[2].__setitem__(c["event"], ""),
     "row 3: column event is empty but column(s) trigger_start, trigger_end, trigger_text, role, start, end, span_text are filled"),
    (lambda c, rows: [r.__setitem__(c["doc"], "") for r in rows[1:]], "row 2: doc: is empty"),
    (lambda c, rows: rows[1].__setitem__(c["start"], "²"), "row 2: start/end '²'/'2' are not whole numbers"),
    (lambda c, rows: rows[1].__setitem__(c["meta"], '{"a": 1, "a": 2}'), "row 2: meta is not clean JSON"),
    (lambda c, rows: rows.append(["a2", "d", "unannotated", "", "", "", "", "", "0", "2", "We", "We left.", ""]),
     "row 4: status 'unannotated' but column(s) start, end, span_text hold an event"),
])
def test_edited_cells_are_errors_with_row_and_column_never_silent_drops(tmp_path: Path, edit, message) -> None:
    with pytest.raises(CorpusError) as caught:
        read_table(_edited_table(tmp_path, edit))
    assert message in str(caught.value)
