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
from weakref import WeakKeyDictionary

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


@dataclass(frozen=True)
class Tree:
    """One parsed doc as plain lists, one item per token, for index arithmetic instead of spaCy ``Token`` hops.

    spaCy makes a new ``Token`` object on every ``doc[i]``, ``token.head`` or
    ``token.children``; the features read these lists instead. ``heads[i]`` is
    the index of token i's head (i itself for a root or an unparsed doc),
    ``children[i]`` the indices of its children in order; ``lower``,
    ``lemma`` (lowercased), ``pos`` and ``dep`` hold each token's strings.
    Holds no spaCy object, so it can be kept beside its doc (:func:`parse_tree`).
    """

    lower: list[str]
    lemma: list[str]
    pos: list[str]
    dep: list[str]
    heads: list[int]
    children: list[list[int]]

    @classmethod
    def of(cls, doc: Doc) -> "Tree":
        """The lists of ``doc``'s tokens."""
        tokens = list(doc)
        heads = [token.head.i for token in tokens]
        children: list[list[int]] = [[] for _ in tokens]
        for i, head in enumerate(heads):
            if head != i:
                children[head].append(i)
        return cls([t.lower_ for t in tokens], [t.lemma_.lower() for t in tokens], [t.pos_ for t in tokens],
                   [t.dep_ for t in tokens], heads, children)

    @functools.cached_property
    def chains(self) -> list[tuple[int, ...]]:
        """Each token and its ancestors, nearest first (as ``[token, *token.ancestors]``)."""
        heads, out = self.heads, []
        for i in range(len(heads)):
            chain = [i]
            while heads[chain[-1]] != chain[-1] and len(chain) <= len(heads):
                chain.append(heads[chain[-1]])
            out.append(tuple(chain))
        return out

    @functools.cached_property
    def governing(self) -> list[str]:
        """Each token's governing preposition (:func:`governing_preposition`)."""
        return [_governing(self, i) for i in range(len(self.heads))]


# The tree of each live doc: the token features, every trigger's role features and the rules read the same parse.
# Kept beside the docs (a parse is not changed after it is made), not in Doc.user_data, so nothing of it is serialised.
_TREES: "WeakKeyDictionary[Doc, Tree]" = WeakKeyDictionary()


def parse_tree(doc: Doc) -> Tree:
    """The :class:`Tree` of ``doc``, made once while the doc lives."""
    tree = _TREES.get(doc)
    if tree is None or len(tree.heads) != len(doc):
        tree = _TREES[doc] = Tree.of(doc)
    return tree


@dataclass
class Sentence:
    """What a feature group reads: one parsed sentence, the feature settings, the word lists and the gazetteer.

    ``features`` holds, per token, what the groups applied before gave (the
    context group copies its neighbours' from it). The per-sentence values
    several groups share are computed once, on first use: the doc's tokens,
    its :class:`Tree` and each token's governing preposition.
    """

    doc: Doc
    config: FeatureConfig
    lexicons: Lexicons
    gazetteer: Gazetteer | None = None
    features: list[Features] = field(default_factory=list)

    @functools.cached_property
    def tokens(self) -> list[Token]:
        """The doc's tokens, made once for all groups."""
        return list(self.doc)

    @functools.cached_property
    def tree(self) -> Tree:
        """The doc's parse as lists (:func:`parse_tree`)."""
        return parse_tree(self.doc)

    @property
    def governing(self) -> list[str]:
        """Each token's governing preposition (:func:`governing_preposition`)."""
        return self.tree.governing

    @functools.cached_property
    def gazetteer_tags(self) -> list[str]:
        """Each token's BIO tag from the gazetteer (all ``O`` without one)."""
        return self.gazetteer.tags(self.doc) if self.gazetteer else ["O"] * len(self.doc)


_PP_INNER_DEPS = {"pobj", "compound", "amod", "det", "poss", "nummod", "nmod", "appos", "conj", "cc", "case", "quantmod", "flat"}
_MAX_PREP_WORDS = 4
DISTANCE_BUCKETS = (1, 2, 3, 5, 8, 13)


@functools.lru_cache(maxsize=1 << 16)
def shape(text: str) -> str:
    """Word shape with runs collapsed: 'Caddow' -> 'Xx', 'd-2' -> 'x-d' (remembered per word form)."""
    out: list[str] = []
    for ch in text:
        code = "X" if ch.isupper() else "x" if ch.isalpha() else "d" if ch.isdigit() else ch
        if not out or out[-1] != code:
            out.append(code)
    return "".join(out)


def lexical(token: Token, affix_length: int = 3) -> Features:
    """Word form, lemma, shape, affixes, case and digits."""
    lower, word_shape = token.lower_, shape(token.text)
    return {
        "lower": lower,
        "lemma": token.lemma_.lower(),
        "shape": word_shape,
        "prefix": lower[:affix_length],
        "suffix": lower[-affix_length:],
        "is_title": token.is_title,
        "is_upper": token.is_upper,
        # A digit is the only character the shape writes as 'd' (a letter 'd' is 'x').
        "has_digit": "d" in word_shape,
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
    return parse_tree(token.doc).governing[token.i]


def _governing(tree: Tree, i: int) -> str:
    """:func:`governing_preposition` of token i."""
    dep, heads, pos = tree.dep, tree.heads, tree.pos
    node = i
    while dep[node] in _PP_INNER_DEPS and dep[node] != "pobj" and heads[node] != node:
        node = heads[node]
    if dep[node] != "pobj" or pos[heads[node]] not in {"ADP", "ADV", "SCONJ"}:
        return ""
    words = [heads[node]]
    # Multiword prepositions chain leftwards through adjacent heads: 'out of', 'by way of'.
    while len(words) < _MAX_PREP_WORDS and _extends_preposition(tree, words[-1]):
        words.append(heads[words[-1]])
    # A noun is only ever inside one ('way' in 'by way of'), never its first word ('island of Tarn' -> 'of').
    while pos[words[-1]] == "NOUN":
        words.pop()
    return " ".join(tree.lower[word] for word in sorted(words))


def _extends_preposition(tree: Tree, word: int) -> bool:
    head = tree.heads[word]
    return tree.dep[word] in {"prep", "pobj"} and head == word - 1 and tree.pos[head] in {"ADP", "ADV", "NOUN"}


def depth(token: Token) -> int:
    """Steps from the token to the root of its sentence."""
    return _depth(parse_tree(token.doc), token.i)


def _depth(tree: Tree, i: int) -> int:
    heads, steps = tree.heads, 0
    while heads[i] != i and steps < 50:
        i, steps = heads[i], steps + 1
    return steps


def syntax(token: Token, gov: str | None = None) -> Features:
    """Dependency label, head, governing preposition, children's prepositions, depth, voice.

    ``gov`` is the token's governing preposition when the caller has it already.
    """
    tree = parse_tree(token.doc)
    return _syntax(tree, token.i, tree.governing[token.i] if gov is None else gov)


def _syntax(tree: Tree, i: int, gov: str) -> Features:
    """:func:`syntax` of token i, given its governing preposition."""
    dep, head = tree.dep[i], tree.heads[i]
    children = tree.children[i]
    features: Features = {
        "dep": dep,
        "head_lemma": tree.lemma[head],
        "head_pos": tree.pos[head],
        "head_dep": f"{dep}<{tree.pos[head]}",
        "gov_prep": gov or "-",
        "depth": str(min(_depth(tree, i), 6)),
        "passive_subject": dep in {"nsubjpass", "csubjpass"},
        "passive_verb": any(tree.dep[c] == "auxpass" for c in children),
    }
    for child in children:
        child_dep = tree.dep[child]
        if child_dep in {"prep", "agent", "dative"}:
            features[f"child_prep={tree.lower[child]}"] = True
        elif child_dep in {"prt", "advmod"}:
            features[f"child_{child_dep}={tree.lower[child]}"] = True
    return features


def preposition_cue(doc: Doc, i: int, lexicons: Lexicons) -> str:
    """The role cued by a (possibly multiword) preposition starting at or ending on token i."""
    return _preposition_cue(parse_tree(doc), i, lexicons)


def _preposition_cue(tree: Tree, i: int, lexicons: Lexicons) -> str:
    lower = tree.lower
    if lower[i] not in lexicons.preposition_words:
        return ""
    for length in range(_MAX_PREP_WORDS, 0, -1):
        for start in range(i - length + 1, i + 1):
            if start < 0 or start + length > len(lower):
                continue
            role = lexicons.preposition_role(" ".join(lower[start : start + length]))
            if role and tree.pos[start] in {"ADP", "ADV", "SCONJ", "PART"}:
                return role
    return ""


def lexicon(token: Token, lexicons: Lexicons, gazetteer_tag: str = "O", gov: str | None = None) -> Features:
    """Motion-verb or motion-noun class, preposition cues, direction words, gazetteer membership.

    A preposition gets the role it cues (``prep_cue``); a word inside a
    prepositional phrase gets the role its governing preposition cues
    (``gov_prep_cue``; pass ``gov`` when already computed).
    """
    tree = parse_tree(token.doc)
    return _lexicon(token, tree, lexicons, gazetteer_tag, tree.governing[token.i] if gov is None else gov)


def _lexicon(token: Token, tree: Tree, lexicons: Lexicons, gazetteer_tag: str, gov: str) -> Features:
    """:func:`lexicon` of a token of ``tree``'s doc, given its governing preposition."""
    pos = tree.pos[token.i]
    features: Features = {"gazetteer": gazetteer_tag, "direction": tree.lower[token.i] in lexicons.directions}
    if pos in {"VERB", "AUX", "NOUN"}:
        reading = motion_reading(token, lexicons)
        features["noun_class" if pos == "NOUN" else "verb_class"] = reading[1] if reading else "-"
    elif pos in {"ADP", "ADV", "SCONJ", "PART"}:
        cue = _preposition_cue(tree, token.i, lexicons)
        if cue:
            features["prep_cue"] = cue
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
    tree = parse_tree(token.doc)
    path, length, _ = _path_to(tree, token.i, tree.chains[target.i])
    return path, length


def _path_to(tree: Tree, i: int, target_chain: tuple[int, ...]) -> tuple[str, int, bool]:
    """:func:`dependency_path` from token i to ``target_chain[0]``, given that token's chain (shared across tokens).

    The third item tells whether the target is the token or one of its ancestors,
    i.e. whether the token lies in the target's subtree.
    """
    up = tree.chains[i]
    up_index = {t: k for k, t in enumerate(up)}
    down_length = next((k for k, t in enumerate(target_chain) if t in up_index), None)
    if down_length is None:
        return "none", 0, False
    dep = tree.dep
    up_steps = [dep[t] + "↑" for t in up[: up_index[target_chain[down_length]]]]
    down_steps = ["↓" + dep[t] for t in reversed(target_chain[:down_length])]
    return "".join(up_steps + down_steps) or "self", len(up_steps) + len(down_steps), down_length == 0


@dataclass(frozen=True)
class _Trigger:
    """What the trigger-relative features need of one trigger, computed once for all tokens."""

    first: int
    end: int
    chain: tuple[int, ...]
    lemma: str
    trigger_class: str
    verb_class: str


def _trigger(doc: Doc, tree: Tree, trigger: tuple[int, int], lexicons: Lexicons) -> _Trigger:
    first, end = trigger
    head = doc[first:end].root
    lemma = head.lemma_.lower()
    reading = motion_reading(head, lexicons)
    verb_class = reading[1] if reading and head.pos_ in {"VERB", "AUX"} else lexicons.verb_class(lemma)
    trigger_class = verb_class or (reading[1] if reading else lexicons.noun_class(lemma))
    return _Trigger(first, end, tree.chains[head.i], lemma, trigger_class or "-", verb_class or "-")


def _relative(tree: Tree, i: int, trigger: _Trigger) -> Features:
    first, end = trigger.first, trigger.end
    if first <= i < end:
        side, distance = "in", 0
    elif i < first:
        side, distance = "before", first - i
    else:
        side, distance = "after", i - end + 1
    path, length, in_subtree = _path_to(tree, i, trigger.chain)
    return {
        "t_side": side,
        "t_distance": bucket(distance),
        "t_side_distance": f"{side}{bucket(distance)}",
        "t_path": path,
        "t_path_length": str(min(length, 6)),
        "t_path_dep": f"{path}|{tree.dep[i]}",
        "t_in_subtree": in_subtree,
        "t_lemma": trigger.lemma,
        "t_class": trigger.trigger_class,
        "t_gov_prep": f"{tree.governing[i] or '-'}|{trigger.verb_class}",
    }


def trigger_relative(token: Token, trigger: tuple[int, int], lexicons: Lexicons) -> Features:
    """Where the token stands relative to one trigger: side, distance, dependency path, subtree."""
    tree = parse_tree(token.doc)
    return _relative(tree, token.i, _trigger(token.doc, tree, trigger, lexicons))


def trigger_relative_all(doc: Doc, trigger: tuple[int, int], lexicons: Lexicons) -> list[Features]:
    """:func:`trigger_relative` for every token of ``doc``, with the trigger's own parts computed once."""
    tree = parse_tree(doc)
    info = _trigger(doc, tree, trigger, lexicons)
    return [_relative(tree, i, info) for i in range(len(doc))]


def rule_trigger_tags(doc: Doc, triggers: Sequence["RuleTrigger"],
                      arguments: Sequence[Sequence["RuleRole"]]) -> list[Features]:
    """The rules' trigger decisions as token features (stacking), for ``rules`` group.

    ``rule_trigger`` is the BIO tag of the rule finder's kept triggers; a lexicon
    trigger the rules dropped gets ``rule_blocked`` (its cue, :func:`~trainer.features.rule_cues.blocking_cue`:
    ``negated``, ``modal``, ``not_yet``, ...); every lexicon trigger gets ``rule_class`` (its motion class).
    ``arguments`` holds, per token, the roles the rule patterns would give it
    as a trigger (for verbs; empty for other tokens): ``rule_arg=<role>`` for
    each source, path or destination found, and ``rule_args`` for their set,
    so a verb missing from the lexicons still shows spatial arguments.
    """
    out: list[Features] = [{"rule_trigger": "O"} for _ in range(len(doc))]
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
    out: list[Features] = [{"rule_role": "O"} for _ in range(len(doc))]
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
    return [lexical(token, sentence.config.affix_length) for token in sentence.tokens]


def tagging_group(sentence: Sentence) -> list[Features]:
    """:func:`tagging` of every token."""
    return [tagging(token) for token in sentence.tokens]


def syntax_group(sentence: Sentence) -> list[Features]:
    """:func:`syntax` of every token."""
    tree = sentence.tree
    return [_syntax(tree, i, gov) for i, gov in enumerate(tree.governing)]


def lexicon_group(sentence: Sentence) -> list[Features]:
    """:func:`lexicon` of every token, with its gazetteer tag."""
    tree, lexicons = sentence.tree, sentence.lexicons
    return [_lexicon(token, tree, lexicons, tag, gov)
            for token, tag, gov in zip(sentence.tokens, sentence.gazetteer_tags, tree.governing)]


def context_group(sentence: Sentence) -> list[Features]:
    """:func:`context`: the :data:`CONTEXT_KEYS` of the neighbours within the configured window."""
    window = sentence.config.window
    return [context(sentence.features, i, window, CONTEXT_KEYS) for i in range(len(sentence.doc))]


def rules_group(sentence: Sentence) -> list[Features]:
    """:func:`rule_trigger_tags`: the rule baseline's trigger decisions and each verb's spatial arguments."""
    from trainer.features.rule_cues import rule_roles, rule_triggers  # loads spaCy, and imports this module

    doc, lexicons = sentence.doc, sentence.lexicons
    arguments = [rule_roles(doc, (i, i + 1), lexicons) if pos == "VERB" else []
                 for i, pos in enumerate(sentence.tree.pos)]
    return rule_trigger_tags(doc, rule_triggers(doc, lexicons), arguments)


def trigger_relative_group(sentence: Sentence, trigger: tuple[int, int]) -> list[Features]:
    """:func:`trigger_relative_all` for one trigger."""
    return trigger_relative_all(sentence.doc, trigger, sentence.lexicons)


def rules_trigger_group(sentence: Sentence, trigger: tuple[int, int]) -> list[Features]:
    """:func:`rule_role_tags`: the roles the rules give this trigger."""
    from trainer.features.rule_cues import rule_roles

    return rule_role_tags(sentence.doc, rule_roles(sentence.doc, trigger, sentence.lexicons))
