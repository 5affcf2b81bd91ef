"""Import of ISO-Space (ISO 24617-7) XML in the usual annotation-tool layout.

A file holds one document: a root element with ``<TEXT>`` (the document text,
usually CDATA) and ``<TAGS>``. Extent tags (``MOTION``, ``PLACE``, ``PATH``,
``SPATIAL_ENTITY``, ...) carry ``id``, ``start``, ``end`` and ``text``; link
tags carry ids of extent tags. Each ``MOVELINK`` becomes one event, its
attributes mapped by :data:`ROLE_OF_ATTRIBUTE`; a ``MOTION`` tag that no
``MOVELINK`` uses becomes an event without roles.

The text is split into sentence records (``<stem>-s001``, ... with ``doc`` the
file stem) and offsets are shifted into each sentence. Everything that does not
fit is counted in the losses, one line per kind with up to
:data:`EXAMPLES_PER_KIND` examples, so a big file gives a short report.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from bisect import bisect_right
from dataclasses import dataclass, field
from pathlib import Path

from trainer.corpus.convert.base import Conversion
from trainer.corpus.records import DEFAULT_ROLES, Event, Offsets, Record, RoleSpan
from trainer.errors import CorpusError, UnreadableInputError, opening

ROLE_OF_ATTRIBUTE: dict[str, str] = {
    "mover": "mover",
    "source": "source",
    "midPoint": "path",
    "pathID": "path",
    "goal": "destination",
}
LINK_TAG = "MOVELINK"
TRIGGER_ATTRIBUTE = "trigger"
MOTION_TAG = "MOTION"
EXAMPLES_PER_KIND = 5
# Attributes that hold no annotation: identifiers, offsets, free comments (and
# the ``*Text`` copies of linked text that annotation tools add, see _is_bookkeeping).
_EXTENT_BOOKKEEPING = {"id", "start", "end", "text", "comment"}
_LINK_BOOKKEEPING = {"id", "comment", TRIGGER_ATTRIBUTE, *ROLE_OF_ATTRIBUTE}
_ID_SEPARATOR = re.compile(r"[\s,]+")
_SENTENCE_BREAK = re.compile(r"(?P<stop>[.!?][\"'”’)\]]*)\s+|\n[^\S\n]*\n\s*")


@dataclass(frozen=True)
class Extent:
    """An extent tag: its element name, id, document offsets and ``text`` attribute."""

    tag: str
    id: str
    span: Offsets
    text: str
    attributes: dict[str, str] = field(compare=False)

    @property
    def consumes_text(self) -> bool:
        """False for non-consuming tags (offsets -1), which mark no characters."""
        return self.span[0] >= 0


@dataclass
class Tally:
    """Losses grouped by kind: a count and the first few examples of each."""

    counts: dict[str, int] = field(default_factory=dict)
    examples: dict[str, list[str]] = field(default_factory=dict)

    def add(self, kind: str, example: str) -> None:
        self.counts[kind] = self.counts.get(kind, 0) + 1
        shown = self.examples.setdefault(kind, [])
        if len(shown) < EXAMPLES_PER_KIND:
            shown.append(example)

    def lines(self, where: Path) -> list[str]:
        """One loss line per kind, in first-seen order."""
        return [
            f"{where}: {kind} ({count}x; e.g. {'; '.join(self.examples[kind])}{'; ...' if count > EXAMPLES_PER_KIND else ''})"
            for kind, count in self.counts.items()
        ]


def read_isospace(path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES) -> Conversion:
    """Import one ISO-Space XML file as sentence records with motion events.

    Raises :class:`UnreadableInputError` for XML that does not parse (with the
    parser's line and column) and :class:`CorpusError` for a file without
    ``<TEXT>`` or ``<TAGS>``, or with extent offsets that are not numbers
    within the text.
    """
    path = Path(path)
    text, tags = _parse(path)
    extents, links = _extents_and_links(path, tags, len(text))
    document = _Document(text=text, extents=extents, roles=roles)
    for link in links:
        if link.tag == LINK_TAG:
            document.add_link(link)
        else:
            document.tally.add(f"{link.tag} links are not mapped; not imported", link.get("id", "?"))
    document.add_unlinked_motions()
    document.report_unused()
    stem = path.stem
    records = [
        Record(id=f"{stem}-s{i + 1:03d}", doc=stem, text=text[start:end], events=document.events_of(i))
        for i, (start, end) in enumerate(document.sentences)
    ]
    return Conversion(records=records, losses=document.tally.lines(path))


def split_sentences(text: str) -> list[Offsets]:
    """``(start, end)`` of each sentence, whitespace trimmed.

    A sentence ends after ``.``, ``!`` or ``?`` (and any closing quotes or
    brackets) followed by whitespace, and at a blank line. A small rule set:
    abbreviations such as ``Mr.`` also end a sentence.
    """
    spans, start = [], 0
    for match in _SENTENCE_BREAK.finditer(text):
        spans.append((start, match.end("stop") if match.group("stop") else match.start()))
        start = match.end()
    spans.append((start, len(text)))
    return [trimmed for span in spans if (trimmed := _trim(text, span))]


def _trim(text: str, span: Offsets) -> Offsets | None:
    start, end = span
    while start < end and text[start].isspace():
        start += 1
    while end > start and text[end - 1].isspace():
        end -= 1
    return (start, end) if start < end else None


def _parse(path: Path) -> tuple[str, ET.Element]:
    """The document text and the ``<TAGS>`` element."""
    try:
        with opening(path, expected="an ISO-Space XML file"):
            root = ET.parse(path).getroot()
    except LookupError as exc:  # the XML declaration names an encoding Python does not know
        raise UnreadableInputError(f"{path}: the XML declaration names an unknown encoding ({exc})",
                                   'write encoding="UTF-8" in the first line') from None
    except ET.ParseError as exc:
        line, column = exc.position
        raise UnreadableInputError(
            f"{path}: not well-formed XML at line {line}, column {column} ({exc})",
            "repair the XML there (an unescaped '&' or '<' outside CDATA is a common cause)",
        ) from None
    text_element, tags = root.find("TEXT"), root.find("TAGS")
    if text_element is None or tags is None:
        missing = " and ".join(name for name, el in (("<TEXT>", text_element), ("<TAGS>", tags)) if el is None)
        raise CorpusError(f"{path}: no {missing} under the root <{root.tag}>",
                          "export the file from the annotation tool with its text and tags")
    return text_element.text or "", tags


def _extents_and_links(path: Path, tags: ET.Element, length: int) -> tuple[dict[str, Extent], list[ET.Element]]:
    """Extent tags (those with a ``start`` attribute) by id, and the other tags in document order."""
    extents: dict[str, Extent] = {}
    links = []
    for element in tags:
        if "start" not in element.attrib:
            links.append(element)
            continue
        extent = _extent(path, element, length)
        if extent.id in extents:
            raise CorpusError(f"{path}: two tags have the id {extent.id!r}", "give every tag its own id")
        extents[extent.id] = extent
    return extents, links


def _extent(path: Path, element: ET.Element, length: int) -> Extent:
    attributes = dict(element.attrib)
    tag_id = attributes.get("id", "")
    try:
        span = (int(attributes["start"]), int(attributes.get("end", "")))
    except ValueError:
        raise CorpusError(f"{path}: {element.tag} {tag_id!r} has offsets {attributes['start']!r}, "
                          f"{attributes.get('end')!r}", "offsets must be whole numbers (-1 for a non-consuming tag)") from None
    if span[0] >= 0 and not span[0] <= span[1] <= length:
        raise CorpusError(f"{path}: {element.tag} {tag_id!r} has offsets [{span[0]}, {span[1]}) outside the "
                          f"{length}-character text", "check that the <TEXT> is the one the tags were made on")
    if not tag_id:
        raise CorpusError(f"{path}: a {element.tag} tag at [{span[0]}, {span[1]}) has no id", "give every tag an id")
    return Extent(element.tag, tag_id, span, attributes.get("text", ""), attributes)


def _is_bookkeeping(attribute: str, bookkeeping: set[str]) -> bool:
    return attribute in bookkeeping or attribute.endswith("Text")


@dataclass
class _Document:
    """The sentences of one document and the events found for each."""

    text: str
    extents: dict[str, Extent]
    roles: tuple[str, ...]
    tally: Tally = field(default_factory=Tally)
    accounted: set[str] = field(default_factory=set)  # ids imported, or reported as a loss of a link
    checked: set[str] = field(default_factory=set)
    found: dict[int, list[tuple[Offsets, int, Event]]] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.sentences = split_sentences(self.text)
        self.starts = [start for start, _ in self.sentences]

    def sentence_of(self, span: Offsets) -> int | None:
        """Index of the sentence holding the whole span, or None when it crosses a boundary."""
        index = bisect_right(self.starts, span[0]) - 1
        if index >= 0 and span[1] <= self.sentences[index][1]:
            return index
        return None

    def add_link(self, link: ET.Element) -> None:
        """One event from a MOVELINK, with the roles that fit in its trigger's sentence."""
        link_id = link.get("id", "?")
        trigger = self.trigger_of(link_id, link.get(TRIGGER_ATTRIBUTE, ""))
        if trigger is None:
            return
        self.accounted.add(trigger.id)
        sentence = self.sentence_of(trigger.span)
        if sentence is None:
            self.tally.add("trigger crosses a sentence boundary; the link was not imported", f"{link_id} {trigger.text!r}")
            return
        roles = []
        for attribute, role in ROLE_OF_ATTRIBUTE.items():
            for ref in _ID_SEPARATOR.split(link.get(attribute, "").strip()):
                span = self.role_span(link_id, attribute, ref, role, sentence) if ref else None
                if span is not None and RoleSpan(role, span) not in roles:
                    roles.append(RoleSpan(role, span))
        self.report_attributes(LINK_TAG, link_id, link.attrib, _LINK_BOOKKEEPING)
        self.add_event(sentence, trigger, tuple(sorted(roles, key=lambda r: r.span)))

    def trigger_of(self, link_id: str, ref: str) -> Extent | None:
        """The extent a link's trigger attribute names, or None (with a loss)."""
        ref = ref.strip()
        extent = self.extents.get(ref)
        if extent is None:
            kind = "MOVELINK has no trigger" if not ref else "MOVELINK trigger names an unknown id"
            self.tally.add(f"{kind}; the link was not imported", f"{link_id} trigger={ref!r}")
        elif not extent.consumes_text:
            self.tally.add("MOVELINK trigger is a non-consuming tag; the link was not imported", f"{link_id} {ref}")
            self.accounted.add(extent.id)
            extent = None
        return extent

    def role_span(self, link_id: str, attribute: str, ref: str, role: str, sentence: int) -> Offsets | None:
        """The sentence-relative span a link attribute names, or None (with a loss)."""
        extent = self.extents.get(ref)
        where = f"{link_id} {attribute}={ref}"
        if extent is not None:
            self.accounted.add(extent.id)
        if role not in self.roles:
            self.tally.add(f"role {role!r} (from {attribute}) is not in the inventory; left out", where)
        elif extent is None:
            self.tally.add(f"MOVELINK {attribute} names an unknown id; that role was left out", where)
        elif not extent.consumes_text:
            self.tally.add(f"MOVELINK {attribute} is a non-consuming tag; that role was left out", where)
        elif self.sentence_of(extent.span) != sentence:
            self.tally.add("MOVELINK spans fall in different sentences; roles outside the trigger's sentence were "
                           "left out", f"{where} {extent.text!r}")
        else:
            self.use(extent)
            offset = self.sentences[sentence][0]
            return extent.span[0] - offset, extent.span[1] - offset
        return None

    def add_event(self, sentence: int, trigger: Extent, roles: tuple[RoleSpan, ...]) -> None:
        self.use(trigger)
        offset = self.sentences[sentence][0]
        span = (trigger.span[0] - offset, trigger.span[1] - offset)
        found = self.found.setdefault(sentence, [])
        found.append((span, len(found), Event(trigger=span, roles=roles)))

    def use(self, extent: Extent) -> None:
        """Mark an extent as imported; check its text and report its unmapped attributes once."""
        self.accounted.add(extent.id)
        if extent.id in self.checked:
            return
        self.checked.add(extent.id)
        covered = self.text[extent.span[0] : extent.span[1]]
        if extent.text != covered:
            self.tally.add("text attribute differs from the document text at the offsets; the offsets were kept",
                           f"{extent.id} text={extent.text!r} at offsets {covered!r}")
        self.report_attributes(extent.tag, extent.id, extent.attributes, _EXTENT_BOOKKEEPING)

    def report_attributes(self, tag: str, tag_id: str, attributes: dict[str, str], bookkeeping: set[str]) -> None:
        for name, value in attributes.items():
            if value.strip() and not _is_bookkeeping(name, bookkeeping):
                self.tally.add(f"attribute {tag}.{name} is not mapped; its value was not imported", f"{tag_id}={value!r}")

    def add_unlinked_motions(self) -> None:
        """Events without roles for MOTION tags that no imported MOVELINK used."""
        for extent in self.extents.values():
            if extent.tag != MOTION_TAG or extent.id in self.accounted or not extent.consumes_text:
                continue
            sentence = self.sentence_of(extent.span)
            if sentence is None:
                self.accounted.add(extent.id)
                self.tally.add("MOTION crosses a sentence boundary; not imported", f"{extent.id} {extent.text!r}")
            else:
                self.add_event(sentence, extent, ())

    def report_unused(self) -> None:
        for extent in self.extents.values():
            if extent.id not in self.accounted:
                self.tally.add(f"{extent.tag} tags that no imported event uses; not imported",
                               f"{extent.id} {extent.text!r}")

    def events_of(self, sentence: int) -> tuple[Event, ...]:
        """The sentence's events ordered by trigger, then by the order they were found."""
        return tuple(event for _, _, event in sorted(self.found.get(sentence, []), key=lambda f: (f[0], f[1])))
