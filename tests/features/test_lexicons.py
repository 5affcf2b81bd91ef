"""Tests for trainer.features.lexicons: the packaged lists, the loader, and a WordNet cross-check."""

from __future__ import annotations

import os
import pickle
from importlib import resources
from pathlib import Path

import pytest

from trainer.errors import ConfigError
from trainer.features.lexicons import (
    HEADING_CLASS,
    MOTION_CLASSES,
    PREPOSITION_ROLES,
    VERB_CLASSES,
    Lexicons,
    load_lexicons,
)

PACKAGED = resources.files("trainer.features").joinpath("lexicons")


def packaged_keys(filename: str) -> list[str]:
    """First column of each entry of a packaged file, read without the loader (header dropped)."""
    lines = [line for line in PACKAGED.joinpath(filename).read_text(encoding="utf-8").splitlines()
             if line.strip() and not line.startswith("#")]
    return [line.split("\t")[0] for line in lines[1:]]


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# --- packaged defaults ----------------------------------------------------


def test_defaults_load_with_the_promised_sizes() -> None:
    lexicons = load_lexicons()
    assert isinstance(lexicons, Lexicons)
    assert len(lexicons.motion_verbs) >= 250
    assert len(lexicons.motion_nouns) >= 40
    assert len(lexicons.directions) >= 40
    assert set(lexicons.prepositions.values()) == set(PREPOSITION_ROLES)


def test_defaults_lookups() -> None:
    lexicons = load_lexicons()
    assert lexicons.verb_class("left") is None  # lemmas only, no inflected forms
    assert lexicons.verb_class("leave") == "departure"
    assert lexicons.verb_class("Set  Out") == "departure"
    assert lexicons.verb_class("reach") == "arrival"
    assert lexicons.verb_class("cross") == "traversal"
    assert lexicons.verb_class("trudge") == "manner"
    assert lexicons.verb_class("turn back") == "return"
    assert lexicons.verb_class("climb") == "ascent_descent"
    assert lexicons.verb_class("ferry") == "vehicle"
    assert lexicons.verb_class("carry") == "caused"
    assert lexicons.verb_class("travel") == "general"
    assert lexicons.verb_class("table") is None
    assert lexicons.noun_class("Departure") == "departure"
    assert lexicons.noun_class("voyage") == "general"
    assert lexicons.preposition_role("out of") == "source"
    assert lexicons.preposition_role("By way of") == "path"
    assert lexicons.preposition_role("as far as") == "destination"
    assert lexicons.preposition_role("at") is None
    assert {"north-east", "upstream", "ashore", "homeward"} <= lexicons.directions


def test_defaults_are_equal_across_calls_and_not_shared() -> None:
    first, second = load_lexicons(), load_lexicons()
    assert first == second
    assert first.motion_verbs is not second.motion_verbs


@pytest.mark.parametrize("cls", VERB_CLASSES)
def test_every_verb_class_is_used(cls: str) -> None:
    assert cls in load_lexicons().motion_verbs.values()


@pytest.mark.parametrize("cls", MOTION_CLASSES)
def test_every_noun_class_is_used(cls: str) -> None:
    assert cls in load_lexicons().motion_nouns.values()


@pytest.mark.parametrize("role", PREPOSITION_ROLES)
def test_every_preposition_role_is_used(role: str) -> None:
    assert role in load_lexicons().prepositions.values()


@pytest.mark.parametrize(
    "filename", ["motion_verbs.tsv", "motion_nouns.tsv", "prepositions.tsv", "directions.txt"]
)
def test_packaged_files_have_no_duplicates_and_are_lowercase(filename: str) -> None:
    keys = packaged_keys(filename)
    duplicates = sorted({key for key in keys if keys.count(key) > 1})
    assert duplicates == []
    assert [key for key in keys if key != key.lower() or key != key.strip()] == []


def test_lexicons_pickle_round_trip() -> None:
    lexicons = load_lexicons()
    assert pickle.loads(pickle.dumps(lexicons)) == lexicons


# --- replacing files --------------------------------------------------------


def test_a_file_given_by_path_replaces_only_that_lexicon(tmp_path: Path) -> None:
    verbs = write(tmp_path, "verbs.tsv", "# mine\nlemma\tclass\n\nWalk\tManner\nset   OUT\tdeparture\n")
    lexicons = load_lexicons(motion_verbs=verbs)
    assert dict(lexicons.motion_verbs) == {"walk": "manner", "set out": "departure"}
    defaults = load_lexicons()
    assert lexicons.motion_nouns == defaults.motion_nouns
    assert lexicons.prepositions == defaults.prepositions
    assert lexicons.directions == defaults.directions


def test_each_keyword_reads_its_own_file(tmp_path: Path) -> None:
    lexicons = load_lexicons(
        motion_nouns=write(tmp_path, "n.tsv", "lemma\tclass\ntrek\tmanner\n"),
        prepositions=write(tmp_path, "p.tsv", "preposition\trole\nout of\tsource\n"),
        directions=write(tmp_path, "d.txt", "direction\nNorth\n"),
    )
    assert dict(lexicons.motion_nouns) == {"trek": "manner"}
    assert dict(lexicons.prepositions) == {"out of": "source"}
    assert lexicons.directions == frozenset({"north"})


def test_a_header_only_file_gives_an_empty_lexicon(tmp_path: Path) -> None:
    lexicons = load_lexicons(directions=write(tmp_path, "d.txt", "direction\n"))
    assert lexicons.directions == frozenset()


# --- errors -----------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "line", "message"),
    [
        ("lemma\tclass\nwalk\tmanner\nride manner\n", 3,
         "expected lemma<TAB>class with class one of departure, arrival, traversal, manner, return, "
         "ascent_descent, vehicle, caused, general, heading, found 'ride manner'"),
        ("lemma\tclass\nwalk\tmanner\textra\n", 2, "expected lemma<TAB>class"),
        ("lemma\tclass\n\twalk\n", 2, "expected lemma<TAB>class"),
        ("# c\nlemma\tclass\nwalk\tstroll\n", 3,
         "unknown class 'stroll' for 'walk'; expected one of departure, arrival"),
        ("walk\tmanner\n", 1, "the header line is 'walk\\tmanner', expected 'lemma<TAB>class'"),
    ],
)
def test_a_malformed_line_names_file_and_line(tmp_path: Path, text: str, line: int, message: str) -> None:
    path = write(tmp_path, "verbs.tsv", text)
    with pytest.raises(ConfigError) as info:
        load_lexicons(motion_verbs=path)
    assert info.value.cause.startswith(f"{path}:{line}: ")
    assert message in info.value.cause
    assert "after the header line; lines starting with # are comments" in info.value.fix


def test_a_duplicate_entry_names_both_lines(tmp_path: Path) -> None:
    path = write(tmp_path, "verbs.tsv", "lemma\tclass\nwalk\tmanner\n\nWalk\tgeneral\n")
    with pytest.raises(ConfigError) as info:
        load_lexicons(motion_verbs=path)
    assert info.value.cause == f"{path}:4: 'walk' is already listed on line 2"
    assert info.value.fix == "keep one entry per lemma (its primary class)"


def test_an_unknown_preposition_role_is_rejected(tmp_path: Path) -> None:
    path = write(tmp_path, "p.tsv", "preposition\trole\nfrom\tmover\n")
    with pytest.raises(ConfigError, match=r"p\.tsv:2: unknown role 'mover' for 'from'; "
                                          r"expected one of source, path, destination"):
        load_lexicons(prepositions=path)


def test_a_two_column_direction_line_is_rejected(tmp_path: Path) -> None:
    path = write(tmp_path, "d.txt", "direction\nnorth\tpath\n")
    with pytest.raises(ConfigError, match=r"d\.txt:2: expected direction, found 'north\\tpath'"):
        load_lexicons(directions=path)


def test_a_file_without_header_is_rejected(tmp_path: Path) -> None:
    path = write(tmp_path, "d.txt", "# only comments\n\n")
    with pytest.raises(ConfigError, match=r"d\.txt: no header line"):
        load_lexicons(directions=path)


def test_a_missing_file_names_the_config_key(tmp_path: Path) -> None:
    path = tmp_path / "absent.tsv"
    with pytest.raises(ConfigError) as info:
        load_lexicons(motion_nouns=path)
    assert info.value.cause == f"{path}: no such motion_nouns lexicon file"
    assert "[features.lexicons] motion_nouns" in info.value.fix


def test_a_non_utf8_file_is_rejected(tmp_path: Path) -> None:
    path = tmp_path / "v.tsv"
    path.write_bytes(b"lemma\tclass\nr\xe9gion\tgeneral\n")
    with pytest.raises(ConfigError, match="not UTF-8 text"):
        load_lexicons(motion_verbs=path)


# --- external check against WordNet 3.0 -------------------------------------
# Source: Princeton WordNet 3.0 as shipped by Debian's ``wordnet-base``
# package, read directly from its database files. Formats per the manual pages
# wndb(5WN) (index line: ``lemma pos synset_cnt p_cnt [ptr_symbol...]
# sense_cnt tagsense_cnt synset_offset...``; data line: ``synset_offset
# lex_filenum ss_type ...``) and lexnames(5WN) (lex_filenum 38 = verb.motion).

WORDNET_DIR = Path("/usr/share/wordnet")
VERB_MOTION = 38

# Measured on the packaged list: 242 of 268 single-word lemmas (0.903) have a
# verb.motion sense. The threshold leaves a margin of about 5 points for future
# edits. The share cannot be near 1: WordNet files many travel verbs only under
# other lexicographer files, e.g. haul, tow, cart, moor, anchor, fetch
# (verb.contact), regain, smuggle (verb.possession), emigrate, relocate
# (verb.change), patrol, deport, toil (verb.social), explore (verb.cognition).
MIN_VERB_MOTION_SHARE = 0.85


@pytest.fixture(scope="module")
def wordnet_verbs() -> dict[str, frozenset[int]]:
    """Each WordNet verb lemma mapped to the lexicographer file numbers of its senses."""
    index, data = WORDNET_DIR / "index.verb", WORDNET_DIR / "data.verb"
    if not (index.is_file() and data.is_file()):
        reason = f"WordNet 3.0 files {index} and {data} not found (install the Debian package wordnet-base)"
        if "CI" in os.environ:
            pytest.fail(reason)
        pytest.skip(reason)
    lex_filenum: dict[str, int] = {}
    with open(data, encoding="utf-8") as handle:
        for line in handle:
            if not line.startswith(" "):  # the licence header lines start with two spaces
                offset, filenum, _ = line.split(" ", 2)
                lex_filenum[offset] = int(filenum)
    senses: dict[str, frozenset[int]] = {}
    with open(index, encoding="utf-8") as handle:
        for line in handle:
            if not line.startswith(" "):
                fields = line.split()
                synset_cnt = int(fields[2])
                senses[fields[0]] = frozenset(lex_filenum[offset] for offset in fields[-synset_cnt:])
    return senses


def test_every_verb_lemma_is_a_wordnet_verb(wordnet_verbs: dict[str, frozenset[int]]) -> None:
    missing = [
        lemma for lemma in load_lexicons().motion_verbs
        if lemma.replace(" ", "_") not in wordnet_verbs and lemma.split()[0] not in wordnet_verbs
    ]
    assert missing == []


def test_most_single_word_verbs_have_a_verb_motion_sense(wordnet_verbs: dict[str, frozenset[int]]) -> None:
    single = [lemma for lemma in load_lexicons().motion_verbs if " " not in lemma]
    motion = [lemma for lemma in single if VERB_MOTION in wordnet_verbs[lemma]]
    share = len(motion) / len(single)
    print(f"\nWordNet 3.0 verb.motion share: {len(motion)}/{len(single)} = {share:.3f}")
    assert share >= MIN_VERB_MOTION_SHARE


# ---------------------------------------------------------------- reading a token as a motion word

# 'After riding twelve miles we hoped to go by sailing north.' with the parser's lemma errors kept:
# the small English pipeline lemmatises 'riding' as 'rid' and tags a gerund after a preposition as a noun.
RIDING = """
After    after    ADP    IN   prep    1
riding   rid      VERB   VBG  pcomp   0
twelve   twelve   NUM    CD   nummod  3
miles    mile     NOUN   NNS  dobj    1
we       we       PRON   PRP  nsubj   5
hoped    hope     VERB   VBD  ROOT    5
to       to       PART   TO   aux     7
go       go       VERB   VB   xcomp   5
by       by       ADP    IN   prep    7
sailing  sailing  NOUN   NN   pobj    8
north    north    ADV    RB   advmod  9
.        .        PUNCT  .    punct   5
"""
# 'The sailing ship came in.' with 'came' left unlemmatised and tagged as an auxiliary.
SAILING_SHIP = """
The      the      DET    DT   det       2
sailing  sailing  NOUN   NN   compound  2
ship     ship     NOUN   NN   nsubj     3
came     came     AUX    VBD  ROOT      3
in       in       ADP    RP   prt       3
.        .        PUNCT  .    punct     3
"""


def test_motion_reading_mends_the_parsers_lemma_errors_from_the_word_as_written() -> None:
    from tests.hand_parsed import make_doc

    from trainer.features.lexicons import motion_reading

    lexicons = load_lexicons()
    doc = make_doc(RIDING)
    readings = {token.text: motion_reading(token, lexicons) for token in doc}
    assert readings["riding"] == ("ride", lexicons.verb_class("ride"))  # lemma 'rid' mended by WordNet's 'ride'
    assert readings["hoped"] is None  # 'hope', not the motion verb 'hop'
    assert readings["go"] == ("go", lexicons.verb_class("go"))
    assert readings["sailing"] == ("sail", lexicons.verb_class("sail"))  # a gerund tagged as a noun
    assert readings["miles"] is None and readings["north"] is None
    ship = make_doc(SAILING_SHIP)
    assert motion_reading(ship[1], lexicons) is None  # a noun modifier, not a gerund
    assert motion_reading(ship[3], lexicons) == ("come in", lexicons.verb_class("come in"))


# 'We then turned Northward.': the parser reads the direction word as the verb's object.
TURNED_NORTHWARD = """
We         we         PRON   PRP  nsubj   2
then       then       ADV    RB   advmod  2
turned     turn       VERB   VBD  ROOT    2
Northward  Northward  PROPN  NNP  dobj    2
.          .          PUNCT  .    punct   2
"""
# 'We turned towards the plain.'
TURNED_TOWARDS = """
We       we       PRON   PRP  nsubj  1
turned   turn     VERB   VBD  ROOT   1
towards  towards  ADP    IN   prep   1
the      the      DET    DT   det    4
plain    plain    NOUN   NN   pobj   2
.        .        PUNCT  .    punct  1
"""
# 'She stood to the left.'
STOOD_LEFT = """
She    she    PRON   PRP  nsubj  1
stood  stand  VERB   VBD  ROOT   1
to     to     ADP    IN   prep   1
the    the    DET    DT   det    4
left   left   NOUN   NN   pobj   2
.      .      PUNCT  .    punct  1
"""
# 'I turned in early.'
TURNED_IN = """
I       I       PRON   PRP  nsubj   1
turned  turn    VERB   VBD  ROOT    1
in      in      ADP    RP   prt     1
early   early   ADV    RB   advmod  1
.       .       PUNCT  .    punct   1
"""
# 'He turned the key to the west.': a turned thing, not a heading.
TURNED_KEY = """
He      he      PRON   PRP  nsubj  1
turned  turn    VERB   VBD  ROOT   1
the     the     DET    DT   det    3
key     key     NOUN   NN   dobj   1
to      to      ADP    IN   prep   1
the     the     DET    DT   det    6
west    west    NOUN   NN   pobj   4
.       .       PUNCT  .    punct  1
"""
# 'The canoe was turned keel upward.'
CANOE_TURNED = """
The     the     DET    DT   det        1
canoe   canoe   NOUN   NN   nsubjpass  3
was     be      AUX    VBD  auxpass    3
turned  turn    VERB   VBN  ROOT       3
keel    keel    NOUN   NN   npadvmod   3
upward  upward  ADV    RB   advmod     3
.       .       PUNCT  .    punct      3
"""
# 'We turned to business.'
TURNED_TO_BUSINESS = """
We        we        PRON   PRP  nsubj  1
turned    turn      VERB   VBD  ROOT   1
to        to        ADP    IN   prep   1
business  business  NOUN   NN   pobj   2
.         .         PUNCT  .    punct  1
"""


@pytest.mark.parametrize(
    ("table", "verb", "expected"),
    [
        (TURNED_NORTHWARD, 2, ("turn", HEADING_CLASS)),
        (TURNED_TOWARDS, 1, ("turn", HEADING_CLASS)),
        (STOOD_LEFT, 1, ("stand", HEADING_CLASS)),
        (TURNED_IN, 1, None),
        (TURNED_KEY, 1, None),
        (CANOE_TURNED, 3, None),
        (TURNED_TO_BUSINESS, 1, None),
    ],
)
def test_a_heading_verb_is_motion_only_with_a_heading(table: str, verb: int, expected: tuple[str, str] | None) -> None:
    from tests.hand_parsed import make_doc

    from trainer.features.lexicons import motion_reading
    from trainer.features.rule_cues import rule_triggers

    lexicons = load_lexicons()
    doc = make_doc(table)
    assert motion_reading(doc[verb], lexicons) == expected
    assert [(t.first, t.motion_class) for t in rule_triggers(doc, lexicons)] == ([(verb, HEADING_CLASS)] if expected else [])


def test_the_heading_class_is_for_verbs_only(tmp_path: Path) -> None:
    path = write(tmp_path, "nouns.tsv", "lemma\tclass\nturn\theading\n")
    with pytest.raises(ConfigError, match="unknown class 'heading' for 'turn'"):
        load_lexicons(motion_nouns=path)

