"""Itinerary tables: exact rows on hand-made records, mover filters, carried movers, writing."""

from __future__ import annotations

from dataclasses import replace

import pandas as pd
import pytest

from trainer.annotation.itinerary import COLUMNS, build_itinerary, write_itinerary
from trainer.corpus.convert.inline import parse_inline
from trainer.corpus.records import Record
from trainer.errors import ConfigError, TableFormatError


def rec(line: str, record_id: str) -> Record:
    doc = record_id.rsplit("-", 1)[0]
    return parse_inline(line, record_id=record_id, doc=doc)


# Two documents, interleaved on input: the table groups them (first-seen order) and keeps record order within each.
RECORDS = [
    rec("[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].", "log-s001"),
    rec("[Set out|T1] from [Lintle|source1].", "other-s001"),  # no mover, first event of its doc
    rec("Rain all day.", "log-s002"),  # a negative: no row
    rec("[Pushed on|T1] to [the Sallow Gap|destination1].", "log-s003"),  # no mover; previous mover is We
    rec("[The mule|mover1] [strayed|T1] through [Arlo|path1] and [Brenn|path1].", "log-s004"),
    rec("[Came|T1] back at dusk.", "log-s005"),  # no mover; previous mover is The mule
    rec("[Dicken|mover1] [rode|T1] from [the Aun|source1] to [Quillon|destination1].", "other-s002"),
    rec("[I|mover1] [returned|T1] to [Caddow|destination1].", "log-s006"),
    Record(id="log-s007", doc="log", text="Unannotated text."),
]

HEADER = "\t".join(COLUMNS)


def tsv(itinerary, tmp_path) -> list[str]:
    path = write_itinerary(itinerary, tmp_path / "it.tsv")
    return path.read_bytes().decode("utf-8").split("\r\n")  # CRLF line ends, as RFC 4180


def test_unfiltered_table_is_exact(tmp_path) -> None:
    itinerary = build_itinerary(RECORDS)
    assert tsv(itinerary, tmp_path) == [
        HEADER,
        "log\tlog-s001\t1\t1\tWe\tleft\tCaddow\t\t\t\tFalse\t",
        "log\tlog-s001\t2\t2\tWe\trode\t\t\tKell Ferry\t\tFalse\t",
        "log\tlog-s003\t3\t1\t\tPushed on\t\t\tthe Sallow Gap\t\tFalse\t",
        "log\tlog-s004\t4\t1\tThe mule\tstrayed\t\tArlo; Brenn\t\t\tFalse\t",
        "log\tlog-s005\t5\t1\t\tCame\t\t\t\t\tFalse\t",
        "log\tlog-s006\t6\t1\tI\treturned\t\t\tCaddow\t\tFalse\t",
        "other\tother-s001\t1\t1\t\tSet out\tLintle\t\t\t\tFalse\t",
        "other\tother-s002\t2\t1\tDicken\trode\tthe Aun\t\tQuillon\t\tFalse\t",
        "",
    ]
    assert (itinerary.left_out, itinerary.unannotated, itinerary.docs) == (0, 1, ["log", "other"])


def test_frame_types_and_columns() -> None:
    frame = build_itinerary(RECORDS).to_frame()
    assert list(frame.columns) == list(COLUMNS)
    assert frame["order"].dtype == "int64" and frame["event"].dtype == "int64"
    assert frame["confidence"].dtype == "float64" and frame["confidence"].isna().all()  # gold: no confidence
    assert frame["mover_carried"].dtype == "bool"


def test_first_person_filter_keeps_the_narrator_only() -> None:
    itinerary = build_itinerary(RECORDS, movers=["first_person"])
    frame = itinerary.to_frame()
    assert frame[["id", "order", "event", "mover", "trigger", "matched"]].values.tolist() == [
        ["log-s001", 1, 1, "We", "left", "first_person"],
        ["log-s001", 2, 2, "We", "rode", "first_person"],
        ["log-s006", 3, 1, "I", "returned", "first_person"],
    ]
    # Events with no mover, the mule's and Dicken's are left out.
    assert itinerary.left_out == 5


@pytest.mark.parametrize(("mover", "kept"), [
    ("We", True), ("we", True), ("US", True), ("me", True), ("Our", True), ("my", True), ("I", True),
    ("my wife", False), ("We two", False), ("Iris", False), ("them", False),
])  # fmt: skip
def test_first_person_matches_the_whole_span(mover: str, kept: bool) -> None:
    record = rec(f"[{mover}|mover1] [went|T1] home.", "d-s001")
    assert len(build_itinerary([record], movers="first_person").rows) == int(kept)


def test_name_filter_is_case_insensitive_on_the_whole_span() -> None:
    itinerary = build_itinerary(RECORDS, movers=["the  MULE", "dicken", "Dicken", "mule"])
    frame = itinerary.to_frame()
    assert frame[["id", "mover", "trigger", "matched"]].values.tolist() == [
        ["log-s004", "The mule", "strayed", "the  MULE"],
        ["other-s002", "Dicken", "rode", "dicken"],
    ]
    # Repeated entries count once (first spelling kept); "mule" is not the whole span "The mule".
    assert itinerary.movers == ("the  MULE", "dicken", "mule")


def test_carry_mover_fills_elided_movers_within_a_document() -> None:
    itinerary = build_itinerary(RECORDS, carry_mover=True)
    frame = itinerary.to_frame()
    assert frame[["id", "mover", "trigger", "mover_carried"]].values.tolist() == [
        ["log-s001", "We", "left", False],
        ["log-s001", "We", "rode", False],
        ["log-s003", "We", "Pushed on", True],
        ["log-s004", "The mule", "strayed", False],
        ["log-s005", "The mule", "Came", True],
        ["log-s006", "I", "returned", False],
        ["other-s001", "", "Set out", False],  # nothing earlier in its own doc: log's "We" does not leak in
        ["other-s002", "Dicken", "rode", False],
    ]


def test_carry_mover_then_filter() -> None:
    frame = build_itinerary(RECORDS, movers=("first_person",), carry_mover=True).to_frame()
    assert frame[["id", "trigger", "mover", "mover_carried"]].values.tolist() == [
        ["log-s001", "left", "We", False],
        ["log-s001", "rode", "We", False],
        ["log-s003", "Pushed on", "We", True],
        ["log-s006", "returned", "I", False],
    ]


def test_several_movers_and_several_entries() -> None:
    record = rec("[We|mover1] and [Dicken|mover1] [crossed|T1] [the Aun|path1].", "d-s001")
    frame = build_itinerary([record], movers=["Dicken", "first_person"]).to_frame()
    assert frame[["mover", "path", "matched"]].values.tolist() == [["We; Dicken", "the Aun", "Dicken; first_person"]]


def test_extracted_records_carry_event_confidence(tmp_path) -> None:
    gold = rec("[We|mover1] [left|T1] [Caddow|source1].", "d-s001")
    extracted = gold.with_events([replace(gold.events[0], confidence=0.8734)])
    itinerary = build_itinerary([extracted])
    assert itinerary.to_frame()["confidence"].tolist() == [0.8734]
    assert tsv(itinerary, tmp_path)[1] == "d\td-s001\t1\t1\tWe\tleft\tCaddow\t\t\t0.8734\tFalse\t"


def test_csv_round_trip(tmp_path) -> None:
    itinerary = build_itinerary(RECORDS, carry_mover=True)
    path = write_itinerary(itinerary, tmp_path / "sub" / "it.csv")
    back = pd.read_csv(path, dtype=str, keep_default_na=False)
    frame = itinerary.to_frame()
    expected = frame.astype(object).where(frame.notna(), "").astype(str)
    pd.testing.assert_frame_equal(back, expected)


def test_bad_movers_and_bad_table_name(tmp_path) -> None:
    with pytest.raises(ConfigError) as caught:
        build_itinerary(RECORDS, movers=["We", "  "])
    assert caught.value.cause == "movers: every entry must be a non-empty name, got '  '"
    with pytest.raises(TableFormatError) as caught:
        write_itinerary(build_itinerary(RECORDS), tmp_path / "it.txt")
    assert caught.value.cause == f"{tmp_path / 'it.txt'}: a table must end in .csv or .tsv, not '.txt'"


def test_empty_filter_is_unfiltered() -> None:
    assert build_itinerary(RECORDS, movers=()).rows == build_itinerary(RECORDS).rows
    assert len(build_itinerary(RECORDS, movers=[]).rows) == 8


def _with_confidences(record: Record, events: list[tuple[float, list[float]]]) -> Record:
    """The record's events carrying these confidences: (event, [each role in stored order])."""
    return record.with_events([
        replace(event, confidence=p, roles=tuple(replace(role, confidence=q) for role, q in zip(event.roles, qs)))
        for event, (p, qs) in zip(record.events, events)
    ])


def test_a_confidence_floor_leaves_out_weak_events_and_weak_roles_before_the_mover_filter() -> None:
    first = rec("[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].", "log-s001")
    extracted = [
        _with_confidences(first, [(0.9, [0.8, 0.45]), (0.4, [0.3, 0.35])]),
        _with_confidences(rec("[Dicken|mover1] [rode|T1] to [Quillon|destination1].", "log-s002"), [(0.7, [0.2, 0.6])]),
    ]
    kept = build_itinerary(extracted, min_confidence=0.5)
    frame = kept.to_frame()
    # `rode` (0.4) goes with its roles; `Caddow` (0.45) and `Dicken` (0.2) go; the event numbers stay the record's.
    assert frame[["id", "event", "mover", "trigger", "source", "destination"]].values.tolist() == [
        ["log-s001", 1, "We", "left", "", ""],
        ["log-s002", 1, "", "rode", "", "Quillon"],
    ]
    assert (kept.min_confidence, kept.below_floor, kept.roles_below_floor, kept.with_confidence) == (0.5, 1, 2, 3)
    # The floor comes first: Dicken's event has lost its mover, so a filter on him drops it.
    assert [r.record_id for r in build_itinerary(extracted, movers=["Dicken"], min_confidence=0.5).rows] == []
    assert [r.record_id for r in build_itinerary(extracted, movers=["Dicken"]).rows] == ["log-s002"]
    # A floor at 0 keeps everything; no floor gives the same rows.
    assert build_itinerary(extracted, min_confidence=0).rows == build_itinerary(extracted).rows


def test_a_confidence_floor_keeps_gold_records_and_refuses_numbers_outside_0_to_1() -> None:
    gold = build_itinerary(RECORDS, min_confidence=0.99)
    assert gold.rows == build_itinerary(RECORDS).rows and gold.with_confidence == 0 and gold.below_floor == 0
    for bad in (1.5, -0.1, "0.5", True):
        with pytest.raises(ConfigError) as caught:
            build_itinerary(RECORDS, min_confidence=bad)
        assert caught.value.cause == f"min_confidence (--min-confidence) must be a number from 0 to 1, got {bad!r}"


def test_above_floor_is_the_one_rule_for_events_and_roles_and_the_bench_applies_it() -> None:
    from trainer.annotation.itinerary import above_floor
    from tests.conftest import load_bench

    record = _with_confidences(
        rec("[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].", "log-s001"),
        [(0.9, [0.8, 0.45]), (0.4, [0.3, 0.35])])
    first, second = record.events
    assert above_floor(second, 0.5) is None
    assert [r.confidence for r in above_floor(first, 0.5).roles] == [0.8]
    assert above_floor(first, None) == first and above_floor(first, 0.0).roles == first.roles
    gold = rec("[We|mover1] [left|T1] [Caddow|source1].", "g-s001").events[0]
    assert above_floor(gold, 0.99) == gold and above_floor(gold, 0.99).roles == gold.roles  # no confidences: kept

    bench = load_bench("role_confidence")
    floored = bench.floored(record, 0.5)
    assert [(e.confidence, [r.confidence for r in e.roles]) for e in floored.events] == [(0.9, [0.8])]
    own = bench.own_confidences(record)  # the role stage's own: each role's confidence over its trigger's
    assert [[r.confidence for r in e.roles] for e in own.events] == [
        pytest.approx([0.8 / 0.9, 0.5]), pytest.approx([0.75, 0.875])]
