"""Candidate argument phrases in a sentence (the noun phrase itself: :func:`trainer.features.rule_cues.phrase_span`).

Spans follow the annotation guide: the noun phrase with its determiners and
adjectives and an ``of`` complement naming the place, without the governing
preposition, trailing relative clauses, appositions or punctuation.
"""

from __future__ import annotations

from spacy.tokens import Doc, Span

from trainer.features.gazetteer import Gazetteer
from trainer.features.rule_cues import phrase_span

PRONOUN_TAGS = {"PRP", "PRP$"}


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
