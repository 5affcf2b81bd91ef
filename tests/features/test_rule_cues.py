"""The rule decisions and their use as features (stacking), on hand-built parses with exact values."""

from __future__ import annotations

from tests.hand_parsed import REACHED_TARN, make_doc

from trainer.config import FeatureConfig
from trainer.features import groups
from trainer.features.extract import Featurizer
from trainer.features.lexicons import load_lexicons
from trainer.features.rule_cues import RuleRole, RuleTrigger, rule_roles, rule_triggers
from trainer.models.rules import RuleRoleLabeller, RuleTriggerFinder

LEXICONS = load_lexicons()

# 'We left Caddow and rode to Quillon, but we did not reach the ford.'
LEFT_RODE = """
We       we       PRON   PRP  nsubj  1
left     leave    VERB   VBD  ROOT   1
Caddow   Caddow   PROPN  NNP  dobj   1
and      and      CCONJ  CC   cc     1
rode     ride     VERB   VBD  conj   1
to       to       ADP    IN   prep   4
Quillon  Quillon  PROPN  NNP  pobj   5
,        ,        PUNCT  ,    punct  1
but      but      CCONJ  CC   cc     1
we       we       PRON   PRP  nsubj  12
did      do       AUX    VBD  aux    12
not      not      PART   RB   neg    12
reach    reach    VERB   VB   conj   1
the      the      DET    DT   det    14
ford     ford     NOUN   NN   dobj   12
.        .        PUNCT  .    punct  1
"""
# 'Our departure from Saltcote was at dawn.'
DEPARTURE = """
Our        our        PRON   PRP$  poss   1
departure  departure  NOUN   NN    nsubj  5
from       from       ADP    IN    prep   1
Saltcote   Saltcote   PROPN  NNP   pobj   2
was        be         AUX    VBD   ROOT   4
at         at         ADP    IN    prep   4
dawn       dawn       NOUN   NN    pobj   5
.          .          PUNCT  .     punct  4
"""
# 'We hoped to cross the river.'
HOPED = """
We     we     PRON   PRP  nsubj  1
hoped  hope   VERB   VBD  ROOT   1
to     to     PART   TO   aux    3
cross  cross  VERB   VB   xcomp  1
the    the    DET    DT   det    5
river  river  NOUN   NN   dobj   3
.      .      PUNCT  .    punct  1
"""


def test_rule_triggers_keep_real_motion_and_name_what_blocks_the_rest() -> None:
    doc = make_doc(LEFT_RODE)
    assert rule_triggers(doc, LEXICONS) == [
        RuleTrigger(1, 2, "departure", ""), RuleTrigger(4, 5, "manner", ""), RuleTrigger(12, 13, "arrival", "negated"),
    ]
    assert rule_triggers(make_doc(HOPED), LEXICONS) == [RuleTrigger(3, 4, "traversal", "not_yet")]


def test_rule_roles_carry_their_cue() -> None:
    doc = make_doc(LEFT_RODE)
    assert rule_roles(doc, (1, 2), LEXICONS) == [
        RuleRole(0, 1, "mover", "subject"), RuleRole(2, 3, "source", "object:departure"),
    ]
    # The coordinated verb shares the subject; its destination comes from the preposition.
    assert rule_roles(doc, (4, 5), LEXICONS) == [
        RuleRole(0, 1, "mover", "subject"), RuleRole(6, 7, "destination", "prep:to"),
    ]
    assert rule_roles(make_doc(DEPARTURE), (1, 2), LEXICONS) == [
        RuleRole(0, 1, "mover", "possessor"), RuleRole(3, 4, "source", "prep:from"),
    ]
    assert rule_roles(make_doc(REACHED_TARN), (1, 2), LEXICONS) == [
        RuleRole(0, 1, "mover", "subject"), RuleRole(2, 6, "destination", "object:arrival"),
    ]


def test_rule_stages_are_the_decisions_without_the_cues() -> None:
    doc = make_doc(LEFT_RODE)
    assert RuleTriggerFinder(LEXICONS).predict([doc]) == [[(1, 2, 1.0), (4, 5, 1.0)]]
    assert RuleRoleLabeller(LEXICONS).predict([doc], [[(1, 2, 1.0)]]) == [[[(0, 1, "mover", 1.0), (2, 3, "source", 1.0)]]]


def test_rule_trigger_tags_as_token_features() -> None:
    doc = make_doc(LEFT_RODE)
    arguments = [rule_roles(doc, (t.i, t.i + 1), LEXICONS) if t.pos_ == "VERB" else [] for t in doc]
    tags = groups.rule_trigger_tags(doc, rule_triggers(doc, LEXICONS), arguments)
    assert tags[1] == {"rule_trigger": "B", "rule_class": "departure", "rule_args": "source", "rule_arg=source": True}
    assert tags[4] == {"rule_trigger": "B", "rule_class": "manner", "rule_args": "destination",
                       "rule_arg=destination": True}
    # 'reach' is a lexicon verb the rules drop: negated. Its object would be a destination.
    assert tags[12] == {"rule_trigger": "O", "rule_class": "arrival", "rule_blocked": "negated",
                        "rule_args": "destination", "rule_arg=destination": True}
    assert tags[2] == {"rule_trigger": "O"}


def test_rule_role_tags_for_one_trigger() -> None:
    doc = make_doc(REACHED_TARN)
    tags = groups.rule_role_tags(doc, rule_roles(doc, (1, 2), LEXICONS))
    assert [t["rule_role"] for t in tags] == ["B-mover", "O", "B-destination", "I-destination", "I-destination",
                                              "I-destination", "O"]
    assert tags[0]["rule_cue"] == "subject" and tags[3]["rule_cue"] == "object:arrival"
    assert "rule_cue" not in tags[1]


def test_the_rules_group_reaches_both_stages_through_the_featurizer() -> None:
    doc = make_doc(REACHED_TARN)
    featurizer = Featurizer(FeatureConfig(groups=["rules", "context"], window=1), LEXICONS)
    tokens = featurizer.token_features(doc)
    assert tokens[1]["rule_trigger"] == "B" and tokens[2]["-1:rule_trigger"] == "B"
    roles = featurizer.role_features(doc, (1, 2), tokens)
    assert roles[3]["rule_role"] == "I-destination" and roles[3]["rule_cue"] == "object:arrival"
    without = Featurizer(FeatureConfig(groups=["context"], window=1), LEXICONS).role_features(doc, (1, 2))
    assert not any(key.startswith("rule_") or ":rule_" in key for row in without for key in row)
