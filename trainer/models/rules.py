"""A rule baseline that needs no training: the floor for every comparison.

The decisions themselves live in :mod:`trainer.features.rule_cues`, where the
``rules`` feature group reads them too; these two stages only turn them into
predictions: lexicon triggers that are not negated or hypothetical, and the
roles the dependency patterns give each trigger.
"""

from __future__ import annotations

from typing import Sequence

from spacy.tokens import Doc

from trainer.features.lexicons import Lexicons
from trainer.features.rule_cues import rule_roles, rule_triggers


class RuleTriggerFinder:
    """Motion verbs and nouns from the lexicons, skipping negated and hypothetical ones."""

    def __init__(self, lexicons: Lexicons) -> None:
        self.lexicons = lexicons

    def fit(self, docs: Sequence[Doc], triggers: Sequence, features: Sequence | None = None) -> "RuleTriggerFinder":
        return self

    def predict(self, docs: Sequence[Doc], features: Sequence | None = None) -> list[list[tuple[int, int, float]]]:
        """Motion-lexicon triggers per sentence (``features`` is accepted for a common interface and unused)."""
        return [[(t.first, t.end, 1.0) for t in rule_triggers(doc, self.lexicons) if not t.blocked] for doc in docs]


class RuleRoleLabeller:
    """Subject as mover, prepositional objects by their cue, direct objects by the verb's class."""

    def __init__(self, lexicons: Lexicons) -> None:
        self.lexicons = lexicons

    def fit(self, docs: Sequence[Doc], triggers: Sequence, roles: Sequence, features: Sequence | None = None) -> "RuleRoleLabeller":
        return self

    def predict(self, docs, triggers, features=None) -> list[list[list[tuple[int, int, str, float]]]]:
        """Roles per trigger from dependency patterns (``features`` is unused, as for the trigger rules)."""
        return [[sorted({(r.first, r.end, r.role, 1.0) for r in rule_roles(doc, tuple(t[:2]), self.lexicons)})
                 for t in sentence] for doc, sentence in zip(docs, triggers)]
