"""The feature groups' list-based path (``groups.Tree``) against straightforward per-Token code, on parsed prose.

The reference functions below read the parse the plain spaCy way (``token.head``,
``token.children``, ``token.ancestors``, ``doc[a:b]``). Every feature must come
out the same, key order and value type included (``True`` and ``1`` make
different columns for DictVectorizer and different attributes for CRFsuite).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from spacy.tokens import Doc, Token

from tests.conftest import DEMO, REPO

from trainer.config import FeatureConfig
from trainer.corpus.reader import read_corpus
from trainer.features import groups
from trainer.features.lexicons import Lexicons, load_lexicons, motion_reading

LEXICONS: Lexicons = load_lexicons()
SOURCES = [DEMO / "train" / "delacott-survey-1.jsonl", DEMO / "train" / "brannick-log-2.jsonl",
           REPO / "tests" / "external" / "real-prose" / "corpus" / "clark-journals.jsonl"]
PREPOSITION_POS = {"ADP", "ADV", "SCONJ", "PART"}


@pytest.fixture(scope="module")
def docs(nlp) -> list[Doc]:
    records = read_corpus([Path(p) for p in SOURCES]).records
    return list(nlp.pipe(r.text for r in records))


def typed(features: groups.Features) -> list[tuple[str, type, object]]:
    return [(key, type(value), value) for key, value in features.items()]


# --- the reference: each feature read through spaCy Tokens ------------------


def ref_governing(token: Token) -> str:
    node = token
    while node.dep_ in groups._PP_INNER_DEPS and node.dep_ != "pobj" and node.head.i != node.i:
        node = node.head
    if node.dep_ != "pobj" or node.head.pos_ not in {"ADP", "ADV", "SCONJ"}:
        return ""
    words = [node.head]
    while len(words) < 4 and words[-1].dep_ in {"prep", "pobj"} and words[-1].head.i == words[-1].i - 1 \
            and words[-1].head.pos_ in {"ADP", "ADV", "NOUN"}:
        words.append(words[-1].head)
    while words[-1].pos_ == "NOUN":
        words.pop()
    return " ".join(t.lower_ for t in sorted(words, key=lambda t: t.i))


def ref_depth(token: Token) -> int:
    steps = 0
    while token.head.i != token.i and steps < 50:
        token, steps = token.head, steps + 1
    return steps


def ref_lexical(token: Token) -> groups.Features:
    lower = token.lower_
    return {"lower": lower, "lemma": token.lemma_.lower(), "shape": groups.shape.__wrapped__(token.text),
            "prefix": lower[:3], "suffix": lower[-3:], "is_title": token.is_title, "is_upper": token.is_upper,
            "has_digit": any(c.isdigit() for c in token.text), "is_punct": token.is_punct}


def ref_syntax(token: Token) -> groups.Features:
    gov = ref_governing(token)
    features: groups.Features = {
        "dep": token.dep_, "head_lemma": token.head.lemma_.lower(), "head_pos": token.head.pos_,
        "head_dep": f"{token.dep_}<{token.head.pos_}", "gov_prep": gov or "-", "depth": str(min(ref_depth(token), 6)),
        "passive_subject": token.dep_ in {"nsubjpass", "csubjpass"},
        "passive_verb": any(c.dep_ == "auxpass" for c in token.children),
    }
    for child in token.children:
        if child.dep_ in {"prep", "agent", "dative"}:
            features[f"child_prep={child.lower_}"] = True
        elif child.dep_ in {"prt", "advmod"}:
            features[f"child_{child.dep_}={child.lower_}"] = True
    return features


def ref_preposition_cue(doc: Doc, i: int) -> str:
    if doc[i].lower_ not in LEXICONS.preposition_words:
        return ""
    for length in range(4, 0, -1):
        for start in range(max(i - length + 1, 0), min(i + 1, len(doc) - length + 1)):
            role = LEXICONS.preposition_role(" ".join(t.lower_ for t in doc[start : start + length]))
            if role and doc[start].pos_ in PREPOSITION_POS:
                return role
    return ""


def ref_lexicon(token: Token) -> groups.Features:
    features: groups.Features = {"gazetteer": "O", "direction": token.lower_ in LEXICONS.directions}
    if token.pos_ in {"VERB", "AUX", "NOUN"}:
        reading = motion_reading(token, LEXICONS)
        features["noun_class" if token.pos_ == "NOUN" else "verb_class"] = reading[1] if reading else "-"
    elif token.pos_ in PREPOSITION_POS:
        cue = ref_preposition_cue(token.doc, token.i)
        if cue:
            features["prep_cue"] = cue
    gov = ref_governing(token)
    if gov:
        features["gov_prep_cue"] = LEXICONS.preposition_role(gov) or "-"
    return features


def ref_path(token: Token, target: Token) -> tuple[str, int, bool]:
    up, down = [token, *token.ancestors], [target, *target.ancestors]
    up_index = {t.i: k for k, t in enumerate(up)}
    down_length = next((k for k, t in enumerate(down) if t.i in up_index), None)
    if down_length is None:
        return "none", 0, False
    steps = [t.dep_ + "↑" for t in up[: up_index[down[down_length].i]]]
    steps += ["↓" + t.dep_ for t in reversed(down[:down_length])]
    return "".join(steps) or "self", len(steps), down_length == 0


# --- the comparisons --------------------------------------------------------


def test_the_corpus_sample_has_what_the_comparisons_need(docs: list[Doc]) -> None:
    tokens = [t for doc in docs for t in doc]
    assert len(docs) > 150 and len(tokens) > 3000
    assert sum(1 for t in tokens if " " in ref_governing(t)) > 0  # multiword prepositions ('out of')
    assert sum(1 for t in tokens if ref_depth(t) > 6) > 0


def test_tree_lists_are_the_tokens_attributes(docs: list[Doc]) -> None:
    for doc in docs:
        tree = groups.parse_tree(doc)
        assert tree.heads == [t.head.i for t in doc]
        assert tree.children == [[c.i for c in t.children] for t in doc]
        assert tree.chains == [(t.i, *(a.i for a in t.ancestors)) for t in doc]
        assert (tree.lower, tree.lemma, tree.pos, tree.dep) == (
            [t.lower_ for t in doc], [t.lemma_.lower() for t in doc], [t.pos_ for t in doc], [t.dep_ for t in doc])


def test_token_groups_equal_the_per_token_reference(docs: list[Doc]) -> None:
    config = FeatureConfig(groups=["lexical", "syntax", "lexicon"])
    for doc in docs:
        sentence = groups.Sentence(doc, config, LEXICONS)
        assert [typed(f) for f in groups.lexical_group(sentence)] == [typed(ref_lexical(t)) for t in doc]
        assert [typed(f) for f in groups.syntax_group(sentence)] == [typed(ref_syntax(t)) for t in doc]
        assert [typed(f) for f in groups.lexicon_group(sentence)] == [typed(ref_lexicon(t)) for t in doc]
        assert [groups.preposition_cue(doc, i, LEXICONS) for i in range(len(doc))] == [
            ref_preposition_cue(doc, i) for i in range(len(doc))]


def test_trigger_paths_equal_the_per_token_reference(docs: list[Doc]) -> None:
    for doc in docs:
        for trigger in (t for t in doc if t.pos_ in {"VERB", "NOUN"}):
            relative = groups.trigger_relative_all(doc, (trigger.i, trigger.i + 1), LEXICONS)
            expected = [ref_path(t, trigger) for t in doc]
            assert [(f["t_path"], f["t_path_length"], f["t_in_subtree"]) for f in relative] == [
                (path, str(min(length, 6)), inside) for path, length, inside in expected]
            assert [f["t_gov_prep"].split("|")[0] for f in relative] == [ref_governing(t) or "-" for t in doc]
