"""A rule baseline that needs no training: the floor for every comparison.

Triggers are verbs (and nouns) whose lemma is in the motion lexicons, unless
negated or under a modal or a verb of wanting or planning. Roles come from
dependency patterns: the subject is the mover (shared by coordinated verbs),
a prepositional object takes the role its preposition cues, and a direct
object takes the role the verb's class implies (``left X`` source,
``reached X`` destination, ``crossed X`` path).
"""

from __future__ import annotations

from typing import Sequence

from spacy.tokens import Doc, Token

from trainer.features.groups import governing_preposition
from trainer.features.lexicons import Lexicons
from trainer.models.candidates import phrase_span

HYPOTHETICAL_AUX = {"would", "could", "should", "might", "may", "shall", "will", "must", "ought", "can"}
NOT_YET_HEADS = {"hope", "want", "wish", "mean", "intend", "plan", "try", "attempt", "order", "bid", "propose", "expect", "fail", "refuse"}
OBJECT_ROLE_BY_CLASS = {
    "departure": "source", "arrival": "destination", "traversal": "path",
    "ascent_descent": "path", "return": "destination",
}
SUBJECT_DEPS = {"nsubj", "nsubjpass"}


def _is_hypothetical(verb: Token) -> bool:
    children = list(verb.children)
    if any(c.dep_ == "neg" for c in children):
        return True
    if any(c.dep_ == "aux" and c.lower_ in HYPOTHETICAL_AUX for c in children):
        return True
    return verb.dep_ == "xcomp" and verb.head.lemma_.lower() in NOT_YET_HEADS


def _motion_class(token: Token, lexicons: Lexicons) -> str | None:
    lemma = token.lemma_.lower()
    if token.pos_ == "VERB":
        particles = [c.lower_ for c in token.children if c.dep_ == "prt"]
        if particles and lexicons.verb_class(f"{lemma} {particles[0]}"):
            return lexicons.verb_class(f"{lemma} {particles[0]}")
        return lexicons.verb_class(lemma)
    if token.pos_ == "NOUN":
        return lexicons.noun_class(lemma)
    return None


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


class RuleTriggerFinder:
    """Motion verbs and nouns from the lexicons, skipping negated and hypothetical ones."""

    def __init__(self, lexicons: Lexicons) -> None:
        self.lexicons = lexicons

    def fit(self, docs: Sequence[Doc], triggers: Sequence, features: Sequence | None = None) -> "RuleTriggerFinder":
        return self

    def predict(self, docs: Sequence[Doc], features: Sequence | None = None) -> list[list[tuple[int, int, float]]]:
        """Motion-lexicon triggers per sentence (``features`` is accepted for a common interface and unused)."""
        out = []
        for doc in docs:
            found = []
            for token in doc:
                if _motion_class(token, self.lexicons) and not (token.pos_ == "VERB" and _is_hypothetical(token)):
                    end = token.i + 1
                    particle = next((c for c in token.rights if c.dep_ == "prt" and c.i == token.i + 1), None)
                    if particle is not None and self.lexicons.verb_class(f"{token.lemma_.lower()} {particle.lower_}"):
                        end += 1
                    found.append((token.i, end, 1.0))
            out.append(found)
        return out


class RuleRoleLabeller:
    """Subject as mover, prepositional objects by their cue, direct objects by the verb's class."""

    def __init__(self, lexicons: Lexicons) -> None:
        self.lexicons = lexicons

    def fit(self, docs: Sequence[Doc], triggers: Sequence, roles: Sequence, features: Sequence | None = None) -> "RuleRoleLabeller":
        return self

    def _subject(self, verb: Token) -> Token | None:
        subject = next((c for c in verb.children if c.dep_ in SUBJECT_DEPS), None)
        if subject is None and verb.dep_ == "conj":
            return self._subject(verb.head)
        return subject

    def _roles(self, doc: Doc, trigger: tuple[int, int]) -> list[tuple[int, int, str, float]]:
        head = doc[trigger[0] : trigger[1]].root
        found = []
        if head.pos_ == "NOUN":
            owner = next((c for c in head.children if c.dep_ == "poss"), None)
            if owner is not None:
                found.append((*phrase_span(owner), "mover", 1.0))
        else:
            subject = self._subject(head)
            if subject is not None:
                found.append((*phrase_span(subject), "mover", 1.0))
        verb_class = _motion_class(head, self.lexicons)
        for child in head.children:
            if child.dep_ == "dobj" and verb_class in OBJECT_ROLE_BY_CLASS:
                found.append((*phrase_span(child), OBJECT_ROLE_BY_CLASS[verb_class], 1.0))
        for token in _prepositional_objects(head):
            role = self.lexicons.preposition_role(governing_preposition(token))
            if role:
                found.append((*phrase_span(token), role, 1.0))
        return sorted(set(found))

    def predict(self, docs, triggers, features=None) -> list[list[list[tuple[int, int, str, float]]]]:
        """Roles per trigger from dependency patterns (``features`` is unused, as for the trigger rules)."""
        return [[self._roles(doc, tuple(t[:2])) for t in sentence] for doc, sentence in zip(docs, triggers)]
