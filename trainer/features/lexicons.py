"""The word lists that features and the rule baseline look words up in.

Four plain data files ship in ``trainer/features/lexicons/``; each can be
replaced by a file of the same layout (config keys under
``[features.lexicons]``, see ``docs/features.md``):

- ``motion_verbs.tsv``: ``lemma<TAB>class``, e.g. ``set out<TAB>departure``
- ``motion_nouns.tsv``: ``lemma<TAB>class``, e.g. ``voyage<TAB>general``
- ``prepositions.tsv``: ``preposition<TAB>role``, e.g. ``by way of<TAB>path``
- ``directions.txt``: ``direction``, one word a line, e.g. ``northward``

Every file starts with its header line (the column names above); blank lines
and lines starting with ``#`` are skipped. Entries are lowercased and runs of
spaces inside a multiword entry are collapsed to one space. Each entry may be
listed once, and classes and roles must be from :data:`MOTION_CLASSES` (verbs
also :data:`HEADING_CLASS`) and :data:`PREPOSITION_ROLES`.

>>> lexicons = load_lexicons()
>>> lexicons.verb_class("Set out"), lexicons.preposition_role("by way of")
('departure', 'path')
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Mapping

from trainer.errors import ConfigError
from trainer.features.wordnet import verb_base

if TYPE_CHECKING:
    from spacy.tokens import Token

MOTION_CLASSES: tuple[str, ...] = (
    "departure",
    "arrival",
    "traversal",
    "manner",
    "return",
    "ascent_descent",
    "vehicle",
    "caused",
    "general",
)
"""The classes of motion verbs and nouns (the project's own grouping)."""

HEADING_CLASS = "heading"
"""A verb class for verbs that are motion only with a heading (``turned northward``, ``struck west``)."""

VERB_CLASSES: tuple[str, ...] = (*MOTION_CLASSES, HEADING_CLASS)
"""The classes a motion verb may have: :data:`MOTION_CLASSES` and :data:`HEADING_CLASS`."""

_TOWARDS = frozenset({"towards", "toward"})  # its object is a heading whatever it is (``turned towards the plain``)
_TO = frozenset({"to", "into"})  # a heading only with a direction word or a side (``turning to the West``)
_SIDES = frozenset({"left", "right"})
_HEADING_DEPS = frozenset({"advmod", "npadvmod", "prt", "dobj", "acomp", "oprd"})  # how the parser attaches
# a direction word after a verb (``turned Northward``: dobj)
_TURNED_THING_DEPS = frozenset({"dobj", "nsubjpass"})  # the verb turns something else (``turned the key``)

PREPOSITION_ROLES: tuple[str, ...] = ("source", "path", "destination")
"""The roles a spatial preposition can cue."""


@dataclass(frozen=True)
class _Layout:
    """What one lexicon file looks like: its packaged name, header and allowed values."""

    filename: str
    header: tuple[str, ...]
    allowed: tuple[str, ...] = ()  # allowed values of the second column; () for one-column files

    def describe(self) -> str:
        """The expected line layout, for error messages."""
        layout = "<TAB>".join(self.header)
        if self.allowed:
            layout += f" with {self.header[1]} one of {', '.join(self.allowed)}"
        return layout


_LAYOUTS: dict[str, _Layout] = {
    "motion_verbs": _Layout("motion_verbs.tsv", ("lemma", "class"), VERB_CLASSES),
    "motion_nouns": _Layout("motion_nouns.tsv", ("lemma", "class"), MOTION_CLASSES),
    "prepositions": _Layout("prepositions.tsv", ("preposition", "role"), PREPOSITION_ROLES),
    "directions": _Layout("directions.txt", ("direction",)),
}

_Entries = tuple[tuple[str, ...], ...]


def _normalize(text: str) -> str:
    """Lowercase and collapse whitespace: ``"Set  Out"`` -> ``"set out"``."""
    return " ".join(text.lower().split())


@dataclass(frozen=True)
class Lexicons:
    """The loaded lexicons; all keys and values are lowercase.

    ``motion_verbs`` and ``motion_nouns`` map a lemma (phrasal ones with a
    space, ``"set out"``) to its class; ``prepositions`` maps a single or
    multiword preposition to the role it cues; ``directions`` holds direction
    words (``"northward"``, ``"ashore"``).
    """

    motion_verbs: Mapping[str, str]
    motion_nouns: Mapping[str, str]
    prepositions: Mapping[str, str]
    directions: frozenset[str]

    def verb_class(self, lemma: str) -> str | None:
        """The class of a verb lemma (any case, e.g. ``"Set out"``), or None if not listed."""
        return self.motion_verbs.get(_normalize(lemma))

    def noun_class(self, lemma: str) -> str | None:
        """The class of a noun lemma (any case), or None if not listed."""
        return self.motion_nouns.get(_normalize(lemma))

    def preposition_role(self, word_or_phrase: str) -> str | None:
        """The role cued by a preposition (``"from"``, ``"as far as"``), or None if not listed."""
        return self.prepositions.get(_normalize(word_or_phrase))

    @functools.cached_property
    def preposition_words(self) -> frozenset[str]:
        """Every word that occurs in a listed preposition: a quick test before trying phrases."""
        return frozenset(word for phrase in self.prepositions for word in phrase.split())


_VERB_POS = frozenset({"VERB", "AUX"})


def motion_reading(token: Token, lexicons: Lexicons) -> tuple[str, str] | None:
    """The lexicon entry a token is read as and its class (``("set out", "departure")``), or None.

    A verb (or an auxiliary) is looked up with its glued particle first, then
    alone, by the parser's lemma and then by WordNet's base form of the word as
    written (:func:`~trainer.features.wordnet.verb_base`), which mends the
    parser's lemma errors: ``riding`` lemmatised as ``rid``, ``came`` left as
    ``came``. A verb of the ``heading`` class counts only with a heading and
    no direct object (:func:`has_heading`). A noun is looked up by its lemma;
    an ``-ing`` noun that is not listed and does not modify another noun is
    read as its verb's gerund (``by dint of sailing north``).
    """
    pos = token.pos_
    if pos != "NOUN" and pos not in _VERB_POS:
        return None
    lemma = token.lemma_.lower()
    if pos == "NOUN":
        found = lexicons.noun_class(lemma)
        if found:
            return lemma, found
        if not token.lower_.endswith("ing") or token.dep_ in {"compound", "amod"}:
            return None
    readings = [lemma, *([base] if (base := verb_base(token.lower_)) and base != lemma else [])]
    particle = next((c.lower_ for c in token.children if c.dep_ == "prt"), None)
    entries = [f"{reading} {particle}" for reading in readings] if particle else []
    for entry in [*entries, *readings]:
        found = lexicons.verb_class(entry)
        if found == HEADING_CLASS and not has_heading(token, lexicons):
            continue
        if found:
            return entry, found
    return None


def has_heading(verb: Token, lexicons: Lexicons) -> bool:
    """Whether a verb without a direct object or passive subject is given a heading.

    A heading is a listed direction word (``turned northward``, ``stood
    seaward``; the parser often reads it as the verb's object), a phrase of
    ``towards`` (``turned towards the plain``), or ``to`` or ``into`` with a
    direction word or a side (``turning to the West``, ``wheeled to the
    left``). Without one, ``turned in``, ``turned the key``, ``the canoe was
    turned keel upward`` and ``stood still`` are not motion.
    """
    children = list(verb.children)
    if any(child.dep_ in _TURNED_THING_DEPS and child.lower_ not in lexicons.directions for child in children):
        return False
    for child in children:
        if child.dep_ in _HEADING_DEPS and child.lower_ in lexicons.directions:
            return True
        if child.dep_ != "prep":
            continue
        objects = [grand for grand in child.children if grand.dep_ == "pobj"]
        if objects and child.lower_ in _TOWARDS:
            return True
        if child.lower_ in _TO and any(o.lower_ in lexicons.directions or o.lower_ in _SIDES for o in objects):
            return True
    return False


def _parse(text: str, *, source: str, kind: str) -> _Entries:
    """Parse the text of one lexicon file into its entries, one tuple of fields each.

    ``source`` names the file in error messages, ``kind`` is a key of ``_LAYOUTS``.
    Raises :class:`ConfigError` naming ``source:line`` for any malformed line.
    """
    layout = _LAYOUTS[kind]
    fix = f"write one entry per line as {layout.describe()}, after the header line; lines starting with # are comments"
    header_seen = False
    first_line: dict[str, int] = {}
    entries: list[tuple[str, ...]] = []
    for number, raw in enumerate(text.split("\n"), start=1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        fields = tuple(_normalize(field) for field in raw.split("\t"))
        where = f"{source}:{number}"
        if not header_seen:
            if fields != layout.header:
                raise ConfigError(
                    f"{where}: the header line is {line!r}, expected {'<TAB>'.join(layout.header)!r}",
                    f"start the file with the header line; then {fix}",
                )
            header_seen = True
            continue
        if len(fields) != len(layout.header) or not all(fields):
            raise ConfigError(
                f"{where}: expected {layout.describe()}, found {line!r}",
                fix,
            )
        if layout.allowed and fields[1] not in layout.allowed:
            raise ConfigError(
                f"{where}: unknown {layout.header[1]} {fields[1]!r} for {fields[0]!r}; "
                f"expected one of {', '.join(layout.allowed)}",
                fix,
            )
        if fields[0] in first_line:
            raise ConfigError(
                f"{where}: {fields[0]!r} is already listed on line {first_line[fields[0]]}",
                f"keep one entry per {layout.header[0]} (its primary {layout.header[-1]})",
            )
        first_line[fields[0]] = number
        entries.append(fields)
    if not header_seen:
        raise ConfigError(f"{source}: no header line", f"start the file with the header line; then {fix}")
    return tuple(entries)


@functools.lru_cache(maxsize=None)
def _packaged_entries(kind: str) -> _Entries:
    """The parsed entries of the packaged file for ``kind``, read once per process."""
    resource = resources.files("trainer.features").joinpath("lexicons", _LAYOUTS[kind].filename)
    return _parse(resource.read_text(encoding="utf-8-sig"), source=str(resource), kind=kind)


def _file_entries(path: Path, kind: str) -> _Entries:
    """The parsed entries of a user's replacement file for ``kind``."""
    fix = f"fix the path given as [features.lexicons] {kind}, or remove the key to use the packaged list"
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise ConfigError(f"{path}: no such {kind} lexicon file", fix) from None
    except UnicodeDecodeError:
        raise ConfigError(f"{path}: the {kind} lexicon is not UTF-8 text", "re-save the file as UTF-8") from None
    except OSError as exc:
        raise ConfigError(f"{path}: cannot read the {kind} lexicon ({exc.strerror})", fix) from None
    return _parse(text, source=str(path), kind=kind)


def _entries(path: Path | None, kind: str) -> _Entries:
    """The packaged entries when ``path`` is None, else those of the file at ``path``."""
    return _packaged_entries(kind) if path is None else _file_entries(path, kind)


def load_lexicons(
    *,
    motion_verbs: Path | None = None,
    motion_nouns: Path | None = None,
    prepositions: Path | None = None,
    directions: Path | None = None,
) -> Lexicons:
    """Load the four lexicons; a None path means the packaged file.

    The packaged files are parsed once per process; a file given by path is
    read on every call. Raises :class:`ConfigError` for an unreadable file or
    a malformed line (the message names ``file:line`` and the expected layout).
    """
    return Lexicons(
        motion_verbs=dict(_entries(motion_verbs, "motion_verbs")),
        motion_nouns=dict(_entries(motion_nouns, "motion_nouns")),
        prepositions=dict(_entries(prepositions, "prepositions")),
        directions=frozenset(fields[0] for fields in _entries(directions, "directions")),
    )
