"""Parsed sentences from a CoNLL-U file (the Universal Dependencies format) as spaCy Docs.

A CoNLL-U file lets a corpus bring its own tokens, tags and trees (a treebank,
a hand-corrected parse, another parser's output) instead of the spaCy pipeline's.
Each sentence becomes one :class:`~spacy.tokens.Doc`, keyed by its
``# sent_id``, which must equal the id of the record it stands for:

- words: the FORM of each syntactic word (lines whose ID is an integer);
- spaces: a space after each word unless its MISC has ``SpaceAfter=No``; the
  last word of a sentence never has one (as in UD's ``# text``);
- lemmas (LEMMA; ``_`` is read as unknown unless the word is ``_``), ``pos``
  (UPOS), ``tag`` (XPOS), ``morph`` (FEATS), heads (HEAD, 0 for the root,
  which becomes its own head; a word heading itself or a cycle of heads is
  refused) and ``dep`` (DEPREL, as written: UD labels stay UD labels).

Skipped on purpose:

- multiword-token ranges (``2-3  didn't``): the syntactic words (``did``,
  ``n't``) become the tokens, with no space between them and the range's
  ``SpaceAfter`` after the last one; when their forms do not spell the
  surface token (``del`` = ``de`` + ``el``) the text check below fails;
- empty nodes (``4.1``): they have no surface form and no basic head;
- the DEPS and other MISC columns.

A sentence with ``_`` as the HEAD of any word gets no tree at all (tokens,
tags and lemmas only). No named entities are read: CoNLL-U has no column for
them.

The syntax features, noun chunks and argument phrases read spaCy's English
labels (``prep``/``pobj``, ``dobj``, ``relcl``); a file in UD labels
(``case``/``obl``, ``obj``, ``acl:relcl``) loads fine but gives those features
less to work with, so train and predict on Docs labelled the same way.

The text of a Doc must equal its record's text character for character, or
gold spans would point at the wrong tokens: the ``# text`` comment (when
present) and the text rebuilt from the words and spaces are both compared with
the record's text, and the first difference is an error naming the file, the
sentence and the position.

>>> import spacy
>>> nlp = spacy.blank("en")
>>> docs = docs_for_records("parsed.conllu", records, nlp.vocab)  # doctest: +SKIP
>>> [t.dep_ for t in docs["demo-s001"]]  # "We didn't ride to Quillon."  # doctest: +SKIP
['nsubj', 'aux', 'advmod', 'root', 'case', 'obl', 'punct']
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Iterable

import conllu
from conllu.exceptions import ParseException
from spacy.parts_of_speech import IDS as UPOS_IDS
from spacy.tokens import Doc
from spacy.vocab import Vocab

from trainer.corpus.records import Record
from trainer.errors import CorpusError, UnreadableInputError

_SHOWN = 20  # characters shown from the first difference on
_FIELDS = ("id", "form", "lemma", "upos", "xpos", "feats", "head", "deprel", "deps", "misc")
_FORMAT_FIX = "ten tab-separated columns per word line, a blank line after each sentence"
UD_UPOS = ("ADJ", "ADP", "ADV", "AUX", "CCONJ", "DET", "INTJ", "NOUN", "NUM", "PART", "PRON", "PROPN", "PUNCT",
           "SCONJ", "SYM", "VERB", "X")


@dataclass(frozen=True)
class ConlluSentence:
    """One CoNLL-U sentence: its id, its ``# text`` comment (None if absent) and its Doc."""

    sent_id: str
    text: str | None
    doc: Doc


def first_difference(a: str, b: str) -> int | None:
    """Index of the first character where two strings differ (the shorter length if one is a prefix), or None."""
    for i, (x, y) in enumerate(zip(a, b)):
        if x != y:
            return i
    return None if len(a) == len(b) else min(len(a), len(b))


def _text_error(path: Path | str, sent_id: str, what: str, found: str, expected: str, against: str) -> CorpusError:
    at = first_difference(found, expected)
    return CorpusError(
        f"{path}: sentence '{sent_id}': {what} differs from {against} at character {at}: "
        f"{against} has {expected[at:at + _SHOWN]!r}, the CoNLL-U has {found[at:at + _SHOWN]!r}",
        "make '# text' and the word forms with SpaceAfter=No spell the record's text exactly, "
        "or remove the sentence from the CoNLL-U file so the record is parsed by the pipeline",
    )


def sentence_to_doc(sentence: conllu.TokenList, vocab: Vocab, *, path: Path | str = "<conllu>") -> Doc:
    """A Doc from one parsed CoNLL-U sentence (multiword ranges and empty nodes skipped, see the module doc)."""
    sent_id = sentence.metadata.get("sent_id", "?")
    where = f"{path}: sentence '{sent_id}'"
    for token in sentence:
        if len(token) < len(_FIELDS):
            raise UnreadableInputError(f"{where}: the line of word {token['id']} has {len(token)} columns, not 10",
                                       _FORMAT_FIX)
    words = [t for t in sentence if isinstance(t["id"], int)]
    if not words:
        raise CorpusError(f"{where}: no words", "give each sentence at least one word line")
    position = {t["id"]: i for i, t in enumerate(words)}
    spaces = [not _space_after_no(t) for t in words]
    for token in sentence:
        span = token["id"]
        if isinstance(span, tuple) and len(span) == 3 and span[1] == "-":
            inside = [position[k] for k in range(span[0], span[2] + 1) if k in position]
            for i in inside[:-1]:
                spaces[i] = False
            if inside:
                spaces[inside[-1]] = not _space_after_no(token)
    spaces[-1] = False

    pos = [_given(t["upos"]) for t in words]
    for token, upos in zip(words, pos):
        if upos not in UPOS_IDS:
            raise CorpusError(
                f"{where}: word {token['id']} has UPOS {upos!r}, not a Universal Dependencies tag",
                f"use one of: {', '.join(UD_UPOS)}, or _ when unknown",
            )
    heads: list[int] | None = None
    deps: list[str | None] | None = None
    if all(t["head"] is not None for t in words):
        heads, deps = [], []
        for i, token in enumerate(words):
            head = token["head"]
            if head != 0 and head not in position:
                raise CorpusError(f"{where}: word {token['id']} has HEAD {head}, which is not a word of the sentence",
                                  "fix the HEAD column (0 for the root)")
            if head == token["id"]:
                raise CorpusError(f"{where}: word {token['id']} has itself as HEAD",
                                  "fix the HEAD column (0 for the root)")
            heads.append(i if head == 0 else position[head])
            deps.append(_given(token["deprel"]) or None)  # None: label missing
        cycle = _cycle(heads)
        if cycle:
            raise CorpusError(f"{where}: the HEAD column makes a cycle: words "
                              f"{' -> '.join(str(words[i]['id']) for i in cycle)}",
                              "fix the HEAD column: every word's chain of heads must end at the root (HEAD 0)")
    return Doc(
        vocab,
        words=[t["form"] for t in words],
        spaces=spaces,
        lemmas=[_lemma(t) for t in words],
        pos=pos,
        tags=[_given(t["xpos"]) for t in words],
        morphs=[_feats(t["feats"]) for t in words],
        heads=heads,
        deps=deps,
    )


def _cycle(heads: list[int]) -> list[int]:
    """Word positions round the first cycle of heads that never reaches a root (a word that heads itself), else [].

    Each word is walked from once (linear in the sentence's length, however deep its tree).
    """
    reaches_root = [False] * len(heads)
    for start in range(len(heads)):
        path: dict[int, int] = {}  # word -> its place on the walk from start (insertion order is the walk)
        i = start
        while not reaches_root[i] and i not in path:
            path[i] = len(path)
            if heads[i] == i:
                break
            i = heads[i]
        else:
            if i in path:
                return list(path)[path[i]:] + [i]
        for j in path:
            reaches_root[j] = True
    return []


def _given(value: str | None) -> str:
    """A column's value, '' for '_' (unknown)."""
    return "" if value in (None, "_") else value


def _lemma(token: conllu.Token) -> str:
    """The LEMMA column; '_' means unknown unless the word itself is '_'."""
    lemma = token["lemma"] or ""
    return "" if lemma == "_" and token["form"] != "_" else lemma


def _space_after_no(token: conllu.Token) -> bool:
    misc = token.get("misc") or {}
    return misc.get("SpaceAfter") == "No"


def _feats(feats: dict[str, str] | None) -> str:
    return "|".join(f"{k}={v}" for k, v in sorted(feats.items())) if feats else ""


def read_conllu(path: Path | str, vocab: Vocab) -> dict[str, ConlluSentence]:
    """All sentences of a CoNLL-U file by ``# sent_id``; each must have a unique sent_id.

    Raises :class:`UnreadableInputError` when the file cannot be read or parsed,
    :class:`CorpusError` for a missing or repeated sent_id, a word line that
    cannot become a token, or a ``# text`` that the words and spaces do not spell.
    """
    sentences: dict[str, ConlluSentence] = {}
    try:
        with open(path, encoding="utf-8") as handle:
            for number, sentence in enumerate(conllu.parse_incr(handle), start=1):
                sent_id = sentence.metadata.get("sent_id")
                if not sent_id:
                    raise CorpusError(f"{path}: sentence {number} has no '# sent_id' comment",
                                      "give every sentence '# sent_id = <record id>'")
                if sent_id in sentences:
                    raise CorpusError(f"{path}: sent_id '{sent_id}' occurs more than once",
                                      "keep one sentence per record id")
                doc = sentence_to_doc(sentence, vocab, path=path)
                text = sentence.metadata.get("text")
                if text is not None and doc.text != text:
                    raise _text_error(path, sent_id, "the text rebuilt from the words", doc.text, text, "'# text'")
                sentences[sent_id] = ConlluSentence(sent_id, text, doc)
    except FileNotFoundError:
        raise UnreadableInputError(f"{path}: no such CoNLL-U file", "fix [parser] conllu or leave it empty") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise UnreadableInputError(f"{path}: cannot read the CoNLL-U file ({exc})", "save it as UTF-8 text") from None
    except ParseException as exc:
        raise UnreadableInputError(f"{path}: not valid CoNLL-U ({exc})", _FORMAT_FIX) from None
    return sentences


def docs_for_records(path: Path | str, records: Iterable[Record], vocab: Vocab) -> dict[str, Doc]:
    """Docs of the CoNLL-U file for the records whose id it holds, checked against their texts.

    Sentences for other ids are ignored; records the file lacks are absent from the result.
    """
    sentences = read_conllu(path, vocab)
    docs: dict[str, Doc] = {}
    for record in records:
        sentence = sentences.get(record.id)
        if sentence is None:
            continue
        against = f"record '{record.id}'"
        if sentence.text is not None and sentence.text != record.text:
            raise _text_error(path, record.id, "'# text'", sentence.text, record.text, against)
        if sentence.doc.text != record.text:
            raise _text_error(path, record.id, "the text rebuilt from the words", sentence.doc.text, record.text,
                              against)
        docs[record.id] = sentence.doc
    return docs
