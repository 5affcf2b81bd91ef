"""The rule decisions and their use as features (stacking), on hand-built parses with exact values."""

from __future__ import annotations

from tests.hand_parsed import REACHED_TARN, make_doc

from trainer.config import FeatureConfig
from trainer.features import groups
from trainer.features.extract import Featurizer
from trainer.features.lexicons import load_lexicons
from trainer.features.rule_cues import RuleRole, RuleTrigger, blocking_cue, rule_roles, rule_triggers
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


def test_rule_triggers_read_words_the_parser_lemmatised_wrongly() -> None:
    from tests.features.test_lexicons import RIDING, SAILING_SHIP

    # 'riding' (lemma 'rid') and the gerund 'sailing' are read through WordNet's base forms; 'go' under
    # 'hoped' is blocked; 'came in' (an auxiliary left as 'came') keeps its glued particle in the span.
    assert rule_triggers(make_doc(RIDING), LEXICONS) == [
        RuleTrigger(1, 2, LEXICONS.verb_class("ride"), ""), RuleTrigger(7, 8, LEXICONS.verb_class("go"), "not_yet"),
        RuleTrigger(9, 10, LEXICONS.verb_class("sail"), ""),
    ]
    assert rule_triggers(make_doc(SAILING_SHIP), LEXICONS) == [RuleTrigger(3, 5, "arrival", "")]


# 'After wandering along, we reached the wells.'
WANDERING = """
After      after    ADP    IN   prep    5
wandering  wander   VERB   VBG  pcomp   0
along      along    ADV    RB   advmod  1
,          ,        PUNCT  ,    punct   5
we         we       PRON   PRP  nsubj   5
reached    reach    VERB   VBD  ROOT    5
the        the      DET    DT   det     7
wells      well     NOUN   NNS  dobj    5
.          .        PUNCT  .    punct   5
"""
# 'We saw sails gliding into the bay.'
GLIDING = """
We       we      PRON   PRP  nsubj  1
saw      see     VERB   VBD  ROOT   1
sails    sail    NOUN   NNS  dobj   1
gliding  glide   VERB   VBG  acl    2
into     into    ADP    IN   prep   3
the      the     DET    DT   det    6
bay      bay     NOUN   NN   pobj   4
.        .       PUNCT  .    punct  1
"""


def test_participles_take_the_mover_of_the_clause_that_controls_them() -> None:
    # Subject control of adjunct participles and gerunds (common practice in syntax: the understood subject of
    # 'after wandering along' is the main clause's subject), and a participle modifying a noun moves that noun.
    doc = make_doc(WANDERING)
    assert rule_roles(doc, (1, 2), LEXICONS) == [RuleRole(4, 5, "mover", "controller")]
    assert rule_roles(doc, (5, 6), LEXICONS) == [
        RuleRole(4, 5, "mover", "subject"), RuleRole(6, 8, "destination", "object:arrival")]
    assert rule_roles(make_doc(GLIDING), (3, 4), LEXICONS) == [
        RuleRole(2, 3, "mover", "modified_noun"), RuleRole(5, 7, "destination", "prep:into")]


# 'We passed Arlo and Brenn.'
PASSED_TWO = """
We      we      PRON   PRP  nsubj  1
passed  pass    VERB   VBD  ROOT   1
Arlo    Arlo    PROPN  NNP  dobj   1
and     and     CCONJ  CC   cc     2
Brenn   Brenn   PROPN  NNP  conj   2
.       .       PUNCT  .    punct  1
"""


def test_coordinated_places_are_roles_of_their_own() -> None:
    # The annotation spec's own example: 'through Arlo and Brenn' has two path spans.
    assert rule_roles(make_doc(PASSED_TWO), (1, 2), LEXICONS) == [
        RuleRole(0, 1, "mover", "subject"), RuleRole(2, 3, "path", "object:traversal"),
        RuleRole(4, 5, "path", "object:traversal")]


def test_plans_purposes_and_to_morrow_block_a_motion_verb() -> None:
    # 'He was directed to proceed to the coast.' (an order not yet carried out, per the annotation spec)
    directed = make_doc("""
He        he        PRON   PRP  nsubjpass  2
was       be        AUX    VBD  auxpass    2
directed  direct    VERB   VBN  ROOT       2
to        to        PART   TO   aux        4
proceed   proceed   VERB   VB   xcomp      2
.         .         PUNCT  .    punct      2
""")
    # 'I start to-morrow for Oban.' as the small English pipeline parses it: 'to' + '-' + 'morrow'.
    to_morrow = make_doc("""
I       I       PRON   PRP  nsubj  1
start   start   VERB   VBP  ROOT   1
to      to      ADP    IN   prep   1
-       -       PUNCT  HYPH punct  2
morrow  morrow  NOUN   NN   pobj   2
for     for     ADP    IN   prep   1
Oban    Oban    PROPN  NNP  pobj   5
.       .       PUNCT  .    punct  1
""")
    # 'We halted there to rest the mules before we rode on.' (an infinitive of purpose; 'rode' is narrated)
    purpose = make_doc("""
We      we      PRON   PRP  nsubj  1
halted  halt    VERB   VBD  ROOT   1
there   there   ADV    RB   advmod 1
to      to      PART   TO   aux    4
rest    rest    VERB   VB   advcl  1
the     the     DET    DT   det    6
mules   mule    NOUN   NNS  dobj   4
before  before  SCONJ  IN   mark   9
we      we      PRON   PRP  nsubj  9
rode    ride    VERB   VBD  advcl  1
on      on      ADP    RP   prt    9
.       .       PUNCT  .    punct  1
""")
    assert blocking_cue(directed[4]) == "not_yet"
    assert blocking_cue(to_morrow[1]) == "future"
    assert (blocking_cue(purpose[4]), blocking_cue(purpose[9])) == ("purpose", "")


def test_a_time_noun_as_subject_or_object_blocks_a_motion_verb() -> None:
    # 'Night came on, and we passed an uncomfortable night by the ford; at dawn we passed the ford.'
    # 'night' and 'dawn' are time nouns by their first WordNet 3.0 sense (noun.time), 'ford' is not.
    doc = make_doc("""
Night          night          NOUN   NN   nsubj  1
came           come           VERB   VBD  ROOT   1
on             on             ADP    RP   prt    1
,              ,              PUNCT  ,    punct  1
and            and            CCONJ  CC   cc     1
we             we             PRON   PRP  nsubj  6
passed         pass           VERB   VBD  conj   1
an             an             DET    DT   det    9
uncomfortable  uncomfortable  ADJ    JJ   amod   9
night          night          NOUN   NN   dobj   6
by             by             ADP    IN   prep   6
the            the            DET    DT   det    12
ford           ford           NOUN   NN   pobj   10
;              ;              PUNCT  :    punct  1
at             at             ADP    IN   prep   17
dawn           dawn           NOUN   NN   pobj   14
we             we             PRON   PRP  nsubj  17
passed         pass           VERB   VBD  conj   1
the            the            DET    DT   det    19
ford           ford           NOUN   NN   dobj   17
.              .              PUNCT  .    punct  1
""")
    assert [blocking_cue(doc[i]) for i in (1, 6, 17)] == ["time_subject", "time_object", ""]
    assert [(t.first, t.blocked) for t in rule_triggers(doc, LEXICONS)] == [
        (1, "time_subject"), (6, "time_object"), (17, "")]


def test_an_infinitive_complement_or_a_conditional_clause_is_not_narrated_motion() -> None:
    # Spec, section 2: no event for hypothetical motion. Implicative verbs (`began to`, `managed to`; common
    # practice in the semantics of complement clauses) assert that their complement happened.
    # 'The mules seemed to fly, but we began to descend; we could not manage to cross. If we crossed, we rode.'
    doc = make_doc("""
The      the      DET    DT   det    1
mules    mule     NOUN   NNS  nsubj  2
seemed   seem     VERB   VBD  ROOT   2
to       to       PART   TO   aux    4
fly      fly      VERB   VB   xcomp  2
,        ,        PUNCT  ,    punct  2
but      but      CCONJ  CC   cc     2
we       we       PRON   PRP  nsubj  8
began    begin    VERB   VBD  conj   2
to       to       PART   TO   aux    10
descend  descend  VERB   VB   xcomp  8
;        ;        PUNCT  :    punct  2
we       we       PRON   PRP  nsubj  15
could    could    AUX    MD   aux    15
not      not      PART   RB   neg    15
manage   manage   VERB   VB   conj   2
to       to       PART   TO   aux    17
cross    cross    VERB   VB   xcomp  15
.        .        PUNCT  .    punct  2
""")
    assert [blocking_cue(doc[i]) for i in (4, 10, 17)] == ["infinitive", "", "negated"]
    conditional = make_doc("""
If       if       SCONJ  IN   mark   2
we       we       PRON   PRP  nsubj  2
crossed  cross    VERB   VBD  advcl  5
,        ,        PUNCT  ,    punct  5
we       we       PRON   PRP  nsubj  5
rode     ride     VERB   VBD  ROOT   5
.        .        PUNCT  .    punct  5
""")
    assert [(t.first, t.blocked) for t in rule_triggers(conditional, LEXICONS)] == [(2, "conditional"), (5, "")]
    # 'The caravan was seen to enter the pass.': perception in the passive says it happened.
    seen = make_doc("""
The      the      DET    DT   det        1
caravan  caravan  NOUN   NN   nsubjpass  3
was      be       AUX    VBD  auxpass    3
seen     see      VERB   VBN  ROOT       3
to       to       PART   TO   aux        5
enter    enter    VERB   VB   xcomp      3
the      the      DET    DT   det        7
pass     pass     NOUN   NN   dobj       5
.        .        PUNCT  .    punct      3
""")
    assert blocking_cue(seen[5]) == ""
    # A verb labelled as a conjunct or complement of itself, or two verbs each the other's head (malformed trees
    # read from a CoNLL-U file), are judged without inheriting round the cycle for ever.
    self_headed = make_doc("""
We     we     PRON   PRP  nsubj  1
begin  begin  VERB   VB   conj   1
to     to     PART   TO   aux    3
begin  begin  VERB   VB   xcomp  3
""")
    assert [blocking_cue(self_headed[1]), blocking_cue(self_headed[3])] == ["", ""]
    cycle = make_doc("""
We     we     PRON   PRP  nsubj  1
go     go     VERB   VB   conj   2
run    run    VERB   VB   conj   1
""")
    assert [blocking_cue(cycle[1]), blocking_cue(cycle[2])] == ["", ""]


def test_shared_blocks_generic_relatives_and_participles_used_as_adjectives() -> None:
    # Spec, section 2: no event for plans not yet carried out, generic statements or fictive motion.
    # 'We meant to rest and cross the river, which runs into the lake; on the following day we sailed.'
    # A bare verb coordinated with a blocked one shares its block (common practice: coordinated verbs share
    # their auxiliaries and `to`); a present-tense relative clause in a narrative is generic or fictive; a
    # participle modifying a noun (`the following day`) is an adjective there, not an event.
    doc = make_doc("""
We         we         PRON   PRP  nsubj  1
meant      mean       VERB   VBD  ROOT   1
to         to         PART   TO   aux    3
rest       rest       VERB   VB   xcomp  1
and        and        CCONJ  CC   cc     3
cross      cross      VERB   VB   conj   3
the        the        DET    DT   det    7
river      river      NOUN   NN   dobj   5
,          ,          PUNCT  ,    punct  7
which      which      PRON   WDT  nsubj  10
runs       run        VERB   VBZ  relcl  7
into       into       ADP    IN   prep   10
the        the        DET    DT   det    13
lake       lake       NOUN   NN   pobj   11
;          ;          PUNCT  :    punct  1
on         on         ADP    IN   prep   20
the        the        DET    DT   det    18
following  follow     VERB   VBG  amod   18
day        day        NOUN   NN   pobj   15
we         we         PRON   PRP  nsubj  20
sailed     sail       VERB   VBD  conj   1
.          .          PUNCT  .    punct  1
""")
    assert [blocking_cue(doc[i]) for i in (5, 10, 17, 20)] == ["not_yet", "present_relative", "attributive", ""]
    assert [(t.first, t.blocked) for t in rule_triggers(doc, LEXICONS)] == [
        (5, "not_yet"), (10, "present_relative"), (17, "attributive"), (20, "")]


# 'We left Caddow and, turning west, we reached Quillon.' with the participle hung from the first verb,
# as the small English parser often does; and 'We reached Quillon, leaving Caddow, and we camped.'
TURNING = """
We       we       PRON   PRP  nsubj  1
left     leave    VERB   VBD  ROOT   1
Caddow   Caddow   PROPN  NNP  dobj   1
and      and      CCONJ  CC   cc     1
,        ,        PUNCT  ,    punct  5
turning  turn     VERB   VBG  conj   1
west     west     ADV    RB   advmod 5
,        ,        PUNCT  ,    punct  9
we       we       PRON   PRP  nsubj  9
reached  reach    VERB   VBD  conj   1
Quillon  Quillon  PROPN  NNP  dobj   9
.        .        PUNCT  .    punct  1
"""
LEAVING = """
We       we       PRON   PRP  nsubj  1
reached  reach    VERB   VBD  ROOT   1
Quillon  Quillon  PROPN  NNP  dobj   1
,        ,        PUNCT  ,    punct  1
leaving  leave    VERB   VBG  advcl  1
Caddow   Caddow   PROPN  NNP  dobj   4
,        ,        PUNCT  ,    punct  1
and      and      CCONJ  CC   cc     1
we       we       PRON   PRP  nsubj  9
camped   camp     VERB   VBD  conj   1
.        .        PUNCT  .    punct  1
"""


def test_a_fronted_participle_takes_the_subject_of_the_clause_after_it() -> None:
    # Common practice in English grammar: a clause-initial participle is understood with the subject of the
    # clause it stands before, wherever the parser attaches it; a trailing one keeps its governor's subject.
    assert rule_roles(make_doc(TURNING), (5, 6), LEXICONS) == [RuleRole(8, 9, "mover", "controller")]
    assert rule_roles(make_doc(LEAVING), (4, 5), LEXICONS) == [
        RuleRole(0, 1, "mover", "controller"), RuleRole(5, 6, "source", "object:departure")]
