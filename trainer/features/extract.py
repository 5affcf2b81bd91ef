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
from trainer.features.rule_cues import rule_roles, rule_triggers
from trainer.features.wordnet import packaged_classes, wordnet_features

# Keys copied from neighbouring tokens by the context group (absent keys, e.g. of a group switched off, are skipped).
CONTEXT_KEYS = ("lower", "lemma", "pos", "shape", "dep", "gov_prep", "verb_class", "gazetteer", "ent_type",
                "rule_trigger", "wn_first")
DOMAIN_KEY = "domain"


def augment(features: groups.Features, domain: str) -> groups.Features:
    """Feature augmentation for domain adaptation: each feature kept (shared) and copied under ``domain~``.

    Daumé III (2007), "Frustratingly easy domain adaptation": a model trained on
    a target corpus plus auxiliary ones learns shared weights and per-domain
    corrections; predictions on the target use the shared and target copies.
    """
    return {**features, **domain_copies(features, domain), DOMAIN_KEY: domain}


def domain_copies(features: groups.Features, domain: str) -> groups.Features:
    """The per-domain copies :func:`augment` adds: each feature under ``domain~``."""
    return {f"{domain}~{key}": value for key, value in features.items()}


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

    def token_features(self, doc: Doc, *, domain: str | None = None) -> list[groups.Features]:
        """One feature dict per token, without trigger-relative features.

        ``domain`` (``"target"`` or an auxiliary corpus's name) switches on
        feature augmentation (:func:`augment`); the trigger-relative features
        of :meth:`role_features` then follow the same domain.
        """
        gazetteer_tags = self.gazetteer.tags(doc) if self.gazetteer else ["O"] * len(doc)
        rule_tags = None
        if "rules" in self.groups:
            arguments = [rule_roles(doc, (t.i, t.i + 1), self.lexicons) if t.pos_ == "VERB" else [] for t in doc]
            rule_tags = groups.rule_trigger_tags(doc, rule_triggers(doc, self.lexicons), arguments)
        wordnet = packaged_classes() if "wordnet" in self.groups else None
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
            if rule_tags is not None:
                features.update(rule_tags[token.i])
            if wordnet is not None:
                features.update(wordnet_features(token, wordnet))
            own.append(features)
        if "context" in self.groups:
            own = [{**features, **groups.context(own, i, self.config.window, CONTEXT_KEYS)}
                   for i, features in enumerate(own)]
        return own if domain is None else [augment(features, domain) for features in own]

    def role_features(
        self, doc: Doc, trigger: tuple[int, int], base: list[groups.Features] | None = None
    ) -> list[groups.Features]:
        """Token features plus, when enabled, features relative to one trigger (token range)."""
        base = base if base is not None else self.token_features(doc)
        relative: list[groups.Features] = [{} for _ in doc]
        if "trigger_relative" in self.groups:
            relative = groups.trigger_relative_all(doc, trigger, self.lexicons)
        if "rules" in self.groups:
            cues = groups.rule_role_tags(doc, rule_roles(doc, trigger, self.lexicons))
            relative = [{**rel, **cue} for rel, cue in zip(relative, cues)]
        domain = base[0].get(DOMAIN_KEY) if base else None
        if domain is not None:
            relative = [{**rel, **domain_copies(rel, str(domain))} for rel in relative]
        return [{**own, **rel} for own, rel in zip(base, relative)]
