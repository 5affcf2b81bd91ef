"""The rule baseline's decisions, computed from the parse and the lexicons alone.

Two consumers share this module, so the rules and the features built from
them can never disagree: the rule extractor (:mod:`trainer.models.rules`)
turns the decisions into predictions, and the ``rules`` feature group
(:mod:`trainer.features.groups`) hands them to the learned stages as
features (stacking), so a trained model starts from the rules' answers and
learns where they go wrong.

Triggers are verbs (and nouns) whose lemma is in the motion lexicons, unless
negated or under a modal or a verb of wanting or planning. Roles come from
dependency patterns: the subject is the mover (shared by coordinated verbs),
a prepositional object takes the role its preposition cues, and a direct
object takes the role the verb's class implies (``left X`` source,
``reached X`` destination, ``crossed X`` path). Each decision carries the cue
that made it (``subject``, ``object:departure``, ``prep:from``, ...).
"""

from __future__ import annotations

from dataclasses import dataclass
from weakref import WeakKeyDictionary

from spacy.tokens import Doc, Token

from trainer.features.groups import governing_preposition
from trainer.features.lexicons import Lexicons

HYPOTHETICAL_AUX = {"would", "could", "should", "might", "may", "shall", "will", "must", "ought", "can"}
NOT_YET_HEADS = {"hope", "want", "wish", "mean", "intend", "plan", "try", "attempt", "order", "bid", "propose", "expect", "fail", "refuse"}
OBJECT_ROLE_BY_CLASS = {
    "departure": "source", "arrival": "destination", "traversal": "path",
    "ascent_descent": "path", "return": "destination",
}
SUBJECT_DEPS = {"nsubj", "nsubjpass"}
_CUT_DEPS = {"relcl", "appos", "punct", "acl", "advcl", "cc", "conj", "prep", "mark", "dep"}


@dataclass(frozen=True)
class RuleTrigger:
    """A token the motion lexicons name, with the rules' verdict on it.

    ``blocked`` is ``""`` for a trigger the rules keep, else the cue that
    dropped it: ``negated``, ``modal`` or ``not_yet`` (under ``hope``, ``mean``, ...).
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


def blocking_cue(verb: Token) -> str:
    """Why the rules drop a motion verb: ``negated``, ``modal``, ``not_yet``, or ``""`` when they keep it."""
    children = list(verb.children)
    if any(c.dep_ == "neg" for c in children):
        return "negated"
    if any(c.dep_ == "aux" and c.lower_ in HYPOTHETICAL_AUX for c in children):
        return "modal"
    if verb.dep_ == "xcomp" and verb.head.lemma_.lower() in NOT_YET_HEADS:
        return "not_yet"
    return ""


def motion_class(token: Token, lexicons: Lexicons) -> str | None:
    """The lexicon class of a verb (a phrasal one first) or a noun; None for other words."""
    lemma = token.lemma_.lower()
    if token.pos_ == "VERB":
        particles = [c.lower_ for c in token.children if c.dep_ == "prt"]
        if particles and lexicons.verb_class(f"{lemma} {particles[0]}"):
            return lexicons.verb_class(f"{lemma} {particles[0]}")
        return lexicons.verb_class(lemma)
    if token.pos_ == "NOUN":
        return lexicons.noun_class(lemma)
    return None


def rule_triggers(doc: Doc, lexicons: Lexicons) -> list[RuleTrigger]:
    """Every lexicon trigger of a sentence, kept or blocked, with a glued particle in its range."""
    found = []
    for token in doc:
        found_class = motion_class(token, lexicons)
        if not found_class:
            continue
        end = token.i + 1
        particle = next((c for c in token.rights if c.dep_ == "prt" and c.i == token.i + 1), None)
        if particle is not None and lexicons.verb_class(f"{token.lemma_.lower()} {particle.lower_}"):
            end += 1
        blocked = blocking_cue(token) if token.pos_ == "VERB" else ""
        found.append(RuleTrigger(token.i, end, found_class, blocked))
    return found


def _subject(verb: Token) -> Token | None:
    subject = next((c for c in verb.children if c.dep_ in SUBJECT_DEPS), None)
    if subject is None and verb.dep_ == "conj":
        return _subject(verb.head)
    return subject


def _prepositional_objects(head: Token, max_steps: int = 3) -> list[Token]:
    """Objects of prepositions attached to ``head`` (through 'out of', 'by way of' chains)."""
    found = []
    for token in head.subtree:
        if token.dep_ != "pobj":
            continue
        node, steps = token.head, 0
        while node.i != head.i and node.dep_ in {"prep", "pobj"} and steps < max_steps:
            node, steps = node.head, steps + 1
        if node.i == head.i:
            found.append(token)
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
        subject = _subject(head)
        if subject is not None:
            found.add(RuleRole(*phrase_span(subject), "mover", "subject"))
    verb_class = motion_class(head, lexicons)
    for child in head.children:
        if child.dep_ == "dobj" and verb_class in OBJECT_ROLE_BY_CLASS:
            found.add(RuleRole(*phrase_span(child), OBJECT_ROLE_BY_CLASS[verb_class], f"object:{verb_class}"))
    for token in _prepositional_objects(head):
        preposition = governing_preposition(token)
        role = lexicons.preposition_role(preposition)
        if role:
            found.add(RuleRole(*phrase_span(token), role, f"prep:{preposition}"))
    return sorted(found, key=lambda r: (r.first, r.end, r.role, r.cue))
