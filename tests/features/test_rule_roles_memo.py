"""Rule roles remembered per doc give what a fresh computation gives, and go with their doc."""

from __future__ import annotations

import gc
from dataclasses import replace

from tests.features.test_rule_cues import DEPARTURE, HOPED, LEFT_RODE
from tests.hand_parsed import REACHED_TARN, make_doc

from trainer.features import rule_cues
from trainer.features.lexicons import load_lexicons
from trainer.features.rule_cues import RuleRole, rule_roles

LEXICONS = load_lexicons()
TABLES = [LEFT_RODE, DEPARTURE, HOPED, REACHED_TARN]


def every_range(doc) -> list[tuple[int, int]]:
    return [(first, end) for first in range(len(doc)) for end in range(first + 1, min(first + 3, len(doc)) + 1)]


def test_remembered_roles_equal_a_fresh_computation_on_another_copy_of_the_parse() -> None:
    for table in TABLES:
        doc, fresh_doc = make_doc(table), make_doc(table)
        for trigger in every_range(doc):
            first_call = rule_roles(doc, trigger, LEXICONS)
            again = rule_roles(doc, trigger, LEXICONS)
            assert first_call == again == rule_cues._find_roles(fresh_doc, trigger, LEXICONS)
        assert len(rule_cues._ROLES_SEEN[doc]) == len(every_range(doc))


def test_remembered_roles_are_the_hand_checked_ones() -> None:
    doc = make_doc(LEFT_RODE)
    expected = [RuleRole(0, 1, "mover", "subject"), RuleRole(6, 7, "destination", "prep:to")]
    assert rule_roles(doc, (4, 5), LEXICONS) == expected
    assert rule_roles(doc, (4, 5), LEXICONS) == expected


def test_a_caller_changing_the_returned_list_does_not_change_the_memory() -> None:
    doc = make_doc(LEFT_RODE)
    got = rule_roles(doc, (1, 2), LEXICONS)
    got.clear()
    assert rule_roles(doc, (1, 2), LEXICONS) == [RuleRole(0, 1, "mover", "subject"),
                                                  RuleRole(2, 3, "source", "object:departure")]


def test_other_lexicons_get_their_own_answer() -> None:
    doc = make_doc(LEFT_RODE)
    assert rule_roles(doc, (4, 5), LEXICONS)[-1].role == "destination"
    no_prepositions = replace(LEXICONS, prepositions={})
    assert rule_roles(doc, (4, 5), no_prepositions) == [RuleRole(0, 1, "mover", "subject")]
    assert rule_roles(doc, (4, 5), LEXICONS)[-1].role == "destination"


def test_the_memory_of_a_doc_goes_with_the_doc() -> None:
    doc = make_doc(DEPARTURE)
    rule_roles(doc, (1, 2), LEXICONS)
    assert doc in rule_cues._ROLES_SEEN
    before = len(rule_cues._ROLES_SEEN)
    del doc
    gc.collect()
    assert len(rule_cues._ROLES_SEEN) == before - 1
