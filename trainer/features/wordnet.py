"""WordNet classes of verbs and nouns: a feature that generalises beyond the annotated words.

A motion verb never seen in the training sentences (``embarked``, ``traversed``)
still shares WordNet's lexicographer class ``motion`` with the ones that were;
a destination never seen is often a ``location`` noun. The packaged file
``lexicons/wordnet_classes.tsv`` lists, for each single-word verb and noun
lemma of Princeton WordNet 3.0, the distinct lexicographer classes of its
first three senses in sense order (most frequent first). It is derived from
WordNet's database files by :func:`build_classes` and carries WordNet's
licence notice; a test rebuilds it from Debian's ``wordnet-base`` and compares.
"""

from __future__ import annotations

import functools
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Iterator

if TYPE_CHECKING:
    from spacy.tokens import Token

    from trainer.features.groups import Features, Sentence

# lex_filenum -> lexicographer file, per WordNet's lexnames(5WN) manual page (nouns and verbs only).
LEXNAMES: dict[int, str] = {
    3: "noun.Tops", 4: "noun.act", 5: "noun.animal", 6: "noun.artifact", 7: "noun.attribute", 8: "noun.body",
    9: "noun.cognition", 10: "noun.communication", 11: "noun.event", 12: "noun.feeling", 13: "noun.food",
    14: "noun.group", 15: "noun.location", 16: "noun.motive", 17: "noun.object", 18: "noun.person",
    19: "noun.phenomenon", 20: "noun.plant", 21: "noun.possession", 22: "noun.process", 23: "noun.quantity",
    24: "noun.relation", 25: "noun.shape", 26: "noun.state", 27: "noun.substance", 28: "noun.time",
    29: "verb.body", 30: "verb.change", 31: "verb.cognition", 32: "verb.communication", 33: "verb.competition",
    34: "verb.consumption", 35: "verb.contact", 36: "verb.creation", 37: "verb.emotion", 38: "verb.motion",
    39: "verb.perception", 40: "verb.possession", 41: "verb.social", 42: "verb.stative", 43: "verb.weather",
}
SENSES_KEPT = 3
PACKAGED_FILE = "wordnet_classes.tsv"
HEADER = "lemma\tpos\tclasses"
EXCEPTIONS_FILE = "wordnet_verb_exceptions.tsv"
EXCEPTIONS_HEADER = "form\tbases"
# WordNet's detachment rules for verbs (morphy(7WN)): an inflected ending and what replaces it.
VERB_ENDINGS: tuple[tuple[str, str], ...] = (
    ("s", ""), ("ies", "y"), ("es", "e"), ("es", ""), ("ed", "e"), ("ed", ""), ("ing", "e"), ("ing", ""),
)
NOTICE = (
    "# Derived from Princeton WordNet 3.0 (index.noun/verb and data.noun/verb): for each single-word lemma,\n"
    "# the distinct lexicographer classes of its first three senses, most frequent sense first.\n"
    "# WordNet 3.0 Copyright 2006 by Princeton University. All rights reserved. Permission to use, copy,\n"
    "# modify and distribute WordNet for any purpose and without fee or royalty is granted, provided that\n"
    "# this notice is kept. WordNet is provided 'as is', without warranties (see WordNet's LICENSE).\n"
)
EXCEPTIONS_NOTICE = (
    "# Copied from Princeton WordNet 3.0's verb.exc: each irregular verb form and its base forms.\n"
    + NOTICE.split("\n", 2)[2]
)
WordNetClasses = dict[tuple[str, str], tuple[str, ...]]


def _lex_files(data: Path) -> dict[str, int]:
    """Synset offset -> lex_filenum, from a data.* file (licence lines start with two spaces)."""
    out: dict[str, int] = {}
    with open(data, encoding="utf-8") as handle:
        for line in handle:
            if not line.startswith(" "):
                offset, filenum, _ = line.split(" ", 2)
                out[offset] = int(filenum)
    return out


def build_classes(wordnet_dir: Path) -> str:
    """The text of the packaged classes file, built from WordNet 3.0's ``index`` and ``data`` files."""
    lines = [NOTICE.rstrip("\n"), HEADER]
    for pos, short in (("noun", "n"), ("verb", "v")):
        lex_files = _lex_files(wordnet_dir / f"data.{pos}")
        with open(wordnet_dir / f"index.{pos}", encoding="utf-8") as handle:
            for line in handle:
                if line.startswith(" "):
                    continue
                fields = line.split()
                lemma, synset_count = fields[0], int(fields[2])
                if not lemma.isalpha() or not lemma.islower():
                    continue
                classes: list[str] = []
                for offset in fields[-synset_count:][:SENSES_KEPT]:
                    name = LEXNAMES[lex_files[offset]].split(".", 1)[1]
                    if name not in classes:
                        classes.append(name)
                lines.append(f"{lemma}\t{short}\t{','.join(classes)}")
    return "\n".join(lines) + "\n"


def build_verb_exceptions(wordnet_dir: Path) -> str:
    """The text of the packaged verb-exceptions file, built from WordNet 3.0's ``verb.exc``."""
    lines = [EXCEPTIONS_NOTICE.rstrip("\n"), EXCEPTIONS_HEADER]
    with open(wordnet_dir / "verb.exc", encoding="utf-8") as handle:
        for line in handle:
            form, *bases = line.split()
            lines.append(f"{form}\t{','.join(bases)}")
    return "\n".join(lines) + "\n"


def _packaged_rows(filename: str, header: str) -> Iterator[list[str]]:
    """The tab-separated fields of each data line of a packaged WordNet-derived file (no notice, header or blanks)."""
    text = resources.files("trainer.features").joinpath("lexicons", filename).read_text(encoding="utf-8")
    for line in text.splitlines():
        if line and not line.startswith("#") and line != header:
            yield line.split("\t")


@functools.lru_cache(maxsize=1)
def packaged_verb_exceptions() -> dict[str, tuple[str, ...]]:
    """The packaged irregular verb forms, ``form -> base forms``, read once per process."""
    return {form: tuple(bases.split(",")) for form, bases in _packaged_rows(EXCEPTIONS_FILE, EXCEPTIONS_HEADER)}


@functools.lru_cache(maxsize=4096)
def verb_base(form: str) -> str | None:
    """The WordNet verb a lowercase verb form most likely comes from, after WordNet's morphy; None if none.

    An irregular form's first base in ``verb.exc`` wins; then the form itself
    if WordNet lists it as a verb; then the first detachment rule, in morphy's
    order, that leaves a WordNet verb. Restoring an ``e`` comes before a bare
    cut, which is what English spelling implies (a short vowel would double
    the consonant): ``riding`` is ``ride``, not ``rid``; ``hoped`` is ``hope``,
    not ``hop``.
    """
    irregular = packaged_verb_exceptions().get(form)
    if irregular:
        return irregular[0]
    verbs = packaged_classes()
    candidates = [form] + [form[: -len(ending)] + base for ending, base in VERB_ENDINGS
                           if form.endswith(ending) and len(form) > len(ending) + 1]
    return next((candidate for candidate in candidates if (candidate, "v") in verbs), None)


@functools.lru_cache(maxsize=1)
def packaged_classes() -> WordNetClasses:
    """The packaged lemma classes, ``(lemma, "n" | "v") -> classes``, read once per process."""
    return {(lemma, pos): tuple(classes.split(",")) for lemma, pos, classes in _packaged_rows(PACKAGED_FILE, HEADER)}


_POS = {"VERB": "v", "NOUN": "n"}


_ARGUMENT_DEPS = {"nsubj": "wn_subject", "nsubjpass": "wn_subject", "dobj": "wn_object"}


def argument_class(token: Token, classes: WordNetClasses) -> str:
    """The class of a verb argument's head: its first WordNet noun class, or its kind when it has none."""
    if token.pos_ == "PRON":
        return "pronoun"
    if token.pos_ == "PROPN":
        return "name"
    found = classes.get((token.lemma_.lower(), "n"))
    return found[0] if found else "unknown"


def wordnet_features(token: Token, classes: WordNetClasses) -> dict[str, str | bool]:
    """WordNet classes of a verb's or common noun's lemma, and of a verb's subject and object.

    ``wn_first`` is the most frequent sense's class (``v.motion``) and ``wn_class=<class>`` marks
    each class of the first senses; a verb also gets ``wn_subject`` and
    ``wn_object``, the first noun class of its subject's and object's head
    (``pronoun`` or ``name`` for those), which tells a travelling party from
    a road that "runs north".
    """
    pos = _POS.get(token.pos_)
    if pos is None:
        return {}
    found = classes.get((token.lemma_.lower(), pos))
    features: dict[str, str | bool] = {"wn_first": f"{pos}.{found[0]}" if found else f"{pos}.unknown"}
    features.update({f"wn_class={pos}.{name}": True for name in found or ()})
    if pos == "v":
        for child in token.children:
            name = _ARGUMENT_DEPS.get(child.dep_)
            if name and name not in features:
                features[name] = argument_class(child, classes)
    return features


def wordnet_group(sentence: Sentence) -> list[Features]:
    """:func:`wordnet_features` of every token, with the packaged classes."""
    classes = packaged_classes()
    return [wordnet_features(token, classes) for token in sentence.tokens]
