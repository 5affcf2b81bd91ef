"""The rule baseline's decisions, computed from the parse and the lexicons alone.

Two consumers share this module, so the rules and the features built from
them can never disagree: the rule extractor (:mod:`trainer.models.rules`)
turns the decisions into predictions, and the ``rules`` feature group
(:mod:`trainer.features.groups`) hands them to the learned stages as
features (stacking), so a trained model starts from the rules' answers and
learns where they go wrong.

Triggers are verbs (and nouns) whose lemma is in the motion lexicons, unless
negated, under a modal or a verb of wanting or planning, in a conditional
clause, an infinitive that its head does not imply happened (`seemed to fly`)
or one of purpose, in a present-tense relative clause, a participle used as an
adjective, dated to-morrow, or with a time noun as subject or object.
Roles come from
dependency patterns: the subject is the mover (shared by coordinated verbs,
by the participles and infinitives it controls, and by a participle fronted
before its clause), a prepositional object takes the role its preposition cues, and a direct
object takes the role the verb's class implies (``left X`` source,
``reached X`` destination, ``crossed X`` path). Each decision carries the cue
that made it (``subject``, ``controller``, ``object:departure``, ``prep:from``, ...).
"""

from __future__ import annotations

from dataclasses import dataclass
from weakref import WeakKeyDictionary

from spacy.tokens import Doc, Token

from trainer.features.groups import governing_preposition, parse_tree
from trainer.features.lexicons import Lexicons, motion_reading
from trainer.features.wordnet import argument_class, packaged_classes

HYPOTHETICAL_AUX = {"would", "could", "should", "might", "may", "shall", "will", "must", "ought", "can"}
# Verbs of wanting, planning, deciding, asking and ordering: a motion verb under them is not yet carried out
# (`we hoped to cross`, `he was directed to proceed`); aspect and necessity (`began to`, `were obliged to`) are not here.
NOT_YET_HEADS = {
    "hope", "want", "wish", "desire", "long", "mean", "intend", "plan", "purpose", "design", "propose", "expect",
    "try", "attempt", "endeavour", "endeavor", "seek", "fail", "refuse", "decline", "hesitate", "resolve",
    "determine", "decide", "prepare", "promise", "agree", "offer", "consent", "order", "bid", "direct", "instruct",
    "command", "ask", "beg", "invite", "persuade", "urge", "advise", "tell", "allow", "permit",
}
# Heads whose infinitive complement did happen: aspect (`began to descend`), success, haste and chance (`managed
# to cross`, `hastened to leave`, `happened to pass`), necessity (`were obliged to leave`, `had to be fetched`),
# perception in the passive (`was seen to enter`). Under any other head an infinitive complement is not narrated
# as happening (`seemed to fly`, `willing to ride`, `was to sail`).
IMPLICATIVE_HEADS = {
    "begin", "start", "commence", "continue", "proceed", "resume", "manage", "contrive", "succeed", "remember",
    "hasten", "hurry", "help", "happen", "chance", "come", "get", "take", "have", "oblige", "force", "compel",
    "make", "venture", "dare", "see", "hear", "observe", "notice", "perceive",
}
# Subordinators of a hypothetical clause (`if the wind held`, `unless the ford is down`, `whether we should go`).
CONDITIONAL_MARKS = {"if", "unless", "lest", "whether"}
# Words that put a present-tense verb in the future (`I start to-morrow for Oban`).
FUTURE_WORDS = {"to-morrow", "tomorrow", "morrow"}
# A motion verb with a time noun as its subject or object tells of time passing, not of a change of place.
_TIME_ARGUMENT_CUES = {"nsubj": "time_subject", "dobj": "time_object"}
OBJECT_ROLE_BY_CLASS = {
    "departure": "source", "arrival": "destination", "traversal": "path",
    "ascent_descent": "path", "return": "destination",
}
SUBJECT_DEPS = {"nsubj", "nsubjpass"}
# A verb in one of these relations has its subject from the verb it hangs from (subject control).
_CONTROLLED_DEPS = {"advcl", "xcomp", "pcomp"}
_MAX_CONTROL_STEPS = 3
_MAX_INHERIT_STEPS = 4  # heads up a chain of coordinated verbs and implicative heads that a blocking cue comes from
# Penn tags of participles (one modifying a noun takes that noun as its mover, a fronted one the subject of the
# clause after it) and of finite verbs.
_PARTICIPLE_TAGS = {"VBG", "VBN"}
_FINITE_TAGS = {"VBD", "VBZ", "VBP", "MD"}
_PRESENT_TAGS = {"VBZ", "VBP"}
_RELATIVE_TAGS = {"WDT", "WP", "WP$"}
_COMPLEMENT_DEPS = {"xcomp", "ccomp", "acl", "relcl", "amod", "compound", "attr", "acomp", "dobj", "pobj",
                    "nsubj", "nsubjpass"}
_CUT_DEPS = {"relcl", "appos", "punct", "acl", "advcl", "cc", "conj", "prep", "mark", "dep"}


@dataclass(frozen=True)
class RuleTrigger:
    """A token the motion lexicons name, with the rules' verdict on it.

    ``blocked`` is ``""`` for a trigger the rules keep, else the cue that
    dropped it (:func:`blocking_cue`).
    """

    first: int
    end: int
    motion_class: str
    blocked: str


@dataclass(frozen=True)
class RuleRole:
    """A role span the rules give one trigger, and the cue that gave it."""

    first: int
    end: int
    role: str
    cue: str


def phrase_span(token: Token) -> tuple[int, int]:
    """Token range ``[first, end)`` of the noun phrase headed by ``token``.

    Keeps left modifiers and an ``of`` complement; cuts at relative clauses,
    appositions, coordinations, other prepositional phrases and punctuation.
    """
    first = token.i
    for child in token.lefts:
        if child.dep_ not in _CUT_DEPS:
            first = min(first, child.left_edge.i)
    end = token.i + 1
    for child in token.rights:
        if child.dep_ in _CUT_DEPS and not (child.dep_ == "prep" and child.lower_ == "of"):
            break
        end = max(end, child.right_edge.i + 1)
    while end - 1 > first and token.doc[end - 1].is_punct:
        end -= 1
    while first < token.i and token.doc[first].is_punct:
        first += 1
    return first, end


def blocking_cue(verb: Token, steps: int = 0) -> str:
    """Why the rules drop a motion verb, or ``""`` when they keep it.

    ``negated``; ``modal`` (`would`, `must`, ...); ``conditional``, in a clause
    of `if`, `unless`, `lest` or `whether` (:data:`CONDITIONAL_MARKS`);
    ``not_yet``, under a verb of wanting, planning or ordering
    (:data:`NOT_YET_HEADS`); ``infinitive``, an infinitive complement of any
    other head that does not imply it happened (`seemed to fly`, `was to
    sail`, `willing to ride`; :data:`IMPLICATIVE_HEADS` do, and pass on their
    own cue: `could not manage to cross` is ``negated``); a bare verb
    coordinated with a blocked one takes its cue (`meant to rest and cross`);
    ``present_relative``, in a present-tense relative clause, generic or
    fictive in a narrative (`merchants who travel for gain`, `a stream which
    runs into the river`); ``attributive``, a present participle modifying a
    noun (`the following day`, `running water`); ``purpose``, an
    infinitive of purpose (`rose to go`, `the wish to visit`); ``future``, a
    verb dated to-morrow; ``time_subject`` and ``time_object``, a verb whose
    subject or direct object is a time noun by its first WordNet sense, so
    time passes rather than anyone changing place (`night came on`, `the
    hour arrived`, `we passed an uncomfortable night`). ``steps`` counts the
    heads already climbed to inherit a cue; callers leave it at 0.
    """
    children = list(verb.children)
    to_infinitive = any(c.dep_ == "aux" and c.lower_ == "to" for c in children)
    # A cue is inherited from the head a few steps up at most, so a malformed tree (a cycle of heads read from a
    # CoNLL-U file) cannot send this round for ever.
    inherits = steps < _MAX_INHERIT_STEPS and verb.head.i != verb.i and verb.head.pos_ in {"VERB", "AUX"}
    if any(c.dep_ == "neg" for c in children):
        return "negated"
    if any(c.dep_ == "aux" and c.lower_ in HYPOTHETICAL_AUX for c in children):
        return "modal"
    if any(c.dep_ == "mark" and c.lower_ in CONDITIONAL_MARKS for c in children):
        return "conditional"
    if verb.dep_ == "xcomp" and verb.head.lemma_.lower() in NOT_YET_HEADS:
        return "not_yet"
    if verb.dep_ == "xcomp" and to_infinitive:
        if verb.head.lemma_.lower() not in IMPLICATIVE_HEADS:
            return "infinitive"
        if inherits and (inherited := blocking_cue(verb.head, steps + 1)):
            return inherited
    # A bare verb coordinated with another shares its auxiliary, `to` or subordinator (`we meant to stay and
    # accompany them`); its object is its own, so a time object is not shared.
    if verb.dep_ == "conj" and verb.tag_ == "VB" and inherits:
        if (inherited := blocking_cue(verb.head, steps + 1)) and inherited != "time_object":
            return inherited
    if verb.dep_ == "relcl" and verb.tag_ in _PRESENT_TAGS:
        return "present_relative"
    if verb.dep_ == "amod" and verb.tag_ == "VBG":
        return "attributive"
    if verb.dep_ in {"advcl", "acl"} and to_infinitive:
        return "purpose"
    # 'to-morrow' is parsed as 'to' + '-' + 'morrow', a prepositional phrase of the verb
    if any(word.lower_ in FUTURE_WORDS for c in children for word in (c, *c.children)):
        return "future"
    for child in children:
        cue = _TIME_ARGUMENT_CUES.get(child.dep_)
        if cue and child.pos_ == "NOUN" and argument_class(child, packaged_classes()) == "time":
            return cue
    return ""


def rule_triggers(doc: Doc, lexicons: Lexicons) -> list[RuleTrigger]:
    """Every lexicon trigger of a sentence, kept or blocked, with a glued particle in its range."""
    found = []
    for token in doc:
        reading = motion_reading(token, lexicons)
        if not reading:
            continue
        entry, found_class = reading
        end = token.i + 1
        after = doc[end] if end < len(doc) else None
        if after is not None and after.dep_ == "prt" and after.head.i == token.i and entry.endswith(f" {after.lower_}"):
            end += 1
        blocked = blocking_cue(token) if token.pos_ in {"VERB", "AUX"} else ""
        found.append(RuleTrigger(token.i, end, found_class, blocked))
    return found


def _subject(verb: Token, steps: int = 0) -> tuple[Token, str] | None:
    """The mover the rules give a verb and its cue: its own subject, else the subject it shares or is controlled by.

    A verb without a subject takes that of the verb it is coordinated with
    (``subject``); a participle, gerund or infinitive hanging from a clause
    (``advcl``, ``xcomp``, or the object of ``after``, ``on``, ``by dint of``)
    takes the subject of the verb it hangs from (``controller``: ``after
    wandering along, we reached`` -> ``we``); a participle fronted before
    the clause it belongs to takes that clause's subject, wherever the parser
    hangs it (``controller``: ``turning west, we arrived`` -> ``we``); a
    participle modifying a noun takes that noun (``modified_noun``: ``sails
    gliding in``).
    """
    subject = next((c for c in verb.children if c.dep_ in SUBJECT_DEPS), None)
    if subject is not None:
        return subject, "subject" if steps == 0 else "controller"
    if steps == 0 and verb.tag_ in _PARTICIPLE_TAGS and _fronted(verb):
        fronted = _main_subject_after(verb)
        if fronted is not None:
            return fronted, "controller"
    if steps >= _MAX_CONTROL_STEPS or verb.head.i == verb.i:
        return None
    if verb.dep_ == "conj":
        return _subject(verb.head, steps)
    if verb.dep_ == "acl" and verb.tag_ in _PARTICIPLE_TAGS and verb.head.pos_ in {"NOUN", "PROPN", "PRON"}:
        return verb.head, "modified_noun"
    if verb.dep_ in _CONTROLLED_DEPS:
        governor = verb.head
        while governor.pos_ in {"ADP", "SCONJ"} and governor.dep_ in {"prep", "pcomp", "mark"} and governor.head.i != governor.i:
            governor = governor.head
        if governor.pos_ in {"VERB", "AUX"}:
            return _subject(governor, steps + 1)
    return None


def _fronted(participle: Token) -> bool:
    """Whether a participle opens a clause that stands before the clause it belongs to.

    The participle, or the preposition it follows (``after wandering``),
    begins the sentence, follows a break (``;``, ``:``, a dash or a quote) or
    a coordinator (``and, turning``; ``and then returning``), with at most
    commas and two adverbs in between. A participle after a comma alone may
    trail the clause before it (``we reached Quillon, leaving Caddow``), and a
    verb's or a noun's complement (``began ascending``) is never fronted.
    """
    if participle.dep_ in _COMPLEMENT_DEPS:
        return False
    doc = participle.doc
    opener = participle.head if participle.dep_ == "pcomp" else participle
    k = opener.left_edge.i - 1
    for _ in range(2):  # twice: commas, then one adverb
        while k >= 0 and doc[k].text == ",":
            k -= 1
        if k >= 0 and doc[k].pos_ == "ADV":
            k -= 1
    return k < 0 or doc[k].dep_ == "cc" or (doc[k].is_punct and doc[k].text != ",")


def _main_subject_after(participle: Token) -> Token | None:
    """The subject of the finite clause a participial clause stands in front of, or None.

    English reads a fronted participle as controlled by the subject of the
    clause that follows it (``turning to the West, we arrived``: ``we``;
    ``having crossed the river, its banks steep, we camped``: ``we``), whatever
    verb the parser hangs it from. Returned: the first subject to the right of
    the participle's phrase whose verb is finite and follows it, provided no
    other finite verb stands between the participle and that subject (relative clauses are skipped).
    """
    doc = participle.doc
    i = participle.right_edge.i + 1
    while i < len(doc):
        token = doc[i]
        if token.tag_ in _RELATIVE_TAGS or any(t.dep_ in {"relcl", "acl"} for t in (token, token.head)):
            # a relative clause in between (``a valley, that narrowed to a glen, we reached``)
            i = max(i, token.head.i) + 1
            continue
        if token.dep_ in SUBJECT_DEPS and token.head.i > token.i and _finite(token.head):
            return token
        if token.tag_ in _FINITE_TAGS:
            return None
        i += 1
    return None


def _finite(verb: Token) -> bool:
    """A verb with tense of its own (``arrived``, ``stands``) or a tensed auxiliary (``had gone``, ``was seen``)."""
    return verb.tag_ in _FINITE_TAGS or any(c.dep_ in {"aux", "auxpass"} and c.tag_ in _FINITE_TAGS
                                            for c in verb.children)


def _coordinated(token: Token) -> list[Token]:
    """A noun and the nouns coordinated with it: each place of ``through Arlo and Brenn`` is a role of its own."""
    return [token, *(c for c in token.conjuncts if c.pos_ in {"NOUN", "PROPN"})]


def _prepositional_objects(head: Token, max_steps: int = 3) -> list[Token]:
    """Objects of prepositions attached to ``head`` (through 'out of', 'by way of' chains), in text order."""
    tree = parse_tree(head.doc)
    found = []
    for i, dep in enumerate(tree.dep):
        if dep != "pobj":
            continue
        node, steps = tree.heads[i], 0
        while node != head.i and tree.dep[node] in {"prep", "pobj"} and steps < max_steps:
            node, steps = tree.heads[node], steps + 1
        if node == head.i:  # only a token in head's subtree gets there
            found.append(head.doc[i])
    return found


# Rule roles already found, per live doc: {(id(lexicons), first, end, len(doc)): (lexicons, roles)}. The token
# features ask for every verb's roles and the role stage again for each predicted trigger; a doc's entries go with
# the doc. Kept beside the docs, not in Doc.user_data, so nothing of it reaches a serialised or cached parse.
_ROLES_SEEN: "WeakKeyDictionary[Doc, dict[tuple[int, int, int, int], tuple[Lexicons, tuple[RuleRole, ...]]]]" = (
    WeakKeyDictionary())


def rule_roles(doc: Doc, trigger: tuple[int, int], lexicons: Lexicons) -> list[RuleRole]:
    """The roles the rules give one trigger (any token range, a rule trigger or not), sorted.

    Found once per doc, trigger and lexicons while the doc lives (a parse is
    not changed after it is made); a new list is returned each time.
    """
    seen = _ROLES_SEEN.get(doc)
    if seen is None:
        seen = _ROLES_SEEN.setdefault(doc, {})
    key = (id(lexicons), int(trigger[0]), int(trigger[1]), len(doc))
    entry = seen.get(key)
    if entry is None or entry[0] is not lexicons:
        entry = seen[key] = (lexicons, tuple(_find_roles(doc, trigger, lexicons)))
    return list(entry[1])


def _find_roles(doc: Doc, trigger: tuple[int, int], lexicons: Lexicons) -> list[RuleRole]:
    head = doc[trigger[0] : trigger[1]].root
    found: set[RuleRole] = set()
    if head.pos_ == "NOUN":
        owner = next((c for c in head.children if c.dep_ == "poss"), None)
        if owner is not None:
            found.add(RuleRole(*phrase_span(owner), "mover", "possessor"))
    else:
        mover = _subject(head)
        if mover is not None:
            found.add(RuleRole(*phrase_span(mover[0]), "mover", mover[1]))
    reading = motion_reading(head, lexicons)
    verb_class = reading[1] if reading else None
    for child in head.children:
        if child.dep_ == "dobj" and verb_class in OBJECT_ROLE_BY_CLASS:
            for place in _coordinated(child):
                found.add(RuleRole(*phrase_span(place), OBJECT_ROLE_BY_CLASS[verb_class], f"object:{verb_class}"))
    for token in _prepositional_objects(head):
        preposition = governing_preposition(token)
        role = lexicons.preposition_role(preposition)
        if role:
            for place in _coordinated(token):
                found.add(RuleRole(*phrase_span(place), role, f"prep:{preposition}"))
    return sorted(found, key=lambda r: (r.first, r.end, r.role, r.cue))
