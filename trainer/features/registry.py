"""The table of feature groups: one entry per group says what makes its features and what it reads.

The config accepts the names in :data:`FEATURE_GROUPS` (and gives a config
that names none the ``default`` ones), the pipeline loader keeps the spaCy
components the chosen groups read, and :class:`trainer.features.extract.Featurizer`
calls their functions in table order. Adding a group is one function (see
:mod:`trainer.features.groups`) and one entry here.

No spaCy is loaded by this module, so ``import trainer.config`` stays light.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

from trainer.features import groups
from trainer.features.groups import Features, Sentence
from trainer.features.wordnet import wordnet_group

TokenGroup = Callable[[Sentence], list[Features]]
TriggerGroup = Callable[[Sentence, tuple[int, int]], list[Features]]

# spaCy components that most groups read; tok2vec feeds the tagger, parser and ner.
_TAGS = ("tok2vec", "tagger", "attribute_ruler")
_LEMMAS = (*_TAGS, "lemmatizer")
_PARSE = (*_LEMMAS, "parser")


@dataclass(frozen=True)
class GroupSpec:
    """One feature group.

    ``tokens`` gives one feature dict per token (used for both stages);
    ``trigger`` one per token relative to one trigger (role labelling only);
    a group may have either or both. ``components`` are the pipeline
    components its features read; ``default`` groups are on when a config
    names none; a group that ``reads_other_groups`` runs after all the others,
    over the features they gave (``Sentence.features``).
    """

    name: str
    doc: str
    components: tuple[str, ...]
    tokens: TokenGroup | None = None
    trigger: TriggerGroup | None = None
    default: bool = False
    reads_other_groups: bool = False


FEATURE_GROUPS: dict[str, GroupSpec] = {spec.name: spec for spec in (
    GroupSpec("lexical", "word form, lemma, shape, affixes, case and digits",
              _LEMMAS, tokens=groups.lexical_group, default=True),
    GroupSpec("tagging", "part of speech and named-entity type",
              (*_TAGS, "ner"), tokens=groups.tagging_group, default=True),
    GroupSpec("context", "chosen features of the neighbouring tokens within the window",
              _LEMMAS, tokens=groups.context_group, default=True, reads_other_groups=True),
    GroupSpec("syntax", "dependency label, head, governing preposition, depth, voice",
              _PARSE, tokens=groups.syntax_group, default=True),
    GroupSpec("trigger_relative", "side, distance and dependency path to the trigger",
              _PARSE, trigger=groups.trigger_relative_group, default=True),
    GroupSpec("lexicon", "motion classes, preposition cues, direction words, gazetteer",
              _LEMMAS, tokens=groups.lexicon_group, default=True),
    GroupSpec("rules", "the rule baseline's trigger and role decisions (stacking)",
              _PARSE, tokens=groups.rules_group, trigger=groups.rules_trigger_group),
    GroupSpec("wordnet", "WordNet classes of the lemma and of a verb's subject and object",
              _PARSE, tokens=wordnet_group),
)}
# The groups a config gets when it names none (the ones every model before the rules and WordNet groups used).
DEFAULT_FEATURE_GROUPS = tuple(name for name, spec in FEATURE_GROUPS.items() if spec.default)


def enabled(names: frozenset[str] | set[str]) -> list[GroupSpec]:
    """The entries of the groups named, in table order (unknown names are left out)."""
    return [spec for name, spec in FEATURE_GROUPS.items() if name in names]
