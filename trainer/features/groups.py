"""Named feature groups: small functions from a parsed sentence to one feature dict per token.

Values are strings, booleans or numbers, the shape CRFsuite and scikit-learn's
DictVectorizer both take. Every group reads only the parse and the lexicons
(through a :class:`Sentence`), so training and prediction compute features the
same way. The table in :mod:`trainer.features.registry` names the groups and
says which function makes each.

This module loads no spaCy (types only), so the config can read the table.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Sequence

from trainer.features.lexicons import Lexicons, motion_reading

if TYPE_CHECKING:
    from spacy.tokens import Doc, Token

    from trainer.config import FeatureConfig
    from trainer.features.gazetteer import Gazetteer
    from trainer.features.rule_cues import RuleRole, RuleTrigger  # rule_cues imports this module

Features = dict[str, str | float | bool]
# Keys the context group copies from neighbouring tokens (absent keys, e.g. of a group switched off, are skipped).
CONTEXT_KEYS = ("lower", "lemma", "pos", "shape", "dep", "gov_prep", "verb_class", "gazetteer", "ent_type",
                "rule_trigger", "wn_first")


@dataclass
class Sentence:
    """What a feature group reads: one parsed sentence, the feature settings, the word lists and the gazetteer.

    ``features`` holds, per token, what the groups applied before gave (the
    context group copies its neighbours' from it). The per-sentence values
    several groups share are computed once, on first use.
    """

    doc: Doc
    config: FeatureConfig
    lexicons: Lexicons
    gazetteer: Gazetteer | None = None
    features: list[Features] = field(default_factory=list)

    @functools.cached_property
    def gazetteer_tags(self) -> list[str]:
        """Each token's BIO tag from the gazetteer (all ``O`` without one)."""
        return self.gazetteer.tags(self.doc) if self.gazetteer else ["O"] * len(self.doc)

    @functools.cached_property
    def governing(self) -> list[str]:
        """Each token's governing preposition (:func:`governing_preposition`)."""
        return [governing_preposition(token) for token in self.doc]

_PP_INNER_DEPS = {"pobj", "compound", "amod", "det", "poss", "nummod", "nmod", "appos", "conj", "cc", "case", "quantmod", "flat"}
_MAX_PREP_WORDS = 4
DISTANCE_BUCKETS = (1, 2, 3, 5, 8, 13)


def shape(text: str) -> str:
    """Word shape with runs collapsed: 'Caddow' -> 'Xx', 'd-2' -> 'x-d'."""
    out: list[str] = []
    for ch in text:
        code = "X" if ch.isupper() else "x" if ch.isalpha() else "d" if ch.isdigit() else ch
        if not out or out[-1] != code:
            out.append(code)
    return "".join(out)


def lexical(token: Token, affix_length: int = 3) -> Features:
    """Word form, lemma, shape, affixes, case and digits."""
    lower = token.lower_
    return {
        "lower": lower,
        "lemma": token.lemma_.lower(),
        "shape": shape(token.text),
        "prefix": lower[:affix_length],
        "suffix": lower[-affix_length:],
        "is_title": token.is_title,
        "is_upper": token.is_upper,
        "has_digit": any(c.isdigit() for c in token.text),
        "is_punct": token.is_punct,
    }


def tagging(token: Token) -> Features:
    """Coarse and fine part of speech, named-entity type and IOB from the pipeline."""
    return {"pos": token.pos_, "tag": token.tag_, "ent_type": token.ent_type_ or "-", "ent_iob": token.ent_iob_ or "O"}


def governing_preposition(token: Token) -> str:
    """The preposition a token's phrase hangs from ('through' for 'Gap' in 'through the Sallow Gap').

    Multiword prepositions are joined ('out of', 'by way of'); '' when the token
    is not inside a prepositional phrase.
    """
    node = token
    while node.dep_ in _PP_INNER_DEPS and node.dep_ != "pobj" and node.head.i != node.i:
        node = node.head
    if node.dep_ != "pobj" or node.head.pos_ not in {"ADP", "ADV", "SCONJ"}:
        return ""
    words = [node.head]
    # Multiword prepositions chain leftwards through adjacent heads: 'out of', 'by way of'.
    while len(words) < _MAX_PREP_WORDS and _extends_preposition(words[-1]):
        words.append(words[-1].head)
    # A noun is only ever inside one ('way' in 'by way of'), never its first word ('island of Tarn' -> 'of').
    while words[-1].pos_ == "NOUN":
        words.pop()
    return " ".join(t.lower_ for t in sorted(words, key=lambda t: t.i))


def _extends_preposition(word: Token) -> bool:
    head = word.head
    return word.dep_ in {"prep", "pobj"} and head.i == word.i - 1 and head.pos_ in {"ADP", "ADV", "NOUN"}


def depth(token: Token) -> int:
    """Steps from the token to the root of its sentence."""
    steps = 0
    # spaCy makes a new Token object on every access, so compare positions, not identity.
    while token.head.i != token.i and steps < 50:
        token, steps = token.head, steps + 1
    return steps


def syntax(token: Token, gov: str | None = None) -> Features:
    """Dependency label, head, governing preposition, children's prepositions, depth, voice.

    ``gov`` is the token's governing preposition when the caller has it already.
    """
    gov = governing_preposition(token) if gov is None else gov
    features: Features = {
        "dep": token.dep_,
        "head_lemma": token.head.lemma_.lower(),
        "head_pos": token.head.pos_,
        "head_dep": f"{token.dep_}<{token.head.pos_}",
        "gov_prep": gov or "-",
        "depth": str(min(depth(token), 6)),
        "passive_subject": token.dep_ in {"nsubjpass", "csubjpass"},
        "passive_verb": any(c.dep_ == "auxpass" for c in token.children),
    }
    for child in token.children:
        if child.dep_ in {"prep", "agent", "dative"}:
            features[f"child_prep={child.lower_}"] = True
        elif child.dep_ in {"prt", "advmod"}:
            features[f"child_{child.dep_}={child.lower_}"] = True
    return features


def preposition_cue(doc: Doc, i: int, lexicons: Lexicons) -> str:
    """The role cued by a (possibly multiword) preposition starting at or ending on token i."""
    if doc[i].lower_ not in lexicons.preposition_words:
        return ""
    for length in range(_MAX_PREP_WORDS, 0, -1):
        for start in range(i - length + 1, i + 1):
            if start < 0 or start + length > len(doc):
                continue
            role = lexicons.preposition_role(" ".join(t.lower_ for t in doc[start : start + length]))
            if role and doc[start].pos_ in {"ADP", "ADV", "SCONJ", "PART"}:
                return role
    return ""


def lexicon(token: Token, lexicons: Lexicons, gazetteer_tag: str = "O", gov: str | None = None) -> Features:
    """Motion-verb or motion-noun class, preposition cues, direction words, gazetteer membership.

    A preposition gets the role it cues (``prep_cue``); a word inside a
    prepositional phrase gets the role its governing preposition cues
    (``gov_prep_cue``; pass ``gov`` when already computed).
    """
    features: Features = {"gazetteer": gazetteer_tag, "direction": token.lower_ in lexicons.directions}
    if token.pos_ in {"VERB", "AUX", "NOUN"}:
        reading = motion_reading(token, lexicons)
        features["noun_class" if token.pos_ == "NOUN" else "verb_class"] = reading[1] if reading else "-"
    elif token.pos_ in {"ADP", "ADV", "SCONJ", "PART"}:
        cue = preposition_cue(token.doc, token.i, lexicons)
        if cue:
            features["prep_cue"] = cue
    gov = governing_preposition(token) if gov is None else gov
    if gov:
        features["gov_prep_cue"] = lexicons.preposition_role(gov) or "-"
    return features


def context(per_token: list[Features], i: int, window: int, keys: tuple[str, ...]) -> Features:
    """Selected features of the neighbouring tokens, prefixed by their offset ('-1:lower')."""
    out: Features = {}
    n = len(per_token)
    for offset, edge, named in _context_names(window, keys):
        j = i + offset
        if 0 <= j < n:
            neighbour = per_token[j]
            for key, name in named:
                if key in neighbour:
                    out[name] = neighbour[key]
        else:
            out[edge] = True
    if i == 0:
        out["BOS"] = True
    if i == n - 1:
        out["EOS"] = True
    return out


@functools.lru_cache(maxsize=64)
def _context_names(window: int, keys: tuple[str, ...]) -> tuple[tuple[int, str, tuple[tuple[str, str], ...]], ...]:
    """Per offset: the offset, its edge feature name and (key, '-1:key') pairs, built once per window and keys."""
    return tuple(
        (offset, f"{offset:+d}:edge", tuple((key, f"{offset:+d}:{key}") for key in keys))
        for offset in range(-window, window + 1)
        if offset != 0
    )


def bucket(distance: int) -> str:
    """A coarse distance label so the model generalises over exact positions."""
    for limit in DISTANCE_BUCKETS:
        if distance <= limit:
            return f"<={limit}"
    return f">{DISTANCE_BUCKETS[-1]}"


def dependency_path(token: Token, target: Token) -> tuple[str, int]:
    """Labels from ``token`` up to the common ancestor and down to ``target``.

    Written ``pobj↑prep↑↓`` style: ``label↑`` for each step up from the token,
    ``↓label`` for each step down to the target. Returns the path and its length.
    """
    path, length, _ = _path_to(token, _chain(target))
    return path, length


def _chain(token: Token) -> list[Token]:
    """The token and its ancestors, nearest first."""
    return [token, *token.ancestors]


def _path_to(token: Token, target_chain: list[Token]) -> tuple[str, int, bool]:
    """:func:`dependency_path` to ``target_chain[0]``, given that token's chain (shared across tokens).

    The third item tells whether the target is the token or one of its ancestors,
    i.e. whether the token lies in the target's subtree.
    """
    up = _chain(token)
    up_index = {t.i: k for k, t in enumerate(up)}
    down_length = next((k for k, t in enumerate(target_chain) if t.i in up_index), None)
    if down_length is None:
        return "none", 0, False
    up_steps = [t.dep_ + "↑" for t in up[: up_index[target_chain[down_length].i]]]
    down_steps = ["↓" + t.dep_ for t in reversed(target_chain[:down_length])]
    return "".join(up_steps + down_steps) or "self", len(up_steps) + len(down_steps), down_length == 0


@dataclass(frozen=True)
class _Trigger:
    """What the trigger-relative features need of one trigger, computed once for all tokens."""

    first: int
    end: int
    head: Token
    chain: list[Token]
    lemma: str
    trigger_class: str
    verb_class: str


def _trigger(doc: Doc, trigger: tuple[int, int], lexicons: Lexicons) -> _Trigger:
    first, end = trigger
    head = doc[first:end].root
    lemma = head.lemma_.lower()
    reading = motion_reading(head, lexicons)
    verb_class = reading[1] if reading and head.pos_ in {"VERB", "AUX"} else lexicons.verb_class(lemma)
    trigger_class = verb_class or (reading[1] if reading else lexicons.noun_class(lemma))
    return _Trigger(first, end, head, _chain(head), lemma, trigger_class or "-", verb_class or "-")


def _relative(token: Token, trigger: _Trigger) -> Features:
    first, end = trigger.first, trigger.end
    if first <= token.i < end:
        side, distance = "in", 0
    elif token.i < first:
        side, distance = "before", first - token.i
    else:
        side, distance = "after", token.i - end + 1
    path, length, in_subtree = _path_to(token, trigger.chain)
    return {
        "t_side": side,
        "t_distance": bucket(distance),
        "t_side_distance": f"{side}{bucket(distance)}",
        "t_path": path,
        "t_path_length": str(min(length, 6)),
        "t_path_dep": f"{path}|{token.dep_}",
        "t_in_subtree": in_subtree,
        "t_lemma": trigger.lemma,
        "t_class": trigger.trigger_class,
        "t_gov_prep": f"{governing_preposition(token) or '-'}|{trigger.verb_class}",
    }


def trigger_relative(token: Token, trigger: tuple[int, int], lexicons: Lexicons) -> Features:
    """Where the token stands relative to one trigger: side, distance, dependency path, subtree."""
    return _relative(token, _trigger(token.doc, trigger, lexicons))


def trigger_relative_all(doc: Doc, trigger: tuple[int, int], lexicons: Lexicons) -> list[Features]:
    """:func:`trigger_relative` for every token of ``doc``, with the trigger's own parts computed once."""
    info = _trigger(doc, trigger, lexicons)
    return [_relative(token, info) for token in doc]


def rule_trigger_tags(doc: Doc, triggers: Sequence["RuleTrigger"],
                      arguments: Sequence[Sequence["RuleRole"]]) -> list[Features]:
    """The rules' trigger decisions as token features (stacking), for ``rules`` group.

    ``rule_trigger`` is the BIO tag of the rule finder's kept triggers; a lexicon
    trigger the rules dropped gets ``rule_blocked`` (``negated``, ``modal``,
    ``not_yet``); every lexicon trigger gets ``rule_class`` (its motion class).
    ``arguments`` holds, per token, the roles the rule patterns would give it
    as a trigger (for verbs; empty for other tokens): ``rule_arg=<role>`` for
    each source, path or destination found, and ``rule_args`` for their set,
    so a verb missing from the lexicons still shows spatial arguments.
    """
    out: list[Features] = [{"rule_trigger": "O"} for _ in doc]
    for features, found in zip(out, arguments):
        roles = sorted({r.role for r in found if r.role != "mover"})
        if roles:
            features["rule_args"] = "+".join(roles)
            features.update({f"rule_arg={role}": True for role in roles})
    for trigger in triggers:
        for i in range(trigger.first, trigger.end):
            features = out[i]
            features["rule_class"] = trigger.motion_class
            if trigger.blocked:
                features["rule_blocked"] = trigger.blocked
            else:
                features["rule_trigger"] = "B" if i == trigger.first else "I"
    return out


def rule_role_tags(doc: Doc, roles: Sequence["RuleRole"]) -> list[Features]:
    """The roles the rules give the current trigger, as token features (stacking), for ``rules`` group.

    ``rule_role`` is a BIO tag with the role (``B-source``); ``rule_cue`` names
    what gave it (``subject``, ``object:departure``, ``prep:from``, ``possessor``).
    Where two rule spans overlap, the first one listed wins.
    """
    out: list[Features] = [{"rule_role": "O"} for _ in doc]
    for role in roles:
        if any(out[i]["rule_role"] != "O" for i in range(role.first, role.end)):
            continue
        for i in range(role.first, role.end):
            out[i]["rule_role"] = f"{'B' if i == role.first else 'I'}-{role.role}"
            out[i]["rule_cue"] = role.cue
    return out


# The groups as the registry calls them: one feature dict per token of the sentence
# (or, for the trigger-relative ones, per token for one trigger).

def lexical_group(sentence: Sentence) -> list[Features]:
    """:func:`lexical` with the configured affix length."""
    return [lexical(token, sentence.config.affix_length) for token in sentence.doc]


def tagging_group(sentence: Sentence) -> list[Features]:
    """:func:`tagging` of every token."""
    return [tagging(token) for token in sentence.doc]


def syntax_group(sentence: Sentence) -> list[Features]:
    """:func:`syntax` of every token."""
    return [syntax(token, gov) for token, gov in zip(sentence.doc, sentence.governing)]


def lexicon_group(sentence: Sentence) -> list[Features]:
    """:func:`lexicon` of every token, with its gazetteer tag."""
    return [lexicon(token, sentence.lexicons, tag, gov)
            for token, tag, gov in zip(sentence.doc, sentence.gazetteer_tags, sentence.governing)]


def context_group(sentence: Sentence) -> list[Features]:
    """:func:`context`: the :data:`CONTEXT_KEYS` of the neighbours within the configured window."""
    window = sentence.config.window
    return [context(sentence.features, i, window, CONTEXT_KEYS) for i in range(len(sentence.doc))]


def rules_group(sentence: Sentence) -> list[Features]:
    """:func:`rule_trigger_tags`: the rule baseline's trigger decisions and each verb's spatial arguments."""
    from trainer.features.rule_cues import rule_roles, rule_triggers  # loads spaCy, and imports this module

    doc, lexicons = sentence.doc, sentence.lexicons
    arguments = [rule_roles(doc, (t.i, t.i + 1), lexicons) if t.pos_ == "VERB" else [] for t in doc]
    return rule_trigger_tags(doc, rule_triggers(doc, lexicons), arguments)


def trigger_relative_group(sentence: Sentence, trigger: tuple[int, int]) -> list[Features]:
    """:func:`trigger_relative_all` for one trigger."""
    return trigger_relative_all(sentence.doc, trigger, sentence.lexicons)


def rules_trigger_group(sentence: Sentence, trigger: tuple[int, int]) -> list[Features]:
    """:func:`rule_role_tags`: the roles the rules give this trigger."""
    from trainer.features.rule_cues import rule_roles

    return rule_role_tags(sentence.doc, rule_roles(sentence.doc, trigger, sentence.lexicons))
