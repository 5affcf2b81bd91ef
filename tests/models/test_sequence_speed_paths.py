"""The logistic tagger's fast vectorisation gives exactly what scikit-learn's DictVectorizer gives.

Reference: scikit-learn's ``DictVectorizer.transform`` (the registry library the
tagger was fitted with), on random feature dicts with strings, booleans, ints,
floats, unseen keys and values, keys that hold the separator, and empty rows.
"""

from __future__ import annotations

import pickle
import random

import numpy as np
import pytest
from sklearn.feature_extraction import DictVectorizer

from trainer.models.sequence import LogisticTagger, vectorize

KEYS = ["lower", "pos", "dep", "-1:lower", "+1:pos", "a=b", "a", "bias", "flag", "count", "weight"]
WORDS = ["we", "left", "Caddow", "=", "b", "b=c", "", "ü", "at", "dawn"]


def random_row(rng: random.Random, keys: list[str]) -> dict:
    row = {}
    for key in rng.sample(keys, rng.randint(0, len(keys))):
        kind = rng.choice(["str", "str", "bool", "int", "float"])
        row[key] = {"str": lambda: rng.choice(WORDS), "bool": lambda: rng.random() < 0.5,
                    "int": lambda: rng.randint(-3, 3), "float": lambda: rng.uniform(-2.0, 2.0)}[kind]()
    return row


def assert_same_matrix(fast, reference) -> None:
    assert fast.shape == reference.shape
    assert fast.indptr.tolist() == reference.indptr.tolist()
    assert fast.indices.tolist() == reference.indices.tolist()
    np.testing.assert_array_equal(fast.data, reference.data)  # bitwise equal; NaN (a None value) equals NaN


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_vectorize_equals_dictvectorizer_transform_on_random_rows(seed: int) -> None:
    rng = random.Random(seed)
    fitted = DictVectorizer(sort=True).fit([random_row(rng, KEYS) for _ in range(200)] + [{"a": "b=c"}])
    unseen = KEYS + ["never_seen", "x=y"]
    rows = [random_row(rng, unseen) for _ in range(300)] + [{}]
    # 'a' = 'b=c' and 'a=b' = 'c' both name the column 'a=b=c': the same column twice in one row is kept twice.
    rows.append({"a": "b=c", "a=b": "c", "bias": 1.0, "flag": True, "count": 0})
    rows.append({"count": 2**53 + 1, "weight": 2**70, "flag": False, "bias": -0.0})  # rounded to float64 alike
    fast = vectorize(fitted, rows)
    assert_same_matrix(fast, fitted.transform(rows))
    doubled = fast.indices[fast.indptr[-3]:fast.indptr[-2]].tolist()
    assert doubled.count(fitted.vocabulary_["a=b=c"]) == 2


def test_vectorize_remembers_columns_per_fitted_vocabulary() -> None:
    rng = random.Random(3)
    fitted = DictVectorizer(sort=True).fit([random_row(rng, KEYS) for _ in range(100)])
    rows = [random_row(rng, KEYS) for _ in range(200)]
    first = vectorize(fitted, rows)
    assert_same_matrix(first, fitted.transform(rows))
    assert_same_matrix(vectorize(fitted, rows), first)  # the columns found by the first call
    fitted.fit([{"lower": "dawn", "pos": "VERB"}, {"lower": "we"}])  # refitted: the remembered columns are stale
    again = vectorize(fitted, rows)
    assert_same_matrix(again, fitted.transform(rows))
    assert again.shape == (200, 3) and sorted(fitted.vocabulary_) == ["lower=dawn", "lower=we", "pos=VERB"]


def test_rows_with_other_kinds_of_values_take_the_reference_path() -> None:
    fitted = DictVectorizer().fit([{"tags": ["x", "y"], "n": 1.5, "w": "a"}])
    rows = [{"tags": ["y", "z"], "n": None, "w": "a"}, {"n": np.float32(2.0)}]
    fast = vectorize(fitted, rows)
    assert_same_matrix(fast, fitted.transform(rows))
    assert fast[0, fitted.vocabulary_["tags=y"]] == 1.0 and np.isnan(fast[0, fitted.vocabulary_["n"]])
    assert fast[1, fitted.vocabulary_["n"]] == 2.0


def random_corpus(rng: random.Random, sentences: int) -> tuple[list[list[dict]], list[list[str]]]:
    X, y = [], []
    for _ in range(sentences):
        length = rng.randint(1, 9)
        X.append([random_row(rng, KEYS) for _ in range(length)])
        y.append([rng.choice(["O", "O", "B-TRIGGER", "I-TRIGGER"]) for _ in range(length)])
    return X, y


def test_logistic_tagger_probabilities_are_those_of_the_reference_transform() -> None:
    rng = random.Random(7)
    X, y = random_corpus(rng, 150)
    tagger = LogisticTagger(max_iterations=300).fit(X, y)
    X_new, _ = random_corpus(rng, 60)
    flat = [f for sentence in X_new for f in sentence]
    reference = tagger.model_.predict_proba(tagger.vectorizer_.transform(flat))
    got = np.array([[p[label] for label in tagger.labels_] for s in tagger.token_distributions(X_new) for p in s])
    assert got.shape == reference.shape == (len(flat), 3)
    np.testing.assert_allclose(got, reference, rtol=0, atol=1e-12)
    assert all(isinstance(p, float) for s in tagger.token_distributions(X_new[:3]) for d in s for p in d.values())


def test_a_pickled_tagger_keeps_its_state_names_and_predicts_the_same() -> None:
    rng = random.Random(8)
    X, y = random_corpus(rng, 80)
    tagger = LogisticTagger(max_iterations=300).fit(X, y)
    fitted_state = sorted(k for k in vars(tagger) if k.endswith("_"))
    before = tagger.token_distributions(X)
    loaded = pickle.loads(pickle.dumps(tagger))
    assert loaded.token_distributions(X) == before
    # Predicting stores nothing on the estimator: model files keep the attributes they had.
    assert sorted(k for k in vars(loaded) if k.endswith("_")) == fitted_state == ["labels_", "model_", "trees_", "vectorizer_"]
