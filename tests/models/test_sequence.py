"""The sequence estimators: scikit-learn contract, learnability, chance with shuffled labels, determinism."""

from __future__ import annotations

import random

import pytest
from seqeval.metrics import f1_score
from seqeval.scheme import IOB2
from sklearn.base import clone
from sklearn.model_selection import GridSearchCV

from trainer.errors import NotFittedError
from trainer.models.sequence import CRFTagger, LogisticTagger

LABELS = ["mover", "path", "destination"]


def predictable_corpus(n: int, seed: int):
    """Sentences where each token's feature 'cue' names its tag exactly: fully learnable."""
    rng = random.Random(seed)
    X, y = [], []
    for _ in range(n):
        features, tags = [], []
        for _ in range(rng.randint(4, 12)):
            if rng.random() < 0.4:
                label = rng.choice(LABELS)
                length = rng.randint(1, 3)
                for k in range(length):
                    tag = ("B-" if k == 0 else "I-") + label
                    features.append({"cue": tag, "noise": str(rng.randint(0, 9))})
                    tags.append(tag)
            else:
                features.append({"cue": "O", "noise": str(rng.randint(0, 9))})
                tags.append("O")
        X.append(features)
        y.append(tags)
    return X, y


@pytest.mark.parametrize("make", [lambda: CRFTagger(max_iterations=60), lambda: LogisticTagger()])
def test_learnable_corpus_is_learned_and_shuffled_labels_fall_to_chance(make):
    X, y = predictable_corpus(300, seed=1)
    X_test, y_test = predictable_corpus(100, seed=2)
    model = make().fit(X, y)
    # Span F1 by seqeval's strict IOB2 scoring (the CoNLL chunk convention), an outside reference.
    assert f1_score(y_test, model.predict(X_test), mode="strict", scheme=IOB2) > 0.98
    rng = random.Random(3)
    shuffled = [list(tags) for tags in y]
    for tags in shuffled:
        rng.shuffle(tags)  # same label distribution, no relation to the cues
    chance = make().fit(X, shuffled)
    assert f1_score(y_test, chance.predict(X_test), mode="strict", scheme=IOB2) < 0.3


def test_same_seed_and_data_give_identical_predictions():
    X, y = predictable_corpus(120, seed=4)
    for make in (lambda: CRFTagger(max_iterations=30), lambda: LogisticTagger()):
        first, second = make().fit(X, y), make().fit(X, y)
        assert first.predict(X) == second.predict(X)
        assert first.predict_spans(X) == second.predict_spans(X)


def test_span_probabilities_lie_in_unit_interval_and_threshold_filters():
    X, y = predictable_corpus(80, seed=5)
    model = CRFTagger(max_iterations=30).fit(X, y)
    spans = [s for sentence in model.predict_spans(X) for s in sentence]
    assert spans and all(0.0 <= p <= 1.0 for *_, p in spans)
    low = [p for sentence in model.predict_spans(X) for *_, p in sentence if p < 0.9]
    strict = clone(model).set_params(threshold=0.9).fit(X, y)
    kept = [p for sentence in strict.predict_spans(X) for *_, p in sentence]
    assert all(p >= 0.9 for p in kept)
    assert len(kept) == len(spans) - len(low)


def test_scikit_learn_contract_get_set_params_clone_and_grid_search():
    model = CRFTagger(c1=0.2)
    assert model.get_params()["c1"] == 0.2
    assert clone(model).set_params(c2=0.3).get_params()["c2"] == 0.3
    X, y = predictable_corpus(60, seed=6)

    def span_f1(estimator, X_, y_):
        return f1_score(y_, estimator.predict(X_), mode="strict", scheme=IOB2)

    search = GridSearchCV(LogisticTagger(), {"C": [0.1, 1.0]}, scoring=span_f1, cv=3).fit(X, y)
    assert search.best_params_["C"] in (0.1, 1.0)


def test_predict_before_fit_is_a_clear_error():
    with pytest.raises(NotFittedError, match="not fitted"):
        CRFTagger().predict([[{"a": 1}]])


def test_misaligned_tags_are_refused():
    from trainer.errors import ConfigError

    with pytest.raises(ConfigError, match="sentence 0: 2 tokens but 1 tags"):
        LogisticTagger().fit([[{"a": 1}, {"a": 2}]], [["O"]])


# --- deciding spans token by token from tag probabilities ----------------------------------------


def test_marginal_spans_start_where_b_reaches_the_threshold_and_extend_over_i() -> None:
    from trainer.models.sequence import marginal_spans

    probs = [{"O": 0.9, "B-T": 0.1}, {"B-T": 0.35, "O": 0.65}, {"I-T": 0.4, "O": 0.6}, {"I-T": 0.2, "O": 0.8},
             {"B-T": 0.8, "O": 0.2}]
    assert marginal_spans(probs, "T", 0.5) == [(4, 5, "T", 0.8)]
    low = marginal_spans(probs, "T", 0.3)
    assert [(f, e) for f, e, _, _ in low] == [(1, 3), (4, 5)]
    assert low[0][3] == pytest.approx((0.35 + 0.4) / 2)
    assert marginal_spans([], "T", 0.3) == []
