"""Token columns (CoNLL-2005 style): exact file layout, exact round trips, listed losses."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from trainer.corpus.convert import FORMATS, convert_file, read_columns, write_columns
from trainer.corpus.convert.columns import tokenise
from trainer.corpus.convert.inline import parse_inline
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import CorpusError, UnknownFormatError

DEMO_TRAIN = Path(__file__).resolve().parents[2] / "demo_annotations" / "train"


def inline(line: str, number: int, **changes: object) -> Record:
    return replace(parse_inline(line, record_id=f"demo-s{number:03d}", doc="demo"), **changes)


def sample_records() -> list[Record]:
    """Shared movers, two path spans, non-ASCII (one outside the BMP), odd spacing, negatives, meta."""
    return [
        inline("[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].", 1),
        inline("[The mules|mover1] [went|T1] through [Arlo|path1] and [Brenn|path1] to [the lake|destination1].", 2),
        inline("  [Die Karawane 🐪|mover1] [zog|T1] über [Zürich|path1]  nach [Ærøskøbing|destination1]. ", 3),
        inline("[We|mover1] [re-crossed|T1] [Gannet|path1]'s ridge.", 4, meta={"page": 12, "note": "ridge «north»"}),
        inline("The road runs north to Holm Averly.", 5),
        inline("We hoped to cross the Greyhorn.", 6, events=None, meta={}),
        inline("[We|mover1] [set out|T1] at dawn.", 7),
    ]


def assert_same(got: list[Record], want: list[Record]) -> None:
    assert len(got) == len(want)
    for mine, theirs in zip(got, want):
        assert mine.same_content(theirs), (mine, theirs)


def test_one_record_gives_the_expected_columns(tmp_path: Path) -> None:
    path = tmp_path / "one.conll"
    assert write_columns(sample_records()[:1], path) == []
    assert path.read_text(encoding="utf-8") == (
        "# id = demo-s001\n"
        "# doc = demo\n"
        "# text = We left Caddow and rode to Kell Ferry.\n"
        "1\tWe\t_\t-\tB-mover\tB-mover\n"
        "2\tleft\t_\tV\tB-V\tO\n"
        "3\tCaddow\t_\t-\tB-source\tO\n"
        "4\tand\t_\t-\tO\tO\n"
        "5\trode\t_\tV\tO\tB-V\n"
        "6\tto\t_\t-\tO\tO\n"
        "7\tKell\t_\t-\tO\tB-destination\n"
        "8\tFerry\tSpaceAfter=No\t-\tO\tI-destination\n"
        "9\t.\tSpaceAfter=No\t-\tO\tO\n"
    )


def test_spacing_meta_and_unannotated_lines(tmp_path: Path) -> None:
    path = tmp_path / "some.conll"
    records = sample_records()
    write_columns([records[2], records[5]], path)
    assert path.read_text(encoding="utf-8").split("\n") == [
        "# id = demo-s003",
        "# doc = demo",
        "# text =   Die Karawane 🐪 zog über Zürich  nach Ærøskøbing. ",
        "1\tDie\tSpacesBefore=\\s\\s\t-\tB-mover",
        "2\tKarawane\t_\t-\tI-mover",
        "3\t🐪\t_\t-\tI-mover",
        "4\tzog\t_\tV\tB-V",
        "5\tüber\t_\t-\tO",
        "6\tZürich\tSpacesAfter=\\s\\s\t-\tB-path",
        "7\tnach\t_\t-\tO",
        "8\tÆrøskøbing\tSpaceAfter=No\t-\tB-destination",
        "9\t.\t_\t-\tO",
        "",
        "# id = demo-s006",
        "# doc = demo",
        "# text = We hoped to cross the Greyhorn.",
        "# meta = {}",
        "# annotated = no",
        "1\tWe\t_\t-",
        "2\thoped\t_\t-",
        "3\tto\t_\t-",
        "4\tcross\t_\t-",
        "5\tthe\t_\t-",
        "6\tGreyhorn\tSpaceAfter=No\t-",
        "7\t.\tSpaceAfter=No\t-",
        "",
    ]


def test_round_trip_is_exact(tmp_path: Path) -> None:
    path = tmp_path / "sample.conll"
    assert write_columns(sample_records(), path) == []
    back = read_columns(path)
    assert back.losses == []
    assert_same(back.records, sample_records())


def test_offsets_are_code_points(tmp_path: Path) -> None:
    path = tmp_path / "sample.conll"
    write_columns(sample_records(), path)
    record = read_columns(path).records[2]
    mover = record.events[0].roles[0]
    assert mover.span == (2, 16)
    assert record.span_text(mover.span) == "Die Karawane 🐪"


def test_spans_inside_a_word_cut_the_token() -> None:
    text = "We re-crossed Gannet's ridge."
    assert [text[s:e] for s, e in tokenise(text)] == ["We", "re-crossed", "Gannet's", "ridge", "."]
    assert [text[s:e] for s, e in tokenise(text, [14, 20])] == ["We", "re-crossed", "Gannet", "'s", "ridge", "."]


def test_whitespace_other_than_spaces_is_escaped(tmp_path: Path) -> None:
    record = Record("nb", "demo", "We\u00a0left\u2009Caddow.", events=(Event((3, 7), (RoleSpan("mover", (0, 2)),)),))
    path = tmp_path / "nb.conll"
    assert write_columns([record], path) == []
    assert "1\tWe\tSpacesAfter=\\u00a0\t-\tB-mover" in path.read_text(encoding="utf-8")
    assert_same(read_columns(path).records, [record])


def lossy_record() -> Record:
    #      0         1         2
    #      0123456789012345678901234567
    text = "We crossed the\tSallow Gap."
    roles = (
        RoleSpan("path", (11, 25)),  # the Sallow Gap
        RoleSpan("destination", (15, 25)),  # Sallow Gap: overlaps the path in the same event
        RoleSpan("source", (3, 10)),  # crossed: overlaps the trigger
        RoleSpan("mover", (0, 3)),  # "We " ends in whitespace; also out of text order
    )
    return Record("lossy", "demo", text, events=(Event((3, 10), roles, confidence=0.5),))


def test_what_columns_cannot_hold_is_listed(tmp_path: Path) -> None:
    path = tmp_path / "lossy.conll"
    losses = write_columns([lossy_record()], path)
    assert losses == [
        "lossy: confidence scores cannot be written in this format; left out",
        "lossy: the text holds tab or line-break characters, which a line of columns cannot; each was written as a space",
        "lossy, event 1: destination [15, 25] 'Sallow Gap' overlaps the path span of the same event; left out",
        "lossy, event 1: source [3, 10] 'crossed' overlaps the trigger of the same event; left out",
        "lossy, event 1: mover [0, 3] 'We ' has an edge in whitespace; written as [0, 2] 'We'",
        "lossy, event 1: roles are listed out of text order; the columns keep them in text order",
    ]
    back = read_columns(path)
    assert back.losses == []
    expected = Record(
        "lossy", "demo", "We crossed the Sallow Gap.",
        events=(Event((3, 10), (RoleSpan("mover", (0, 2)), RoleSpan("path", (11, 25)))),),
    )  # fmt: skip
    assert_same(back.records, [expected])


def test_roles_outside_the_inventory_are_listed(tmp_path: Path) -> None:
    path = tmp_path / "sample.conll"
    losses = write_columns(sample_records()[:1], path, roles=("mover", "source"))
    assert losses == [
        "demo-s001, event 2: role 'destination' [27, 37] is not in the inventory (mover, source); left out"
    ]
    write_columns(sample_records()[:1], path)
    back = read_columns(path, roles=("mover", "destination"))
    assert back.losses == [
        f"{path}:6: role 'source' [8, 14] 'Caddow' is not in the inventory (mover, destination); left out"
    ]


def test_an_edited_text_line_is_reported(tmp_path: Path) -> None:
    path = tmp_path / "one.conll"
    write_columns(sample_records()[:1], path)
    path.write_text(path.read_text(encoding="utf-8").replace("# text = We left", "# text = We quit"), encoding="utf-8")
    back = read_columns(path)
    assert back.losses == [
        f"{path}:3: the '# text' line differs from the tokens; "
        "the tokens' text 'We left Caddow and rode to Kell Ferry.' was used"
    ]
    assert_same(back.records, sample_records()[:1])


@pytest.mark.parametrize(
    ("edit", "message"),
    [
        (("3\tCaddow\t_\t-\tB-source", "3\tCaddow\t_\t-\tI-source"), ":6: tag 'I-source' does not continue a chunk"),
        (("2\tleft\t_\tV\tB-V", "2\tleft\t_\tV\tO"), ":4: event column 1 has 0 trigger spans"),
        (("# id = demo-s001\n", ""), ":1: the record has no '# id = ...' line"),
        (("4\tand\t_", "4\tand\t?"), ":7: spacing column holds '?'"),
        (("5\trode", "6\trode"), ":8: token index '6' where 5 was expected"),
        (("9\t.\tSpaceAfter=No\t-\tO\tO", "9\t.\tSpaceAfter=No\t-\tO"), ":12: 2 event column(s) on the first token"),
    ],
)
def test_broken_files_are_refused_with_the_line(tmp_path: Path, edit: tuple[str, str], message: str) -> None:
    path = tmp_path / "one.conll"
    write_columns(sample_records()[:1], path)
    path.write_text(path.read_text(encoding="utf-8").replace(*edit), encoding="utf-8")
    with pytest.raises(CorpusError) as caught:
        read_columns(path)
    assert f"{path}{message}" in str(caught.value)


def test_convert_file_jsonl_to_columns_and_back(tmp_path: Path) -> None:
    write_jsonl(sample_records(), tmp_path / "sample.jsonl")
    there = convert_file(tmp_path / "sample.jsonl", tmp_path / "sample.conll", from_format="jsonl", to_format="columns")
    back = convert_file(tmp_path / "sample.conll", tmp_path / "back.jsonl", from_format="columns", to_format="jsonl")
    assert there.losses == back.losses == []
    assert_same(FORMATS["jsonl"].reader(tmp_path / "back.jsonl").records, sample_records())


def test_unknown_format_names_the_allowed_ones(tmp_path: Path) -> None:
    with pytest.raises(UnknownFormatError) as caught:
        convert_file(tmp_path / "a.jsonl", tmp_path / "b.xml", from_format="jsonl", to_format="isospace")
    assert str(caught.value) == (f"{tmp_path / 'b.xml'}: 'isospace' is not an output format\n"
                                 "  fix: --output-format takes one of: jsonl, columns, table")
    assert {name for name, fmt in FORMATS.items() if fmt.writer} == {"jsonl", "columns", "table"}


def demo_files() -> list[Path]:
    files = sorted(DEMO_TRAIN.glob("*.jsonl"))
    if not files:
        pytest.skip(f"demo corpus not built yet: no {DEMO_TRAIN}/*.jsonl (run python demo_annotations/build_demo.py)")
    return files


def test_demo_corpus_round_trips_through_columns(tmp_path: Path) -> None:
    for source in demo_files():
        original = FORMATS["jsonl"].reader(source).records
        there = convert_file(source, tmp_path / f"{source.stem}.conll", from_format="jsonl", to_format="columns")
        back = read_columns(tmp_path / f"{source.stem}.conll")
        assert there.losses == back.losses == [], source
        assert_same(back.records, original)


def test_convert_file_from_inline_markup(tmp_path: Path) -> None:
    source = tmp_path / "demo.txt"
    source.write_text(
        "# doc: demo\n[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].\n",
        encoding="utf-8",
    )
    result = convert_file(source, tmp_path / "demo.conll", from_format="inline", to_format="columns")
    assert result.losses == []
    assert_same(result.records, sample_records()[:1])
    assert_same(read_columns(tmp_path / "demo.conll").records, sample_records()[:1])


def test_duplicate_ids_are_refused_with_both_lines(tmp_path: Path) -> None:
    path = tmp_path / "dup.cols"
    write_columns([parse_inline("[We|mover1] [left|T1].", record_id="a", doc="d")], path)
    block = path.read_text(encoding="utf-8")
    path.write_text(block + "\n" + block, encoding="utf-8")
    with pytest.raises(CorpusError, match=r"dup.cols:8: duplicate id 'a' \(first at line 1\)"):
        read_columns(path)


def test_an_empty_doc_is_refused_with_its_line(tmp_path: Path) -> None:
    path = tmp_path / "nodoc.cols"
    write_columns([parse_inline("[We|mover1] [left|T1].", record_id="a", doc="d")], path)
    path.write_text(path.read_text(encoding="utf-8").replace("# doc = d", "# doc = "), encoding="utf-8")
    with pytest.raises(CorpusError, match=r"nodoc.cols:1: record 'a': doc: is empty"):
        read_columns(path)
