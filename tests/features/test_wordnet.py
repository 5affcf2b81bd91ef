"""WordNet classes as features: the packaged file against WordNet 3.0 itself, and the group on hand-built parses."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from tests.hand_parsed import REACHED_TARN, make_doc

from trainer.features.wordnet import (
    LEXNAMES, build_classes, build_verb_exceptions, packaged_classes, packaged_verb_exceptions, verb_base,
    wordnet_features,
)

# Source: Princeton WordNet 3.0 as shipped by Debian's ``wordnet-base``, read from its
# database files; lexicographer file numbers per the lexnames(5WN) manual page.
WORDNET_DIR = Path("/usr/share/wordnet")


def _need_wordnet() -> None:
    if not (WORDNET_DIR / "index.verb").is_file():
        reason = f"WordNet 3.0 not found in {WORDNET_DIR} (install the Debian package wordnet-base)"
        if "CI" in os.environ:
            pytest.fail(reason)
        pytest.skip(reason)


@pytest.mark.parametrize(("packaged_name", "build"), [
    ("wordnet_classes.tsv", build_classes), ("wordnet_verb_exceptions.tsv", build_verb_exceptions),
])
def test_the_packaged_files_are_exactly_what_wordnet_3_gives(packaged_name, build) -> None:
    _need_wordnet()
    from importlib import resources

    packaged = resources.files("trainer.features").joinpath("lexicons", packaged_name).read_text("utf-8")
    assert build(WORDNET_DIR) == packaged


def test_verb_base_follows_wordnets_morphy_and_prefers_a_restored_e() -> None:
    # Irregular forms as WordNet 3.0's verb.exc lists them (read from Debian's copy): came -> come, rode -> ride,
    # stopped -> stop (a doubled consonant), lay -> lie.
    exceptions = packaged_verb_exceptions()
    assert (exceptions["came"], exceptions["rode"], exceptions["stopped"], exceptions["lay"]) == (
        ("come",), ("ride",), ("stop",), ("lie",))
    assert [verb_base(form) for form in ("came", "stopped", "rowed", "visited", "galloped")] == [
        "come", "stop", "row", "visit", "gallop"]
    # Both 'ride' and 'rid', 'hope' and 'hop' are WordNet verbs: English spelling would double the consonant of
    # the short-vowel verb ('ridding', 'hopped'), so the e-restoring rule, first in morphy's order, is right.
    assert [verb_base(form) for form in ("riding", "hoped", "sailing", "gliding")] == ["ride", "hope", "sail", "glide"]
    assert verb_base("cross") == "cross" and verb_base("qwxz") is None


def test_lexicographer_numbers_of_the_classes_the_features_lean_on() -> None:
    # lexnames(5WN): 15 noun.location, 18 noun.person, 38 verb.motion, 42 verb.stative (from the manual page).
    assert (LEXNAMES[15], LEXNAMES[18], LEXNAMES[38], LEXNAMES[42]) == (
        "noun.location", "noun.person", "verb.motion", "verb.stative")


def test_known_lemmas_have_their_wordnet_classes() -> None:
    classes = packaged_classes()
    # Values read from WordNet 3.0's index.verb / index.noun (first three senses, most frequent first).
    assert classes[("ford", "v")] == ("motion",)
    assert classes[("embark", "v")][0] == "motion"
    assert "location" in classes[("village", "n")]


def test_verb_features_name_the_classes_of_the_verb_its_subject_and_its_object() -> None:
    doc = make_doc(REACHED_TARN)
    classes = {("reach", "v"): ("motion", "contact"), ("island", "n"): ("object", "location")}
    assert wordnet_features(doc[1], classes) == {
        "wn_first": "v.motion", "wn_class=v.motion": True, "wn_class=v.contact": True,
        "wn_subject": "pronoun", "wn_object": "object",
    }
    assert wordnet_features(doc[3], classes) == {"wn_first": "n.object", "wn_class=n.object": True,
                                                 "wn_class=n.location": True}
    assert wordnet_features(doc[5], classes) == {}  # proper nouns are not looked up
    assert wordnet_features(doc[0], {}) == {}
    assert wordnet_features(doc[1], {})["wn_first"] == "v.unknown"
