"""The Featurizer: groups switched off leave no keys behind; trigger-relative keys only when switched on."""

from __future__ import annotations

import pickle

import pytest
import spacy
from spacy.tokens import Doc

from trainer.config import DEFAULT_FEATURE_GROUPS, FEATURE_GROUPS, FeatureConfig
from trainer.features import groups
from trainer.features.extract import Featurizer
from trainer.features.groups import CONTEXT_KEYS
from trainer.features.rule_cues import rule_roles, rule_triggers
from trainer.features.wordnet import packaged_classes, wordnet_features
from trainer.features.gazetteer import Gazetteer
from trainer.features.lexicons import load_lexicons

VOCAB = spacy.blank("en").vocab
LEXICONS = load_lexicons()
LEXICAL_KEYS = {"lower", "lemma", "shape", "prefix", "suffix", "is_title", "is_upper", "has_digit", "is_punct"}
TAGGING_KEYS = {"pos", "tag", "ent_type", "ent_iob"}
SYNTAX_KEYS = {"dep", "head_lemma", "head_pos", "head_dep", "gov_prep", "depth", "passive_subject", "passive_verb"}
TRIGGER_KEYS = {"t_side", "t_distance", "t_side_distance", "t_path", "t_path_length", "t_path_dep", "t_in_subtree",
                "t_lemma", "t_class", "t_gov_prep"}


@pytest.fixture(scope="module")
def doc() -> Doc:
    """'We rode through the Gap .' parsed by hand."""
    return Doc(
        VOCAB,
        words=["We", "rode", "through", "the", "Gap", "."],
        spaces=[True, True, True, True, False, False],
        lemmas=["we", "ride", "through", "the", "Gap", "."],
        pos=["PRON", "VERB", "ADP", "DET", "PROPN", "PUNCT"],
        tags=["PRP", "VBD", "IN", "DT", "NNP", "."],
        deps=["nsubj", "ROOT", "prep", "det", "pobj", "punct"],
        heads=[1, 1, 1, 4, 2, 1],
    )


def featurizer(*names: str, **options: object) -> Featurizer:
    return Featurizer(FeatureConfig(groups=list(names), **options), LEXICONS, Gazetteer([["Gap"]]))


def test_no_group_leaves_only_the_bias(doc: Doc) -> None:
    assert featurizer().token_features(doc) == [{"bias": 1.0}] * 6


@pytest.mark.parametrize(
    ("group", "keys"),
    [
        ("lexical", LEXICAL_KEYS),
        ("tagging", TAGGING_KEYS),
        ("syntax", SYNTAX_KEYS | {"child_prep=through"}),
        ("lexicon", {"gazetteer", "direction", "verb_class"}),
        ("trigger_relative", set()),  # token features never carry trigger-relative keys
    ],
)
def test_each_group_alone_gives_exactly_its_keys_for_the_verb(doc: Doc, group: str, keys: set[str]) -> None:
    assert set(featurizer(group).token_features(doc)[1]) == {"bias"} | keys


def test_all_default_groups_for_the_object_of_through(doc: Doc) -> None:
    features = featurizer(*DEFAULT_FEATURE_GROUPS).token_features(doc)[4]
    own = LEXICAL_KEYS | TAGGING_KEYS | SYNTAX_KEYS | {"gazetteer", "direction", "gov_prep_cue"}
    # Neighbours 'through', 'the' and '.' are no verbs, so they have no verb_class; +2 is past the end.
    context = {f"{offset}:{key}" for offset in ("-2", "-1", "+1") for key in CONTEXT_KEYS
               if key not in {"verb_class", "rule_trigger", "wn_first"}}  # the last two: groups not switched on
    assert set(features) == {"bias"} | own | context | {"+2:edge"}
    assert (features["-1:lower"], features["-2:gov_prep"], features["+1:lower"]) == ("the", "-", ".")
    assert (features["gazetteer"], features["gov_prep"], features["gov_prep_cue"]) == ("B", "through", "path")


@pytest.mark.parametrize("group", [g for g in FEATURE_GROUPS if g != "trigger_relative"])
def test_switching_a_group_off_removes_its_keys_and_nothing_else(doc: Doc, group: str) -> None:
    everything = featurizer(*FEATURE_GROUPS).token_features(doc)
    without = featurizer(*(g for g in FEATURE_GROUPS if g != group)).token_features(doc)
    any_token = set().union(*(_own_keys(group, t) for t in doc))
    for token, full, reduced in zip(doc, everything, without):
        if group == "context":
            removed = {k for k in full if ":" in k or k in {"BOS", "EOS"}}
        else:
            removed = _own_keys(group, token) | {k for k in full if ":" in k and k.split(":", 1)[1] in any_token}
        assert set(reduced) == set(full) - removed, (group, token.text)
        assert reduced == {k: v for k, v in full.items() if k not in removed}


def _own_keys(group: str, token: spacy.tokens.Token) -> set[str]:
    """The keys a group's own function gives for one token."""
    return {
        "lexical": lambda: set(groups.lexical(token)),
        "tagging": lambda: set(groups.tagging(token)),
        "syntax": lambda: set(groups.syntax(token)),
        "lexicon": lambda: set(groups.lexicon(token, LEXICONS)),
        "rules": lambda: set(_rule_tags(token)),
        "wordnet": lambda: set(wordnet_features(token, packaged_classes())),
        "context": lambda: set(),
    }[group]()


def _rule_tags(token: spacy.tokens.Token) -> dict:
    doc = token.doc
    arguments = [rule_roles(doc, (t.i, t.i + 1), LEXICONS) if t.pos_ == "VERB" else [] for t in doc]
    return groups.rule_trigger_tags(doc, rule_triggers(doc, LEXICONS), arguments)[token.i]


def test_context_window_follows_the_config(doc: Doc) -> None:
    features = featurizer("lexical", "context", window=1).token_features(doc)[0]
    assert {k for k in features if ":" in k} == {"-1:edge", "+1:lower", "+1:lemma", "+1:shape"}
    assert features["BOS"] is True


def test_affix_length_follows_the_config(doc: Doc) -> None:
    features = featurizer("lexical", affix_length=2).token_features(doc)[2]
    assert (features["prefix"], features["suffix"]) == ("th", "gh")


def test_role_features_add_trigger_keys_only_with_trigger_relative_on(doc: Doc) -> None:
    on = featurizer("lexical", "trigger_relative")
    base = on.token_features(doc)
    with_trigger = on.role_features(doc, (1, 2), base)
    assert [set(f) for f in with_trigger] == [set(b) | TRIGGER_KEYS for b in base]
    assert with_trigger[4]["t_path"] == "pobj↑prep↑"
    assert all(not set(b) & TRIGGER_KEYS for b in base)  # the shared base is not changed

    off = featurizer("lexical")
    base_off = off.token_features(doc)
    without = off.role_features(doc, (1, 2), base_off)
    assert without == base_off
    assert all(a is not b for a, b in zip(without, base_off))  # copies, safe to change


def test_role_features_compute_the_base_when_not_given(doc: Doc) -> None:
    on = featurizer("lexical", "trigger_relative")
    assert on.role_features(doc, (1, 2)) == on.role_features(doc, (1, 2), on.token_features(doc))


def test_featurizer_pickles_with_its_gazetteer(doc: Doc) -> None:
    original = featurizer(*FEATURE_GROUPS)
    copy = pickle.loads(pickle.dumps(original))
    assert copy.token_features(doc) == original.token_features(doc)
    assert copy.groups == frozenset(FEATURE_GROUPS)
