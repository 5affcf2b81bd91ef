"""The gazetteer: names and alternatives read from a TSV, longest match wins, case options, pickling."""

from __future__ import annotations

import pickle
from pathlib import Path

import pytest
import spacy
from spacy.language import Language

from trainer.config import FeatureConfig
from trainer.errors import ConfigError
from trainer.features.extract import Featurizer
from trainer.features.gazetteer import Gazetteer, read_place_names

TSV = (
    "name\tlatitude\tlongitude\talternatives\n"
    "Tessel Bay\t-41.35\t-18.55\tBay of Tessel\n"
    "Caddow\t-41.20\t-18.40\t\n"
    "Marrow Cape\t-41.60\t-18.90\tCape Marrow; Marrow Point ;\n"
    "Tessel\t-41.30\t-18.50\t\n"
)


@pytest.fixture(scope="module")
def blank() -> Language:
    return spacy.blank("en")


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "places.tsv"
    path.write_text(text, encoding="utf-8")
    return path


def test_names_and_alternatives_sorted_and_unique(tmp_path: Path) -> None:
    assert read_place_names(write(tmp_path, TSV)) == [
        "Bay of Tessel", "Caddow", "Cape Marrow", "Marrow Cape", "Marrow Point", "Tessel", "Tessel Bay",
    ]


def test_alternatives_column_is_optional(tmp_path: Path) -> None:
    assert read_place_names(write(tmp_path, "name\n Holm Averly \nCaddow\nCaddow\n")) == ["Caddow", "Holm Averly"]


def test_missing_file_is_a_config_error(tmp_path: Path) -> None:
    with pytest.raises(ConfigError) as caught:
        read_place_names(tmp_path / "none.tsv")
    assert caught.value.cause == f"{tmp_path / 'none.tsv'}: gazetteer file not found"
    assert caught.value.fix == "fix [features] gazetteer or leave it empty"


def test_missing_file_named_in_the_config_is_a_config_error(tmp_path: Path, blank: Language) -> None:
    with pytest.raises(ConfigError, match="gazetteer file not found"):
        Featurizer.from_config(FeatureConfig(gazetteer=str(tmp_path / "none.tsv")), blank)


def test_file_without_a_name_column(tmp_path: Path) -> None:
    with pytest.raises(ConfigError) as caught:
        read_place_names(write(tmp_path, "place\tlatitude\nCaddow\t1\n"))
    assert caught.value.cause == f"{tmp_path / 'places.tsv'}: no 'name' column (found ['place', 'latitude'])"


def test_multiword_names_and_longest_match_wins(tmp_path: Path, blank: Language) -> None:
    gazetteer = Gazetteer.from_names(read_place_names(write(tmp_path, TSV)), blank)
    doc = blank("From Caddow we crossed Tessel Bay to the Bay of Tessel and Tessel.")
    assert [t.text for t in doc][4:6] == ["Tessel", "Bay"]
    assert gazetteer.spans(doc) == [(1, 2), (4, 6), (8, 11), (12, 13)]
    assert gazetteer.tags(doc) == ["O", "B", "O", "O", "B", "I", "O", "O", "B", "I", "I", "O", "B", "O"]


def test_overlapping_names_keep_the_longest_then_the_first() -> None:
    gazetteer = Gazetteer([["Tessel", "Bay"], ["Bay", "of", "Tessel"]], ignore_case=False)
    doc = spacy.blank("en")("Tessel Bay of Tessel")
    assert gazetteer.spans(doc) == [(1, 4)]
    tie = Gazetteer([["Tessel", "Bay"], ["Bay", "of"]], ignore_case=False)
    assert tie.spans(doc) == [(0, 2)]


def test_case_is_ignored_by_default(blank: Language) -> None:
    doc = blank("we rowed across tessel bay and TESSEL BAY")
    assert Gazetteer.from_names(["Tessel Bay"], blank).spans(doc) == [(3, 5), (6, 8)]
    assert Gazetteer.from_names(["Tessel Bay"], blank, ignore_case=False).spans(doc) == []
    assert Gazetteer.from_names(["Tessel Bay"], blank, ignore_case=False).spans(blank("into Tessel Bay")) == [(1, 3)]


def test_names_are_tokenised_like_the_text(blank: Language) -> None:
    gazetteer = Gazetteer.from_names(["St. Orra's Well"], blank)
    assert gazetteer.name_tokens == [["St.", "Orra", "'s", "Well"]]
    assert gazetteer.spans(blank("We drank at St. Orra's Well.")) == [(3, 7)]


def test_pickling_drops_the_matcher_and_rebuilds_it(blank: Language) -> None:
    gazetteer = Gazetteer.from_names(["Tessel Bay", "Caddow"], blank)
    doc = blank("From Caddow to Tessel Bay.")
    assert gazetteer.spans(doc) == [(1, 2), (3, 5)]
    assert gazetteer._matcher is not None

    copy = pickle.loads(pickle.dumps(gazetteer))
    assert copy._matcher is None
    assert (copy.name_tokens, copy.ignore_case) == (gazetteer.name_tokens, gazetteer.ignore_case)
    assert copy.spans(doc) == [(1, 2), (3, 5)]
    assert copy._matcher is not None


def test_matcher_is_rebuilt_for_another_vocabulary(blank: Language) -> None:
    gazetteer = Gazetteer.from_names(["Tessel Bay"], blank)
    gazetteer.spans(blank("Tessel Bay"))
    other = spacy.blank("en")
    assert gazetteer.spans(other("to Tessel Bay")) == [(1, 3)]
    assert gazetteer._matcher.vocab is other.vocab


def test_empty_gazetteer_matches_nothing(blank: Language) -> None:
    assert Gazetteer([]).tags(blank("Tessel Bay")) == ["O", "O"]
