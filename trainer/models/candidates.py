"""Argument phrases: the noun phrase around a token, and candidate phrases in a sentence.

Spans follow the annotation guide: the noun phrase with its determiners and
adjectives and an ``of`` complement naming the place, without the governing
preposition, trailing relative clauses, appositions or punctuation.
"""

from __future__ import annotations

from spacy.tokens import Doc, Span, Token

from trainer.features.gazetteer import Gazetteer

_CUT_DEPS = {"relcl", "appos", "punct", "acl", "advcl", "cc", "conj", "prep", "mark", "dep"}
PRONOUN_TAGS = {"PRP", "PRP$"}


def phrase_span(token: Token) -> tuple[int, int]:
    """Token range ``[first, end)`` of the noun phrase headed by ``token``.

    Keeps left modifiers and an ``of`` complement; cuts at relative clauses,
    appositions, coordinations, other prepositional phrases and punctuation.
    """
    first = token.i
    for child in token.lefts:
        if child.dep_ not in _CUT_DEPS:
            first = min(first, child.left_edge.i)
    end = token.i + 1
    for child in token.rights:
        if child.dep_ in _CUT_DEPS and not (child.dep_ == "prep" and child.lower_ == "of"):
            break
        end = max(end, child.right_edge.i + 1)
    while end - 1 > first and token.doc[end - 1].is_punct:
        end -= 1
    while first < token.i and token.doc[first].is_punct:
        first += 1
    return first, end


def candidate_phrases(doc: Doc, gazetteer: Gazetteer | None = None) -> list[tuple[int, int, str]]:
    """Candidate argument phrases ``(first, end, kind)``: noun phrases, proper-noun runs, pronouns, gazetteer names."""
    found: dict[tuple[int, int], str] = {}
    for chunk in _noun_chunks(doc):
        found.setdefault(phrase_span(chunk.root), "phrase")
        found.setdefault((chunk.start, chunk.end), "chunk")
    run_start = None
    for token in list(doc) + [None]:
        if token is not None and token.pos_ == "PROPN":
            run_start = token.i if run_start is None else run_start
            continue
        if run_start is not None:
            found.setdefault((run_start, token.i if token is not None else len(doc)), "proper")
            run_start = None
    for token in doc:
        if token.tag_ in PRONOUN_TAGS or token.pos_ == "PRON":
            found.setdefault((token.i, token.i + 1), "pronoun")
        elif token.pos_ in {"NOUN", "PROPN"} and token.dep_ in {"pobj", "dobj", "nsubj", "nsubjpass", "conj"}:
            found.setdefault(phrase_span(token), "phrase")
    if gazetteer is not None:
        for first, end in gazetteer.spans(doc):
            found.setdefault((first, end), "gazetteer")
    return sorted((first, end, kind) for (first, end), kind in found.items())


def _noun_chunks(doc: Doc) -> list[Span]:
    """spaCy's noun chunks, or none when the Doc has no dependency labels (spaCy error E029).

    That happens for Docs read from a CoNLL-U file without HEAD/DEPREL columns;
    candidates then come from the other kinds (proper-noun runs, pronouns,
    noun heads by their label, gazetteer names).
    """
    try:
        return list(doc.noun_chunks)
    except ValueError as exc:
        if "E029" not in str(exc):
            raise
        return []
