"""The file behind the review page: provenance per action, check's rules on every change, stale copies refused."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from review_samples import suggestion

from trainer.annotation.review.session import ReviewFile, file_version, lowest_confidence, record_view
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.provenance import events_digest
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import CorpusError, StaleCopyError

TEXT = "We left Caddow for the lake."
LEFT = Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14))))
PLAIN = Record("s1", "book", TEXT)


def as_json(event: Event) -> dict:
    return {"trigger": list(event.trigger), "roles": [{"role": r.role, "span": list(r.span)} for r in event.roles]}


@pytest.fixture
def batch(tmp_path: Path) -> Path:
    """s1 suggested with LEFT (confidences 0.85, 0.55, 0.65), s2 unannotated text."""
    path = tmp_path / "batch.jsonl"
    write_jsonl([suggestion(PLAIN, (LEFT,), 1), Record("s2", "book", "We rested.")], path)
    return path


def test_the_snapshot_gives_tokens_cut_at_span_edges_status_and_the_lowest_confidence(batch: Path) -> None:
    snapshot = ReviewFile(batch).snapshot()
    assert (snapshot["version"], snapshot["reviewed"], snapshot["total"]) == (file_version(batch.read_bytes()), 0, 2)
    first, second = snapshot["records"]
    assert first["tokens"] == [[0, 2], [3, 7], [8, 14], [15, 18], [19, 22], [23, 27], [27, 28]]
    assert (first["status"], first["provenance"], first["suggested"], first["lowest"]) == ("unreviewed", "predicted", True, 0.55)
    assert first["events"] == [{"trigger": [3, 7], "confidence": 0.85, "roles": [
        {"role": "mover", "span": [0, 2], "confidence": 0.55}, {"role": "source", "span": [8, 14], "confidence": 0.65}]}]
    assert (second["events"], second["status"], second["lowest"]) == (None, "unreviewed", None)


def test_a_prediction_span_inside_a_word_cuts_the_tokens_there() -> None:
    record = Record("s", "d", "We rode north-east.", (Event((3, 7), (RoleSpan("destination", (8, 13)),)),))
    assert record_view(record)["tokens"] == [[0, 2], [3, 7], [8, 13], [13, 18], [18, 19]]
    assert lowest_confidence(record) is None


def save(path: Path, action: str, events, **kwargs):
    review = ReviewFile(path)
    return review.save("s1", version=review.snapshot()["version"], events=events, action=action, **kwargs)


def saved_record(path: Path, index: int = 0) -> dict:
    return json.loads(path.read_text(encoding="utf-8").splitlines()[index])


def test_accepting_an_unchanged_suggestion_makes_it_gold_without_confidences(batch: Path) -> None:
    before = batch.read_text(encoding="utf-8").splitlines()
    snapshot = ReviewFile(batch).snapshot()
    result = save(batch, "accept", snapshot["records"][0]["events"])
    record = saved_record(batch)
    assert record["events"] == [as_json(LEFT)]
    assert record["meta"]["itinerant"] == {"provenance": "gold", "uncertainty": 0.89, "rank": 1,
                                           "model": "demo.itin sha256:000000000000", "measure": "least_confidence",
                                           "prediction_digest": events_digest([LEFT])}
    assert (result.reviewed, result.total, result.record["status"]) == (1, 2, "reviewed")
    assert result.version == file_version(batch.read_bytes())
    assert batch.read_text(encoding="utf-8").splitlines()[1] == before[1]  # the other line, byte for byte


def test_accepting_after_a_change_stores_corrected(batch: Path) -> None:
    save(batch, "accept", [as_json(Event((3, 7), (RoleSpan("mover", (0, 2)),)))])
    assert saved_record(batch)["meta"]["itinerant"]["provenance"] == "corrected"


def test_an_edit_makes_a_suggestion_corrected_and_keeps_the_untouched_confidences(batch: Path) -> None:
    events = ReviewFile(batch).snapshot()["records"][0]["events"]
    events[0]["roles"].append({"role": "destination", "span": [19, 27]})
    result = save(batch, "edit", events)
    record = saved_record(batch)
    assert record["meta"]["itinerant"]["provenance"] == "corrected"
    assert [r.get("confidence") for r in record["events"][0]["roles"]] == [0.55, 0.65, None]
    assert result.record["status"] == "reviewed"


def test_editing_back_to_the_prediction_keeps_what_the_record_stated(batch: Path) -> None:
    events = ReviewFile(batch).snapshot()["records"][0]["events"]
    save(batch, "edit", events)
    assert saved_record(batch)["meta"]["itinerant"]["provenance"] == "predicted"


def test_marking_reviewed_stores_corrected_even_unchanged(batch: Path) -> None:
    save(batch, "reviewed", [as_json(LEFT)])
    record = saved_record(batch)
    assert (record["meta"]["itinerant"]["provenance"], record["events"]) == ("corrected", [as_json(LEFT)])


def test_restore_puts_back_the_provenance_and_the_events(batch: Path) -> None:
    original = batch.read_bytes()
    snapshot = ReviewFile(batch).snapshot()
    save(batch, "accept", snapshot["records"][0]["events"])
    save(batch, "restore", snapshot["records"][0]["events"], provenance="predicted")
    assert batch.read_bytes() == original


def test_restore_can_make_a_record_unannotated_again(batch: Path) -> None:
    original = batch.read_bytes()
    review = ReviewFile(batch)
    version = review.save("s2", version=file_version(original), events=[], action="accept").version
    assert saved_record(batch, 1)["events"] == []
    review.save("s2", version=version, events=None, action="restore", provenance=None)
    assert batch.read_bytes() == original


def test_an_edit_of_a_record_annotated_by_hand_makes_it_gold(tmp_path: Path) -> None:
    path = tmp_path / "gold.jsonl"
    write_jsonl([Record("s1", "book", TEXT, (LEFT,))], path)
    save(path, "edit", [as_json(Event((3, 7)))])
    assert saved_record(path) == {"id": "s1", "doc": "book", "text": TEXT, "events": [{"trigger": [3, 7], "roles": []}],
                                  "meta": {"itinerant": {"provenance": "gold"}}}


def test_a_change_that_breaks_a_check_rule_is_refused_and_nothing_is_written(batch: Path) -> None:
    original = batch.read_bytes()
    with pytest.raises(CorpusError, match=r"batch.jsonl:1: events\[0\].roles\[0\].span: \[0, 99\] is out of range for a text of 28"):
        save(batch, "edit", [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 99]}]}])
    with pytest.raises(CorpusError, match=r"unknown role 'goal'"):
        save(batch, "edit", [{"trigger": [3, 7], "roles": [{"role": "goal", "span": [19, 27]}]}])
    with pytest.raises(CorpusError, match=r"events\[0\].trigger: missing"):
        save(batch, "accept", [{"roles": []}])
    with pytest.raises(CorpusError, match=r"events\[0\]: must be an object, got int"):
        save(batch, "reviewed", [5])
    with pytest.raises(CorpusError, match="events must be a list, got dict"):
        save(batch, "edit", {"trigger": [3, 7]})
    with pytest.raises(CorpusError, match="unknown action 'approve'"):
        save(batch, "approve", [])
    with pytest.raises(CorpusError, match="has no record with id 'nope'"):
        ReviewFile(batch).save("nope", version=file_version(original), events=[], action="edit")
    assert batch.read_bytes() == original


def test_warnings_of_check_are_saved_and_returned(batch: Path) -> None:
    result = save(batch, "edit", [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}, {"role": "source", "span": [0, 2]}]}])
    assert result.warnings == ["events[0].roles: the mover 'We' is also marked as a place "
                               "(a mover changes location; a place is where it moves from, through or to)"]


def test_a_save_from_a_stale_copy_is_refused_and_the_file_kept(batch: Path) -> None:
    first_tab, second_tab = ReviewFile(batch), ReviewFile(batch)
    version = first_tab.snapshot()["version"]
    assert second_tab.snapshot()["version"] == version
    first_tab.save("s1", version=version, events=[], action="edit")
    after_first = batch.read_bytes()
    with pytest.raises(StaleCopyError, match=f"changed on disk since this page loaded it \\(page has version {version}"):
        second_tab.save("s2", version=version, events=[], action="accept")
    assert batch.read_bytes() == after_first


def test_another_record_with_unknown_keys_is_written_back_byte_for_byte(tmp_path: Path) -> None:
    path = tmp_path / "mixed.jsonl"
    odd = '{"text": "We rested.", "doc": "book", "id": "s2", "events": [], "note": "kept as written", "meta": {"é": 1}}'
    path.write_text(json.dumps({"id": "s1", "doc": "book", "text": TEXT}) + "\n" + odd + "\n", encoding="utf-8")
    save(path, "accept", [])
    assert path.read_text(encoding="utf-8").splitlines() == [
        json.dumps({"id": "s1", "doc": "book", "text": TEXT, "events": [], "meta": {"itinerant": {"provenance": "gold"}}}), odd]


def test_a_file_with_errors_is_refused_with_the_check_command_to_run(tmp_path: Path) -> None:
    path = tmp_path / "bad.jsonl"
    path.write_text('{"id": "s1", "doc": "book", "text": "We left.", "events": [{"trigger": [3, 99]}]}\n', encoding="utf-8")
    with pytest.raises(CorpusError, match=r"has 1 error\(s\), so it cannot be reviewed safely:\n.*bad.jsonl:1: events\[0\].trigger") as caught:
        ReviewFile(path).read()
    assert f"itinerant check {path}" in caught.value.fix
    path.write_text('{"id": "s1", "doc": "book", "text": "We left.", "meta": {"itinerant": {"provenance": "maybe"}}}\n',
                    encoding="utf-8")
    with pytest.raises(CorpusError, match='provenance "maybe" is not one of predicted, corrected, gold'):
        ReviewFile(path).read()
