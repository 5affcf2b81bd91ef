"""Merging returned batches: what is added, updated or kept, and every conflict reported with its id."""

from __future__ import annotations

import copy

import pytest

from trainer.annotation.merge import MergeResult, merge_batches, merge_files, training_records
from trainer.corpus.provenance import events_digest
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.corpus.validate import check_files
from trainer.errors import CorpusError

TEXT = "We left Caddow."
LEFT = Event((3, 7), (RoleSpan("mover", (0, 2)),))
LEFT_FROM = Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14))))
SCORED = Event((3, 7), (RoleSpan("mover", (0, 2), 0.91),), 0.88)  # LEFT as a model gives it


def suggested(id: str, events=(SCORED,), provenance: str = "predicted", **meta) -> Record:
    """A record as suggest_batch writes it (the prediction is LEFT), after the annotator had it."""
    block = {"provenance": provenance, "uncertainty": 0.5, "rank": 1, "model": "m", "prediction_digest": events_digest([LEFT])}
    return Record(id, "book", TEXT, tuple(events), {**meta, "itinerant": block})


def text_only(id: str, **meta) -> Record:
    return Record(id, "book", TEXT, None, meta or None)


def gold(id: str, events=(LEFT,)) -> Record:
    return Record(id, "book", TEXT, tuple(events))


def test_add_update_unchanged():
    corpus = [gold("g1"), text_only("t1", offset=40), text_only("t2")]
    batch = [gold("g1"), suggested("t1", events=(LEFT_FROM,)), suggested("new", provenance="gold")]
    result = merge_batches(corpus, [batch])
    assert (result.added, result.updated, result.unchanged, result.conflicts) == (["new"], ["t1"], ["g1"], [])
    assert [r.id for r in result.records] == ["g1", "t1", "t2", "new"]
    t1 = result.records[1]
    assert t1.events == (LEFT_FROM,)
    assert t1.meta == {"offset": 40, "itinerant": {"provenance": "corrected", "uncertainty": 0.5, "rank": 1, "model": "m",
                                                   "prediction_digest": events_digest([LEFT])}}
    assert result.records[0] is corpus[0]  # unchanged means untouched
    assert result.records[3].meta["itinerant"]["provenance"] == "gold"


def test_reviewed_records_lose_the_model_confidences_unreviewed_keep_them():
    result = merge_batches([text_only("a"), text_only("b")], [[suggested("a", provenance="gold"), suggested("b")]])
    accepted, unreviewed = result.records
    assert accepted.meta["itinerant"]["provenance"] == "gold"
    assert accepted.events[0].confidence is None and accepted.events[0].roles[0].confidence is None
    assert unreviewed.meta["itinerant"]["provenance"] == "predicted"
    assert unreviewed.events[0].confidence == 0.88


def test_a_record_annotated_from_scratch_in_a_batch_becomes_gold():
    result = merge_batches([text_only("t1")], [[gold("t1", events=())]])
    assert result.records[0].meta == {"itinerant": {"provenance": "gold"}}
    assert result.records[0].events == ()


def test_text_conflict_is_reported_and_the_corpus_record_kept():
    corpus = [text_only("t1")]
    changed = Record("t1", "book", "We left Caddow at once.", (LEFT,))
    result = merge_batches(corpus, [[changed]])
    assert result.conflicts == ["t1: the batch text differs from the corpus text for this id "
                                "(fix: the sentence was edited or the id reused; restore the text or use a new id)"]
    assert result.records == corpus and result.updated == []


def test_a_gold_record_is_never_overwritten_by_a_different_annotation():
    corpus = [gold("g1"), Record("g2", "book", TEXT, (LEFT,), {"itinerant": {"provenance": "corrected"}})]
    result = merge_batches(corpus, [[gold("g1", events=(LEFT_FROM,)), suggested("g2", events=())]])
    assert result.conflicts == [
        "g1: the corpus already holds a reviewed annotation (gold) and the batch would overwrite it with different events "
        "(fix: edit the corpus record itself if it is wrong, or drop this record from the batch)",
        "g2: the corpus already holds a reviewed annotation (corrected) and the batch would overwrite it with different events "
        "(fix: edit the corpus record itself if it is wrong, or drop this record from the batch)",
    ]
    assert result.records == corpus
    assert all(a.same_content(b) for a, b in zip(result.records, corpus))


def test_two_batches_disagreeing_on_an_id_is_a_conflict():
    result = merge_batches([text_only("t1"), text_only("t2")], [
        [suggested("t1", events=(LEFT_FROM,)), suggested("t2", provenance="gold")],
        [suggested("t1", events=()), Record("t2", "book", "We left Caddow!", (LEFT,))],
    ])
    assert result.conflicts == [
        "t1: batch 1 and batch 2 give different events (fix: decide which annotation is right and keep it in one batch only)",
        "t2: batch 1 and batch 2 give different text for this id "
        "(fix: keep one version of the sentence, or give one of them another id)",
    ]
    assert result.records[0].events is None and result.records[1].events is None


def test_the_same_annotation_in_two_batches_is_merged_once_and_the_reviewed_copy_wins():
    result = merge_batches([text_only("t1")], [[suggested("t1")], [suggested("t1", provenance="gold")]])
    assert result.conflicts == [] and result.updated == ["t1"]
    assert result.records[0].meta["itinerant"]["provenance"] == "gold"


def test_an_unreadable_provenance_is_a_conflict():
    result = merge_batches([text_only("t1")], [[suggested("t1", provenance="reviewed")]])
    assert result.conflicts == ['t1: batch 1: meta.itinerant.provenance "reviewed" is not one of predicted, corrected, '
                                'gold (fix: write predicted, corrected or gold, or remove the key)']
    assert result.records[0].events is None


def test_a_still_predicted_corpus_record_may_be_replaced():
    corpus = [suggested("t1")]
    result = merge_batches(corpus, [[suggested("t1", events=(LEFT_FROM,))]])
    assert result.updated == ["t1"] and result.conflicts == []
    assert result.records[0].meta["itinerant"]["provenance"] == "corrected"
    again = merge_batches(corpus, [[suggested("t1")]])
    assert again.unchanged == ["t1"] and again.updated == []


def test_provenance_transitions_through_a_merge_and_training_refuses_what_nobody_checked():
    corpus = [text_only(f"t{i}") for i in range(4)]
    batch = [suggested("t0"),  # returned untouched
             suggested("t1", events=(LEFT_FROM,)),  # edited
             suggested("t2", provenance="gold"),  # accepted
             suggested("t3", provenance="corrected")]  # marked corrected by the annotator
    result = merge_batches(corpus, [batch])
    assert [r.meta["itinerant"]["provenance"] for r in result.records] == ["predicted", "corrected", "gold", "corrected"]
    usable, refused = training_records(result.records)
    assert [r.id for r in usable] == ["t1", "t2", "t3"] and refused == ["t0"]


def test_inputs_are_not_changed_and_corpus_ids_must_be_unique():
    corpus, batch = [text_only("t1", offset=3)], [suggested("t1", events=(LEFT_FROM,))]
    before = copy.deepcopy((corpus, batch))
    merge_batches(corpus, [batch])
    assert all(a.same_content(b) for a, b in zip(corpus + batch, before[0] + before[1]))
    with pytest.raises(CorpusError, match="the corpus holds id 't1' twice"):
        merge_batches([text_only("t1"), text_only("t1")], [])


def test_merge_files_round_trip(tmp_path):
    corpus_file, batch_file, out = tmp_path / "corpus.jsonl", tmp_path / "batch.jsonl", tmp_path / "merged.jsonl"
    write_jsonl([gold("g1"), text_only("t1", offset=12)], corpus_file)
    write_jsonl([suggested("t1", provenance="gold"), suggested("new", events=(LEFT_FROM,))], batch_file)
    result = merge_files([corpus_file], [batch_file], out)
    assert isinstance(result, MergeResult)
    assert (result.added, result.updated, result.conflicts) == (["new"], ["t1"], [])
    back = read_corpus([out]).records
    assert [r.id for r in back] == ["g1", "t1", "new"]
    assert all(a.same_content(b) for a, b in zip(back, result.records))
    assert check_files([out]).problems == []
