"""Token-sequence estimators in scikit-learn style: a CRF and a per-token logistic model.

Both take ``X`` as a list of sentences, each a list of feature dicts (one per
token), and ``y`` as a list of BIO tag lists of the same shape. Both give, for
each predicted span, a probability: the CRF's mean marginal of the span's
tags, the logistic model's mean probability of the tokens' tags. The logistic
model can blend in a gradient-boosted tree model over a few categorical token
features (:class:`TokenTrees`), which reads combinations of them that a
linear model cannot.
"""

from __future__ import annotations

from array import array
from collections import Counter
from typing import Any, Mapping, Sequence
from weakref import WeakKeyDictionary

import numpy as np
import pycrfsuite
import scipy.sparse as sp
import sklearn_crfsuite
from sklearn.base import BaseEstimator
from sklearn.ensemble import HistGradientBoostingClassifier
from sklearn.feature_extraction import DictVectorizer
from sklearn.linear_model import LogisticRegression

from trainer.errors import ConfigError, NotFittedError
from trainer.parsing.align import bio_to_ranges

Sentence = list[dict[str, Any]]
SpanGuess = tuple[int, int, str, float]  # first token, end token, label, probability


def _check_shapes(X: Sequence[Sentence], y: Sequence[list[str]]) -> None:
    if len(X) != len(y):
        raise ConfigError(f"X has {len(X)} sentences but y has {len(y)}", "pass one tag list per sentence")
    for i, (features, tags) in enumerate(zip(X, y)):
        if len(features) != len(tags):
            raise ConfigError(f"sentence {i}: {len(features)} tokens but {len(tags)} tags", "tokens and tags must line up")


def _spans_with_probabilities(tags: list[str], token_probs: list[dict[str, float]]) -> list[SpanGuess]:
    out = []
    for first, end, label in bio_to_ranges(tags):
        probs = [token_probs[first].get(f"B-{label}", 0.0)]
        probs += [token_probs[i].get(f"I-{label}", 0.0) for i in range(first + 1, end)]
        out.append((first, end, label, float(np.mean(probs))))
    return out


def marginal_spans(distributions: list[dict[str, float]], label: str, threshold: float) -> list[SpanGuess]:
    """Spans of one label decided token by token from tag probabilities, not from the best sequence.

    A span starts at every token whose ``B-label`` probability reaches
    ``threshold`` and goes on over following tokens whose ``I-label``
    probability does; its probability is the mean of those. Below 0.5 this
    finds spans the most likely sequence leaves out (recall for precision).
    """
    out, i = [], 0
    begin, inside = f"B-{label}", f"I-{label}"
    while i < len(distributions):
        if distributions[i].get(begin, 0.0) < threshold:
            i += 1
            continue
        end = i + 1
        while end < len(distributions) and distributions[end].get(inside, 0.0) >= threshold:
            end += 1
        probs = [distributions[i].get(begin, 0.0)] + [distributions[k].get(inside, 0.0) for k in range(i + 1, end)]
        out.append((i, end, label, float(np.mean(probs))))
        i = end
    return out


# Columns already found, per fitted vectorizer: (its vocabulary, {key: {string value: column}}). Only columns that
# exist are kept, so there are never more entries than vocabulary entries. Kept beside the vectorizer, not on it,
# so nothing of it is pickled with a model; refitting (a new vocabulary) starts afresh.
_COLUMNS: "WeakKeyDictionary[DictVectorizer, tuple[dict[str, int], dict[str, dict[str, int]]]]" = WeakKeyDictionary()


def vectorize(vectorizer: DictVectorizer, rows: Sequence[Mapping[str, Any]]) -> sp.csr_matrix:
    """``vectorizer.transform(rows)`` for a fitted sparse DictVectorizer, with less work per feature.

    The same matrix (same columns, values, index order and duplicates), built
    the way scikit-learn builds it: a string value names the column
    ``key<separator>value`` with value 1, a number names the column ``key``;
    unseen columns are dropped. Unlike ``transform`` it does not test each value
    against the abstract ``Number`` nor convert each to the dtype one at a
    time, and it remembers, across calls, the column of each (key, string
    value) pair it found instead of building ``key<separator>value`` again.
    Rows holding any other kind of value (None, lists, ...) go to ``transform`` itself.
    """
    if not rows or not vectorizer.sparse:
        return vectorizer.transform(rows)
    vocabulary = vectorizer.vocabulary_
    entry = _COLUMNS.get(vectorizer)
    if entry is None or entry[0] is not vocabulary:
        entry = _COLUMNS[vectorizer] = (vocabulary, {})
    found = entry[1]
    column_of = vocabulary.get
    separator = vectorizer.separator
    indices, values, indptr = array("i"), [], [0]
    add_index, add_value = indices.append, values.append
    for row in rows:
        for key, value in row.items():
            if type(value) is str:
                by_value = found.get(key)
                if by_value is None:
                    by_value = found[key] = {}
                column = by_value.get(value)
                if column is None:
                    column = column_of("%s%s%s" % (key, separator, value))
                    if column is None:
                        continue
                    by_value[value] = column
                value = 1
            elif isinstance(value, (int, float)):  # bool is an int
                column = column_of(key)
                if column is None:
                    continue
            else:
                return vectorizer.transform(rows)
            add_index(column)
            add_value(value)
        indptr.append(len(indices))
    matrix = sp.csr_matrix((np.asarray(values, dtype=vectorizer.dtype), np.frombuffer(indices, dtype=np.intc), indptr),
                           shape=(len(rows), len(vocabulary)), dtype=vectorizer.dtype)
    matrix.sort_indices()
    return matrix


class CRFTagger(BaseEstimator):
    """A linear-chain CRF (CRFsuite) over BIO tags; ``threshold`` drops spans below that probability."""

    def __init__(self, *, c1: float = 0.05, c2: float = 0.05, algorithm: str = "lbfgs",
                 max_iterations: int = 150, threshold: float = 0.0) -> None:
        self.c1 = c1
        self.c2 = c2
        self.algorithm = algorithm
        self.max_iterations = max_iterations
        self.threshold = threshold

    def fit(self, X: Sequence[Sentence], y: Sequence[list[str]]) -> "CRFTagger":
        _check_shapes(X, y)
        options: dict[str, Any] = {"algorithm": self.algorithm, "max_iterations": self.max_iterations}
        if self.algorithm in {"lbfgs"}:
            options.update(c1=self.c1, c2=self.c2)
        elif self.algorithm == "l2sgd":
            options.update(c2=self.c2)
        self.crf_ = sklearn_crfsuite.CRF(all_possible_transitions=True, **options)
        self.crf_.fit(list(X), list(y))
        self.labels_ = sorted(self.crf_.classes_)
        return self

    def _fitted(self) -> sklearn_crfsuite.CRF:
        if not hasattr(self, "crf_"):
            raise NotFittedError("this CRFTagger is not fitted yet", "call fit before predict")
        return self.crf_

    def predict(self, X: Sequence[Sentence]) -> list[list[str]]:
        """The most likely BIO sequence per sentence."""
        return [list(tags) for tags in self._fitted().predict(list(X))] if len(X) else []

    def token_distributions(self, X: Sequence[Sentence]) -> list[list[dict[str, float]]]:
        """Per sentence, per token: the marginal probability of every tag."""
        return self._fitted().predict_marginals(list(X)) if len(X) else []

    def predict_spans(self, X: Sequence[Sentence]) -> list[list[SpanGuess]]:
        """Spans per sentence with the mean marginal probability of their tags, above the threshold.

        One pass per sentence: the CRFsuite tagger is given the sentence once,
        then asked for the best tags and for the marginals of the tagged tokens only.
        """
        tagger = self._fitted().tagger_
        out = []
        for features in X:
            tagger.set(pycrfsuite.ItemSequence(features))
            tags = tagger.tag()
            marginals = [{tag: tagger.marginal(tag, i)} if tag != "O" else {} for i, tag in enumerate(tags)]
            spans = _spans_with_probabilities(tags, marginals)
            out.append([s for s in spans if s[3] >= self.threshold])
        return out


# The token features the tree model reads, one categorical column each (a key a token lacks reads as "-"): the
# word, its syntax, the lexicons' and the rules' decisions, WordNet classes and the nearest neighbours. Plus, per
# prefix of TREE_COUNTS, how many of the token's keys start with it (its particles, its prepositional children).
TREE_FEATURES = ("lemma", "suffix", "pos", "tag", "dep", "ent_type", "head_lemma", "head_pos", "gov_prep",
                 "passive_verb", "verb_class", "noun_class", "prep_cue", "rule_trigger", "rule_blocked", "rule_class",
                 "rule_args", "wn_first", "wn_subject", "wn_object", "-1:lower", "+1:lower", "-1:pos", "+1:pos",
                 "-1:dep", "+1:dep", "-1:rule_trigger", "+1:rule_trigger")
TREE_COUNTS = ("child_prt=", "child_prep=")
TREE_CATEGORIES = 250  # most frequent training values kept per feature; the others (and unseen ones) share one code


def _tree_values(rows: Sequence[Mapping[str, Any]]) -> list[list[str]]:
    """Per :data:`TREE_FEATURES` key, each row's value as a string ("-" where the row lacks the key)."""
    return [[value if type(value) is str else str(value) for value in (row.get(key, "-") for row in rows)]
            for key in TREE_FEATURES]


class TokenTrees(BaseEstimator):
    """Gradient-boosted trees (scikit-learn's histogram boosting) giving each token's probability of a positive tag.

    Each of :data:`TREE_FEATURES` becomes one categorical column, coded by its
    :data:`TREE_CATEGORIES` most frequent training values; the trees split on
    sets of values, so they learn combinations (a light verb with this object
    class, a listed verb the rules blocked) without the feature conjunctions a
    linear model needs. Early stopping on a tenth of the training tokens ends
    the boosting (scikit-learn's default for this size).
    """

    def __init__(self, *, rounds: int = 500, learning_rate: float = 0.05, random_state: int = 0) -> None:
        self.rounds = rounds
        self.learning_rate = learning_rate
        self.random_state = random_state

    def _matrix(self, rows: Sequence[Mapping[str, Any]], values: list[list[str]] | None = None) -> np.ndarray:
        """One row per token: the code of each :data:`TREE_FEATURES` value, then the :data:`TREE_COUNTS`.

        ``values`` is :func:`_tree_values` of ``rows`` when the caller has read them already.
        """
        values = _tree_values(rows) if values is None else values
        other = TREE_CATEGORIES
        columns = [[codes.get(value, other) for value in column] for codes, column in zip(self.codes_, values)]
        # Counting keys by prefix in one joined string per row: the same counts as testing each key, far quicker.
        joined = ["\n" + "\n".join(row) for row in rows]
        columns += [[names.count("\n" + prefix) for names in joined] for prefix in TREE_COUNTS]
        return np.asarray(columns, dtype=float).T.reshape(len(rows), len(columns))

    def fit(self, rows: Sequence[Mapping[str, Any]], positive: Sequence[bool]) -> "TokenTrees":
        values = _tree_values(rows)
        self.codes_ = []
        for column in values:
            counts = Counter(column)
            ranked = sorted(counts, key=lambda value: (-counts[value], value))[:TREE_CATEGORIES]
            self.codes_.append({value: code for code, value in enumerate(ranked)})
        self.model_ = HistGradientBoostingClassifier(
            categorical_features=list(range(len(TREE_FEATURES))), max_iter=self.rounds,
            learning_rate=self.learning_rate, max_leaf_nodes=31, l2_regularization=1.0, random_state=self.random_state)
        self.model_.fit(self._matrix(rows, values), np.asarray(positive, dtype=bool))
        return self

    def positive_probability(self, rows: Sequence[Mapping[str, Any]]) -> np.ndarray:
        """Each row's probability of a positive tag."""
        if not hasattr(self, "model_"):
            raise NotFittedError("these TokenTrees are not fitted yet", "call fit before predicting")
        if not rows:
            return np.zeros(0)
        return self.model_.predict_proba(self._matrix(rows))[:, list(self.model_.classes_).index(True)]


def blend_positive(probs: np.ndarray, labels: Sequence[str], trees: np.ndarray, share: float) -> np.ndarray:
    """Tag probabilities whose positive mass (every tag but ``O``) is mixed with the trees' probability.

    The positive mass becomes ``(1 - share) * (1 - p(O)) + share * trees``; it
    is shared among the positive tags as the logistic model shares it, and ``O``
    gets the rest.
    """
    outside = labels.index("O")
    positive = 1.0 - probs[:, outside]
    mixed = (1.0 - share) * positive + share * trees
    scale = np.divide(mixed, positive, out=np.zeros_like(mixed), where=positive > 0)
    out = probs * scale[:, None]
    out[:, outside] = 1.0 - mixed
    return out


class LogisticTagger(BaseEstimator):
    """Per-token logistic regression over BIO tags (no transitions); a simpler, faster alternative.

    ``tree_share`` above 0 also fits :class:`TokenTrees` on whether each token
    has a positive tag and blends their probability into the positive tags'
    (:func:`blend_positive`): 0.5 is a plain average of the two models.
    """

    def __init__(self, *, C: float = 1.0, class_weight: str = "none", max_iterations: int = 1000,
                 threshold: float = 0.0, random_state: int = 0, tree_share: float = 0.0) -> None:
        self.C = C
        self.class_weight = class_weight
        self.max_iterations = max_iterations
        self.threshold = threshold
        self.random_state = random_state
        self.tree_share = tree_share

    def fit(self, X: Sequence[Sentence], y: Sequence[list[str]]) -> "LogisticTagger":
        _check_shapes(X, y)
        self.vectorizer_ = DictVectorizer(sort=True)
        rows = [f for sentence in X for f in sentence]
        matrix = self.vectorizer_.fit_transform(rows)
        labels = [t for tags in y for t in tags]
        self.model_ = LogisticRegression(
            C=self.C, class_weight=None if self.class_weight == "none" else self.class_weight,
            max_iter=self.max_iterations, random_state=self.random_state,
        )
        self.model_.fit(matrix, labels)
        self.labels_ = list(self.model_.classes_)
        self.trees_ = None
        if self.tree_share > 0 and "O" in self.labels_:
            positive = [label != "O" for label in labels]
            if any(positive):
                self.trees_ = TokenTrees(random_state=self.random_state).fit(rows, positive)
        return self

    def token_distributions(self, X: Sequence[Sentence]) -> list[list[dict[str, float]]]:
        """Per sentence, per token: the probability of every tag."""
        if not hasattr(self, "model_"):
            raise NotFittedError("this LogisticTagger is not fitted yet", "call fit before predict")
        flat = [f for sentence in X for f in sentence]
        if not flat:
            return [[] for _ in X]
        probs = self.model_.predict_proba(vectorize(self.vectorizer_, flat))
        trees = getattr(self, "trees_", None)  # absent in model files written before the trees
        if trees is not None:
            probs = blend_positive(probs, self.labels_, trees.positive_probability(flat), self.tree_share)
        rows = [dict(zip(self.labels_, row)) for row in probs.tolist()]
        out, position = [], 0
        for sentence in X:
            out.append(rows[position : position + len(sentence)])
            position += len(sentence)
        return out

    def predict(self, X: Sequence[Sentence]) -> list[list[str]]:
        """The most probable tag per token, with I- after O repaired to B-."""
        return [_repair([max(p, key=p.get) for p in sentence]) for sentence in self.token_distributions(X)]

    def predict_spans(self, X: Sequence[Sentence]) -> list[list[SpanGuess]]:
        out = []
        for probs in self.token_distributions(X):
            tags = _repair([max(p, key=p.get) for p in probs])
            out.append([s for s in _spans_with_probabilities(tags, probs) if s[3] >= self.threshold])
        return out


def _repair(tags: list[str]) -> list[str]:
    """Make a tag sequence valid BIO: an I- that does not continue its label becomes B-."""
    fixed = []
    for i, tag in enumerate(tags):
        if tag.startswith("I-") and (i == 0 or fixed[-1] == "O" or fixed[-1][2:] != tag[2:]):
            tag = "B-" + tag[2:]
        fixed.append(tag)
    return fixed
