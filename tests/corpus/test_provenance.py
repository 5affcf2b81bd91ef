"""Provenance: how a returned record's state is judged, and which records training may use."""

from __future__ import annotations

import pytest

from trainer.corpus.provenance import (
    events_digest, events_key, provenance_of, provenance_problem, resolve_provenance, training_records,
)
from trainer.corpus.records import Event, Record, RoleSpan

TEXT = "We left Caddow."
LEFT = Event((3, 7), (RoleSpan("mover", (0, 2)),))
LEFT_WITH_SOURCE = Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14))))
PREDICTED_DIGEST = events_digest([LEFT])


def returned(events, provenance=None, digest=PREDICTED_DIGEST) -> Record:
    block = {}
    if provenance is not None:
        block["provenance"] = provenance
    if digest is not None:
        block["prediction_digest"] = digest
    return Record("s1", "d", TEXT, None if events is None else tuple(events), {"itinerant": block} if block else None)


def test_the_digest_ignores_order_and_confidence_and_is_fixed():
    a = [Event((3, 7), (RoleSpan("source", (8, 14), 0.6), RoleSpan("mover", (0, 2), 0.9)), 0.8), Event((0, 2))]
    b = [Event((0, 2)), Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14))))]
    assert events_key(a) == events_key(b)
    assert events_digest(a) == events_digest(b)
    assert events_digest([LEFT]) == "d163123516cd21f3"
    assert events_digest([]) == "4f53cda18c2baa0c" != events_digest(None) == "none"


@pytest.mark.parametrize(("events", "stated", "digest", "expected"), [
    # a suggested record (it has the prediction's digest)
    ([LEFT], "predicted", PREDICTED_DIGEST, "predicted"),  # back untouched: nobody reviewed it
    ([LEFT_WITH_SOURCE], "predicted", PREDICTED_DIGEST, "corrected"),  # edited: the edit is the review
    ([], "predicted", PREDICTED_DIGEST, "corrected"),  # event deleted: a negative now
    ([LEFT], "gold", PREDICTED_DIGEST, "gold"),  # reviewed and accepted unchanged
    ([LEFT_WITH_SOURCE], "gold", PREDICTED_DIGEST, "corrected"),  # said gold, but it was edited
    ([LEFT], "corrected", PREDICTED_DIGEST, "corrected"),  # the annotator's word
    ([LEFT], None, PREDICTED_DIGEST, "predicted"),  # provenance key removed, digest still there
    # no digest: not a suggestion
    ([LEFT], None, None, "gold"),  # annotated from scratch
    ([LEFT], "corrected", None, "corrected"),
    ([LEFT], "predicted", None, "predicted"),  # e.g. an extraction output, never checked
    (None, "predicted", PREDICTED_DIGEST, None),  # unannotated: no provenance
])
def test_provenance_transitions(events, stated, digest, expected):
    assert resolve_provenance(returned(events, stated, digest)) == expected


def test_unreadable_provenance_is_named():
    assert provenance_problem(returned([LEFT], "reviewed")) == (
        'meta.itinerant.provenance "reviewed" is not one of predicted, corrected, gold')
    bad = Record("s1", "d", TEXT, (), {"itinerant": "gold"})
    assert provenance_problem(bad) == 'meta.itinerant must be an object like {"provenance": "gold"}, got "gold"'
    assert provenance_of(bad) is None
    assert provenance_problem(returned([LEFT], "gold")) is None
    assert provenance_problem(Record("s1", "d", TEXT, ())) is None


def test_training_refuses_unreviewed_predictions():
    records = [
        Record("plain", "d", TEXT, (LEFT,)),  # an ordinary hand-annotated record
        Record("negative", "d", TEXT, (), {"itinerant": {"provenance": "gold"}}),
        Record("fixed", "d", TEXT, (LEFT,), {"itinerant": {"provenance": "corrected"}}),
        Record("unchecked", "d", TEXT, (LEFT,), {"itinerant": {"provenance": "predicted"}}),
        Record("unchecked-negative", "d", TEXT, (), {"itinerant": {"provenance": "predicted"}}),
        Record("typo", "d", TEXT, (LEFT,), {"itinerant": {"provenance": "reviewd"}}),
        Record("text-only", "d", TEXT),
    ]
    usable, refused = training_records(records)
    assert [r.id for r in usable] == ["plain", "negative", "fixed"]
    assert refused == ["unchecked", "unchecked-negative", "typo"]
    assert usable[0] is records[0]


def test_training_takes_a_suggested_record_whose_events_were_edited_as_reviewed():
    # docs/retraining.md: editing a record marks it reviewed by itself, whatever its provenance still says.
    edited = returned([LEFT_WITH_SOURCE], "predicted")
    untouched = returned([LEFT], "predicted")
    assert resolve_provenance(edited) == "corrected" and resolve_provenance(untouched) == "predicted"
    usable, refused = training_records([edited, untouched])
    assert [r.events for r in usable] == [edited.events] and refused == [untouched.id]
