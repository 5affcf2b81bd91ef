"""Learning that starts from the rules, a trigger threshold tuned on inner folds, and auxiliary corpora."""

from __future__ import annotations

import copy
from dataclasses import replace

import pytest

from trainer.config import add_auxiliary, config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.evaluation.scoring import count_corpus
from trainer.features.extract import DOMAIN_KEY
from trainer.models.extractor import THRESHOLD_GRID, MotionExtractor, best_threshold
from trainer.models.training import TrainedExtractor, fit_extractor, tuned_trigger_threshold
from trainer.parsing.parse import parse_records

pytestmark = pytest.mark.slow

SIX = ["lexical", "tagging", "context", "syntax", "trigger_relative", "lexicon"]
FEW_DOCS = ("amsel-pilgrim-1", "brannick-log-1")  # about 110 annotated sentences: a small first budget


def _config(tmp, *, groups, tune=False, kind="crf"):
    return config_from_dict({
        "parser": {"cache_dir": str(tmp / "cache")},
        "features": {"groups": groups},
        "trigger_model": {"kind": kind, "iterations": 60, "tune_threshold": tune},
        "role_model": {"kind": "crf", "iterations": 60},
    })


@pytest.fixture(scope="module")
def demo(nlp, demo_train, demo_test, tmp_path_factory):
    tmp = tmp_path_factory.mktemp("stacking")
    config = _config(tmp, groups=SIX)
    train = [r for r in read_corpus([demo_train]).records if r.doc in FEW_DOCS]
    test = read_corpus([demo_test]).records
    return {"tmp": tmp, "train": train, "train_docs": parse_records(nlp, train, config.parser)[0],
            "test": test, "test_docs": parse_records(nlp, test, config.parser)[0]}


def _scores(trained, demo):
    predicted = trained.extractor.predict(demo["test"], demo["test_docs"])
    return count_corpus(demo["test"], predicted, roles=trained.roles, mode="exact").scores()


def test_rule_decisions_as_features_lift_a_model_trained_on_few_sentences(demo, nlp):
    plain = fit_extractor(demo["train"], _config(demo["tmp"], groups=SIX), nlp=nlp, docs=demo["train_docs"])
    stacked = fit_extractor(demo["train"], _config(demo["tmp"], groups=[*SIX, "rules"]), nlp=nlp,
                            docs=demo["train_docs"])
    plain_scores, stacked_scores = _scores(plain, demo), _scores(stacked, demo)
    print(f"\nheld-back role F1 from {len(demo['train'])} sentences: without rule features "
          f"{plain_scores.micro.f1:.3f}, with {stacked_scores.micro.f1:.3f}; trigger recall "
          f"{plain_scores.trigger.recall:.3f} -> {stacked_scores.trigger.recall:.3f}")
    assert stacked_scores.micro.f1 > plain_scores.micro.f1 + 0.02
    assert stacked_scores.trigger.recall >= plain_scores.trigger.recall


def test_the_threshold_is_read_at_the_peak_of_the_smoothed_curve_not_at_a_lone_spike():
    # Hand-built inner-fold curve: a spike at 0.15 between two drops, and a flat stretch around 0.3.
    curve = {0.1: 0.60, 0.15: 0.80, 0.2: 0.60, 0.25: 0.74, 0.3: 0.75, 0.35: 0.74, 0.4: 0.70}
    # Three-point averages: 0.1 -> 0.70 (two points at the end), 0.15 -> 0.667, 0.2 -> 0.713,
    # 0.25 -> 0.697, 0.3 -> 0.743, 0.35 -> 0.730, 0.4 -> 0.720.
    assert best_threshold(curve) == 0.3
    assert best_threshold({0.1: 0.5, 0.2: 0.7, 0.3: 0.7, 0.4: 0.5}) == 0.3  # the highest among equals
    assert best_threshold({0.1: 0.4, 0.2: 0.6, 0.3: 0.8}) == 0.3  # a rising curve peaks at its end


def test_the_trigger_threshold_is_chosen_on_inner_folds_of_the_training_docs(demo, nlp):
    trained = fit_extractor(demo["train"], _config(demo["tmp"], groups=[*SIX, "rules"], tune=True, kind="logistic"),
                            nlp=nlp, docs=demo["train_docs"])
    extractor = trained.extractor
    scores = extractor.threshold_scores_
    assert sorted(scores) == sorted(THRESHOLD_GRID)
    best = extractor.trigger_finder.decision_threshold
    assert best == best_threshold(scores)  # the peak of the smoothed inner-fold curve
    assert scores[best] >= max(scores.values()) - 0.05  # near the best single point, never far below it
    again = fit_extractor(demo["train"], _config(demo["tmp"], groups=[*SIX, "rules"], tune=True, kind="logistic"),
                          nlp=nlp, docs=demo["train_docs"])
    assert again.extractor.threshold_scores_ == scores  # deterministic
    # What fit reports and the model file's metadata keep: the chosen threshold and its inner-fold F1.
    assert tuned_trigger_threshold(extractor) == {"threshold": best, "inner_fold_f1": scores[best]}
    assert 0.5 < scores[best] < 1.0
    plain = fit_extractor(demo["train"][:120], _config(demo["tmp"], groups=SIX, kind="logistic"), nlp=nlp,
                          docs=demo["train_docs"][:120])
    assert tuned_trigger_threshold(plain.extractor) is None  # nothing tuned, nothing reported


def test_auxiliary_corpora_join_training_with_their_own_domain_and_predictions_use_the_target_copies(demo, nlp):
    config = add_auxiliary(_config(demo["tmp"], groups=["lexical", "lexicon"]), ["packaged:demo"], augment=True)
    trained = fit_extractor(demo["train"], config, nlp=nlp, docs=demo["train_docs"])
    (aux,) = trained.auxiliary
    assert aux["name"] == "demo" and aux["left_out_shared_with_target"] == len(demo["train"])
    assert aux["records"] == 1448 - len(demo["train"])
    extractor: MotionExtractor = trained.extractor
    assert extractor.domains_ == ["demo", "target"] and extractor.augmented_stages_ == ("triggers", "roles")
    features = extractor.prediction_features(demo["test_docs"][:1])
    assert features.triggers is features.roles  # both stages augmented: one feature list serves both
    assert features.triggers[0][0][DOMAIN_KEY] == "target" and "target~lower" in features.triggers[0][0]
    # A model file written before augmentation by stage (no augmented_stages_) augmented both stages or neither.
    old = copy.copy(extractor)
    del old.augmented_stages_
    assert old.prediction_features(demo["test_docs"][:1]) == features
    weights = extractor.trigger_finder.tagger.crf_.state_features_
    assert any(name.startswith("demo~") for name, _ in weights)
    assert any(name.startswith("target~") for name, _ in weights)


PRONOUNS = {"i", "we", "he", "she", "it", "they", "me", "us", "him", "them", "who", "which", "that"}


def test_features_are_augmented_only_when_the_annotation_departs_from_the_auxiliary_corpus(demo, nlp, monkeypatch):
    config = config_from_dict({**_config(demo["tmp"], groups=["lexical", "lexicon"]).to_dict(),
                               "auxiliary": {"corpora": ["packaged:demo"], "augment_if_conventions_differ": True}})
    same = fit_extractor(demo["train"], config, nlp=nlp, docs=demo["train_docs"]).extractor
    assert same.departures_ == [] and same.domains_ == [] and same.augmented_stages_ == ()  # the demo's own guide
    plain = same.prediction_features(demo["test_docs"][:1])
    assert plain.triggers is plain.roles and "target~lower" not in plain.triggers[0][0]
    legacy = copy.copy(same)  # as a model file written before augmentation by stage
    del legacy.augmented_stages_
    assert legacy.prediction_features(demo["test_docs"][:1]) == plain
    # The same sentences as a team that never marks a pronoun as mover would annotate them.
    relabelled = [r.with_events([replace(e, roles=tuple(x for x in e.roles if not (
        x.role == "mover" and r.text[x.span[0]:x.span[1]].lower() in PRONOUNS))) for e in r.events])
        for r in demo["train"]]
    dropped = sum(len(e.roles) for r in demo["train"] for e in r.events) - sum(
        len(e.roles) for r in relabelled for e in r.events)
    assert dropped > 20
    other = fit_extractor(relabelled, config, nlp=nlp, docs=demo["train_docs"]).extractor
    (departure,) = other.departures_
    assert (departure.role, departure.measure) == ("mover", "precision")
    assert departure.auxiliary - departure.target >= 0.10 and departure.z <= -3.0
    assert other.domains_ == ["demo", "target"]  # so the target's own copies of the features can win
    assert other.augmented_stages_ == ("roles",)  # a departure of the roles: the trigger stage keeps pooled features
    features = other.prediction_features(demo["test_docs"][:1])
    assert "target~lower" in features.roles[0][0] and "target~lower" not in features.triggers[0][0]
    assert {k: v for k, v in features.roles[0][0].items() if "~" not in k and k != DOMAIN_KEY} == features.triggers[0][0]
    trigger_weights = other.trigger_finder.tagger.crf_.state_features_
    assert not any("~" in name for name, _ in trigger_weights)
    role_weights = other.role_labeller.tagger.crf_.state_features_
    assert any(name.startswith("target~") for name, _ in role_weights)
    assert any(name.startswith("demo~") for name, _ in role_weights)
    # Uncertainty reads each stage's own features: pooled for the triggers, the target's copies for the roles.
    from trainer.models import uncertainty

    seen: dict[str, set] = {"trigger": set(), "role": set()}
    real = uncertainty._tagger_decisions

    def spy(tagger, X, stage):
        seen[stage].update(sentence[0].get(DOMAIN_KEY, "none") for sentence in X if sentence)
        return real(tagger, X, stage)

    monkeypatch.setattr(uncertainty, "_tagger_decisions", spy)
    trained = TrainedExtractor(other, config, "test-pipeline")
    assert len(uncertainty.uncertainty_parts(trained, demo["test"][:20], demo["test_docs"][:20])) == 20
    assert seen == {"trigger": {"none"}, "role": {"target"}}


def test_uncertainty_of_an_augmented_model_reads_the_target_copies_it_predicts_with(demo, nlp, monkeypatch):
    from trainer.models import uncertainty

    config = add_auxiliary(_config(demo["tmp"], groups=["lexical", "lexicon"]), ["packaged:demo"], augment=True)
    trained = fit_extractor(demo["train"], config, nlp=nlp, docs=demo["train_docs"])
    seen: list[str] = []
    real = uncertainty._tagger_decisions

    def spy(tagger, X, stage):
        seen.extend(sentence[0].get(DOMAIN_KEY, "none") for sentence in X if sentence)
        return real(tagger, X, stage)

    monkeypatch.setattr(uncertainty, "_tagger_decisions", spy)
    parts = uncertainty.uncertainty_parts(trained, demo["test"][:20], demo["test_docs"][:20])
    assert len(parts) == 20 and seen and set(seen) == {"target"}
