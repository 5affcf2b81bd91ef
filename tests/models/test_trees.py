"""The tree model blended into the logistic trigger tagger: hand-built blends, an interaction, codes, config checks."""

from __future__ import annotations

import random

import numpy as np
import pytest
from sklearn.base import clone
from sklearn.metrics import average_precision_score

from trainer.config import config_from_dict
from trainer.errors import ConfigError, NotFittedError
from trainer.models.sequence import TREE_CATEGORIES, TREE_FEATURES, LogisticTagger, TokenTrees, blend_positive


def test_blend_mixes_the_positive_mass_and_shares_it_as_the_logistic_model_does() -> None:
    labels = ["B-T", "I-T", "O"]
    probs = np.array([[0.2, 0.1, 0.7], [0.0, 0.0, 1.0]])
    out = blend_positive(probs, labels, np.array([0.9, 0.4]), 0.5)
    # Row 1: positive mass (0.3 + 0.9) / 2 = 0.6, split 2:1 like 0.2:0.1; O gets the rest.
    assert out[0] == pytest.approx([0.4, 0.2, 0.4])
    # Row 2: the logistic model gives no positive mass, so there is no split to copy: O keeps 1 - 0.2.
    assert out[1] == pytest.approx([0.0, 0.0, 0.8])
    assert blend_positive(probs, labels, np.array([0.9, 0.4]), 0.0) == pytest.approx(probs)
    assert blend_positive(probs, labels, np.array([0.9, 0.4]), 1.0)[0] == pytest.approx([0.6, 0.3, 0.1])


def xor_tokens(n: int, seed: int) -> tuple[list[dict], list[bool]]:
    """Tokens whose tag is the exclusive or of two categorical features, plus noise.

    Exclusive or is the textbook function no linear model can represent (Minsky and Papert,
    "Perceptrons", 1969; common practice to cite it): 'make' with a place object is motion, 'make'
    with a thing is not, 'take' the other way round.
    """
    rng = random.Random(seed)
    rows, positive = [], []
    for _ in range(n):
        lemma, object_class = rng.choice(["make", "take"]), rng.choice(["n.location", "n.artifact"])
        rows.append({"lemma": lemma, "wn_object": object_class, "pos": "VERB", "suffix": rng.choice(["ade", "ake"])})
        positive.append((lemma == "make") == (object_class == "n.location"))
    return rows, positive


def test_trees_learn_an_interaction_the_logistic_model_cannot() -> None:
    rows, positive = xor_tokens(2000, seed=1)
    test_rows, test_positive = xor_tokens(500, seed=2)
    trees = TokenTrees().fit(rows, positive)
    assert average_precision_score(test_positive, trees.positive_probability(test_rows)) > 0.99

    tags = [["B-T" if p else "O"] for p in positive]
    sentences = [[row] for row in rows]
    linear = LogisticTagger().fit(sentences, tags)
    blended = LogisticTagger(tree_share=0.5).fit(sentences, tags)

    def positive_mass(model: LogisticTagger) -> list[float]:
        return [1 - d[0]["O"] for d in model.token_distributions([[row] for row in test_rows])]

    assert average_precision_score(test_positive, positive_mass(linear)) < 0.7  # chance is about 0.5
    assert average_precision_score(test_positive, positive_mass(blended)) > 0.99
    assert blended.predict([[row] for row in test_rows]) == [["B-T" if p else "O"] for p in test_positive]


def test_codes_keep_the_most_frequent_values_and_send_the_rest_and_unseen_ones_to_one_code() -> None:
    rows = [{"lemma": f"w{i}"} for i in range(TREE_CATEGORIES + 20)] + [{"lemma": "often"}] * 5
    trees = TokenTrees().fit(rows, [i % 2 == 0 for i in range(len(rows))])
    lemma = TREE_FEATURES.index("lemma")
    matrix = trees._matrix([{"lemma": "often"}, {"lemma": "never seen"}, {}])
    assert matrix[0, lemma] == 0  # the most frequent value
    assert matrix[1, lemma] == TREE_CATEGORIES  # unseen: the shared code
    assert matrix[2, TREE_FEATURES.index("pos")] == trees.codes_[TREE_FEATURES.index("pos")]["-"]
    assert len(trees.codes_[lemma]) == TREE_CATEGORIES


def test_counts_of_particles_and_prepositional_children_are_columns() -> None:
    rows = [{"lemma": "go", "child_prt=out": True, "child_prep=to": True, "child_prep=by": True}, {"lemma": "go"}]
    trees = TokenTrees().fit(rows * 10, [True, False] * 10)
    matrix = trees._matrix(rows)
    assert list(matrix[0, len(TREE_FEATURES):]) == [1, 2]
    assert list(matrix[1, len(TREE_FEATURES):]) == [0, 0]


def test_the_matrix_equals_a_plain_reading_of_each_row() -> None:
    rng = random.Random(4)
    values = ["go", "went", "True", "-", "river"]
    rows = []
    for _ in range(300):
        row = {key: rng.choice(values + [True, False, 1.0]) for key in TREE_FEATURES if rng.random() < 0.7}
        row.update({f"child_{kind}={rng.choice(values)}{n}": True for n in range(rng.randint(0, 3))
                    for kind in [rng.choice(["prt", "prep", "advmod"])]})
        rows.append(row)
    trees = TokenTrees().fit(rows, [rng.random() < 0.3 for _ in rows])
    plain = [[trees.codes_[k].get(str(row.get(key, "-")), TREE_CATEGORIES) for k, key in enumerate(TREE_FEATURES)]
             + [sum(1 for name in row if name.startswith(prefix)) for prefix in ("child_prt=", "child_prep=")]
             for row in rows]
    assert trees._matrix(rows).tolist() == plain


def test_no_outside_token_means_no_trees_and_predictions_still_work() -> None:
    # Trees learn positive against O: with every token inside a span there is nothing to tell apart.
    model = LogisticTagger(tree_share=0.5).fit([[{"lemma": "a"}, {"lemma": "b"}]] * 3, [["B-T", "I-T"]] * 3)
    assert model.trees_ is None
    assert model.predict([[{"lemma": "a"}, {"lemma": "b"}]]) == [["B-T", "I-T"]]


def test_a_tagger_pickled_before_the_trees_predicts_as_a_plain_logistic_model() -> None:
    rows, positive = xor_tokens(300, seed=3)
    sentences, tags = [[row] for row in rows], [["B-T" if p else "O"] for p in positive]
    plain = LogisticTagger().fit(sentences, tags)
    old = clone(plain).fit(sentences, tags)
    del old.trees_  # what a model file written before this change holds
    assert old.token_distributions(sentences[:20]) == plain.token_distributions(sentences[:20])


def test_unfitted_trees_are_a_clear_error() -> None:
    with pytest.raises(NotFittedError, match="not fitted"):
        TokenTrees().positive_probability([{"lemma": "go"}])


def test_the_config_takes_a_share_in_zero_to_one_for_the_trigger_stage_only() -> None:
    assert config_from_dict({"trigger_model": {"kind": "logistic", "tree_share": 0.5}}).trigger_model.tree_share == 0.5
    with pytest.raises(ConfigError, match=r"'trigger_model.tree_share' must lie in \[0, 1\]"):
        config_from_dict({"trigger_model": {"tree_share": 1.5}})
    with pytest.raises(ConfigError, match="only the logistic trigger stage"):
        config_from_dict({"role_model": {"tree_share": 0.5}})
    with pytest.raises(ConfigError, match="only the logistic trigger stage"):
        config_from_dict({"trigger_model": {"kind": "crf", "tree_share": 0.5}})
    grid = config_from_dict({"trigger_model": {"kind": "logistic", "grid": {"tree_share": [0.0, 0.5]}}})
    assert grid.trigger_model.grid == {"tree_share": [0.0, 0.5]}
