"""The one feature path shared by training and prediction.

A :class:`Featurizer` turns a parsed sentence into a list of feature dicts,
one per token, from the feature groups the config switches on. Role labelling
adds the trigger-relative group for one trigger at a time.
"""

from __future__ import annotations

from pathlib import Path

from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import FeatureConfig
from trainer.features import groups
from trainer.features.gazetteer import Gazetteer, read_place_names
from trainer.features.lexicons import Lexicons, load_lexicons

CONTEXT_KEYS = ("lower", "lemma", "pos", "shape", "dep", "gov_prep", "verb_class", "gazetteer", "ent_type")


def _optional_path(value: str) -> Path | None:
    return Path(value) if value else None


class Featurizer:
    """Feature dicts per token for the enabled groups; pickles with a model."""

    def __init__(self, config: FeatureConfig, lexicons: Lexicons, gazetteer: Gazetteer | None = None) -> None:
        self.config = config
        self.groups = frozenset(config.groups)
        self.lexicons = lexicons
        self.gazetteer = gazetteer

    @classmethod
    def from_config(cls, config: FeatureConfig, nlp: Language) -> "Featurizer":
        """Load the lexicons and the gazetteer a config names (packaged lexicons by default)."""
        paths = config.lexicons
        lexicons = load_lexicons(
            motion_verbs=_optional_path(paths.motion_verbs),
            motion_nouns=_optional_path(paths.motion_nouns),
            prepositions=_optional_path(paths.prepositions),
            directions=_optional_path(paths.directions),
        )
        gazetteer = None
        if config.gazetteer:
            names = read_place_names(config.gazetteer)
            gazetteer = Gazetteer.from_names(names, nlp, ignore_case=config.gazetteer_ignore_case)
        return cls(config, lexicons, gazetteer)

    def token_features(self, doc: Doc) -> list[groups.Features]:
        """One feature dict per token, without trigger-relative features."""
        gazetteer_tags = self.gazetteer.tags(doc) if self.gazetteer else ["O"] * len(doc)
        own: list[groups.Features] = []
        needs_gov = "syntax" in self.groups or "lexicon" in self.groups
        for token in doc:
            gov = groups.governing_preposition(token) if needs_gov else ""
            features: groups.Features = {"bias": 1.0}
            if "lexical" in self.groups:
                features.update(groups.lexical(token, self.config.affix_length))
            if "tagging" in self.groups:
                features.update(groups.tagging(token))
            if "syntax" in self.groups:
                features.update(groups.syntax(token, gov))
            if "lexicon" in self.groups:
                features.update(groups.lexicon(token, self.lexicons, gazetteer_tags[token.i], gov))
            own.append(features)
        if "context" not in self.groups:
            return own
        return [
            {**features, **groups.context(own, i, self.config.window, CONTEXT_KEYS)} for i, features in enumerate(own)
        ]

    def role_features(
        self, doc: Doc, trigger: tuple[int, int], base: list[groups.Features] | None = None
    ) -> list[groups.Features]:
        """Token features plus, when enabled, features relative to one trigger (token range)."""
        base = base if base is not None else self.token_features(doc)
        if "trigger_relative" not in self.groups:
            return [dict(f) for f in base]
        relative = groups.trigger_relative_all(doc, trigger, self.lexicons)
        return [{**own, **rel} for own, rel in zip(base, relative)]
