"""The one feature path shared by training and prediction.

A :class:`Featurizer` turns a parsed sentence into a list of feature dicts,
one per token, from the feature groups the config switches on (their
functions come from the table in :mod:`trainer.features.registry`). Role
labelling adds the groups relative to one trigger at a time.
"""

from __future__ import annotations

from pathlib import Path

from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import FeatureConfig
from trainer.features import groups
from trainer.features.gazetteer import Gazetteer, read_place_names
from trainer.features.lexicons import Lexicons, load_lexicons
from trainer.features.registry import enabled

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

    def _sentence(self, doc: Doc, features: list[groups.Features]) -> groups.Sentence:
        return groups.Sentence(doc, self.config, self.lexicons, self.gazetteer, features)

    def token_features(self, doc: Doc) -> list[groups.Features]:
        """One feature dict per token, without trigger-relative features.

        Feature augmentation (:func:`augment`) is applied to these dicts by the
        caller; the trigger-relative features of :meth:`role_features` then
        follow the same domain.
        """
        own: list[groups.Features] = [{"bias": 1.0} for _ in range(len(doc))]
        sentence = self._sentence(doc, own)
        # Table order, except that the groups reading the others' features come last (sorting is stable).
        for spec in sorted(enabled(self.groups), key=lambda spec: spec.reads_other_groups):
            if spec.tokens is not None:
                for features, added in zip(own, spec.tokens(sentence)):
                    features.update(added)
        return own

    def role_features(
        self, doc: Doc, trigger: tuple[int, int], base: list[groups.Features] | None = None
    ) -> list[groups.Features]:
        """Token features plus, when enabled, features relative to one trigger (token range)."""
        base = base if base is not None else self.token_features(doc)
        relative: list[groups.Features] = [{} for _ in range(len(doc))]
        sentence = self._sentence(doc, base)
        for spec in enabled(self.groups):
            if spec.trigger is not None:
                relative = [{**rel, **added} for rel, added in zip(relative, spec.trigger(sentence, trigger))]
        domain = base[0].get(DOMAIN_KEY) if base else None
        if domain is not None:
            relative = [{**rel, **domain_copies(rel, str(domain))} for rel in relative]
        return [{**own, **rel} for own, rel in zip(base, relative)]
