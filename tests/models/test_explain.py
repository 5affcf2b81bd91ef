"""The strongest learned features per label and the CRF transitions, for both stages."""

from __future__ import annotations

from types import SimpleNamespace

import pytest
from typer.testing import CliRunner

from trainer.cli import app
from trainer.config import config_from_dict
from trainer.errors import ConfigError
from trainer.models.explain import explain_extractor, explain_stage, explanation_text
from trainer.models.extractor import StageFeatures
from trainer.models.persist import save_model
from trainer.models.rules import RuleTriggerFinder
from trainer.models.sequence import CRFTagger, LogisticTagger
from trainer.models.training import TrainedExtractor

# "go" starts a trigger and "on" continues it; everything else is outside. Planted, so the weights must say so.
X = [[{"w": "we"}, {"w": "go"}, {"w": "on"}, {"w": "home"}], [{"w": "we"}, {"w": "sat"}],
     [{"w": "they"}, {"w": "go"}, {"w": "on"}]] * 5
Y = [["O", "B-T", "I-T", "O"], ["O", "O"], ["O", "B-T", "I-T"]] * 5


@pytest.fixture(scope="module")
def crf() -> CRFTagger:
    return CRFTagger().fit(X, Y)


def test_crf_strongest_features_are_the_planted_ones(crf) -> None:
    explained = explain_stage("trigger", SimpleNamespace(tagger=crf), top=3)
    assert explained.estimator == "crf"
    assert list(explained.labels) == ["B-T", "I-T", "O"]
    assert explained.labels["B-T"]["for"][0][0] == "w:go"
    assert explained.labels["I-T"]["for"][0][0] == "w:on"
    assert all(w > 0 for _, w in explained.labels["O"]["for"]) and len(explained.labels["O"]["for"]) == 3


def test_crf_weights_and_transitions_equal_crfsuites_own_dump_of_the_model(crf) -> None:
    # Reference: python-crfsuite's Tagger.info() parses CRFsuite's dump of the trained model file.
    info = crf.crf_.tagger_.info()
    explained = explain_stage("trigger", SimpleNamespace(tagger=crf), top=100)
    for label, sides in explained.labels.items():
        for feature, weight in sides["for"] + sides["against"]:
            assert weight == pytest.approx(info.state_features[(feature, label)], abs=1e-6)
    assert {(a, b): w for a, b, w in explained.transitions} == pytest.approx(dict(info.transitions), abs=1e-6)
    # Common practice for BIO CRFs: a transition the data never shows (O -> I-T) ends up with a negative weight.
    assert dict(((a, b), w) for a, b, w in explained.transitions)[("O", "I-T")] < 0
    strengths = [abs(w) for _, _, w in explained.transitions]
    assert strengths == sorted(strengths, reverse=True)


def test_logistic_weights_of_two_classes_are_opposite_and_planted_feature_leads() -> None:
    tags = [["T" if t == "B-T" else "O" for t in tags] for tags in Y]
    tagger = LogisticTagger().fit(X, tags)
    explained = explain_stage("roles", SimpleNamespace(tagger=tagger), top=2)
    assert explained.estimator == "logistic" and explained.transitions == []
    assert explained.labels["T"]["for"][0][0] == "w=go"  # DictVectorizer names a string feature key=value
    assert explained.labels["O"]["against"][0] == ("w=go", -explained.labels["T"]["for"][0][1])
    # Reference library: scikit-learn keeps one coefficient row for two classes, the second class's.
    column = list(tagger.vectorizer_.get_feature_names_out()).index("w=go")
    assert explained.labels["T"]["for"][0][1] == pytest.approx(tagger.model_.coef_[0][column], abs=1e-6)


def test_blended_trees_are_named_in_a_note_beside_the_logistic_weights() -> None:
    plain = explain_stage("trigger", SimpleNamespace(tagger=LogisticTagger().fit(X, Y)))
    blended = explain_stage("trigger", SimpleNamespace(tagger=LogisticTagger(tree_share=0.5).fit(X, Y)))
    assert plain.note == ""
    assert "gradient-boosted trees (share 0.5)" in blended.note and "logistic model's part" in blended.note
    assert blended.labels == plain.labels  # the logistic part is fitted the same way with or without trees


def test_rule_stages_say_they_learned_nothing_and_top_must_be_positive(crf) -> None:
    explained = explain_stage("trigger", RuleTriggerFinder(lexicons=None))
    assert explained.labels == {} and "no learned weights" in explained.note
    with pytest.raises(ConfigError, match="top must be at least 1"):
        explain_stage("trigger", SimpleNamespace(tagger=crf), top=0)


def test_explain_command_reads_a_verified_model_file(tmp_path, crf) -> None:
    extractor = SimpleNamespace(trigger_finder=SimpleNamespace(tagger=crf), role_labeller=RuleTriggerFinder(None))
    trained = TrainedExtractor(extractor, config_from_dict({}), "test-pipeline")
    model = tmp_path / "m.itin"
    save_model(trained, model, {"kind": "extractor"})
    stages = explain_extractor(trained, top=2)
    assert [s.stage for s in stages] == ["trigger", "roles"]
    result = CliRunner().invoke(app, ["explain", str(model), "--top", "2"])
    assert result.exit_code == 0, result.output
    assert result.output.strip() == explanation_text(stages).strip()
    assert "B-T:" in result.output and "  for: w:go +" in result.output and "B-T -> I-T +" in result.output
    model.write_bytes(model.read_bytes() + b"tampered")
    refused = CliRunner().invoke(app, ["explain", str(model)])
    assert refused.exit_code == 2 and "Traceback" not in refused.output


# ---------------------------------------------------------------- one predicted span


def test_span_explanations_sum_each_features_weight_over_the_span_tokens() -> None:
    from spacy.tokens import Doc
    from spacy.vocab import Vocab

    from trainer.corpus.records import Event, Record, RoleSpan
    from trainer.models.explain import span_explanations

    words = ["we", "go", "on", "home"]
    doc = Doc(Vocab(), words=words)  # "we go on home": go on = 3-8, we = 0-2
    features = [{"w": w} for w in words]
    mover = [["B-mover" if w == "we" else "O" for w in s] for s in [[f["w"] for f in x] for x in X]]
    labeller = SimpleNamespace(tagger=LogisticTagger().fit(X, mover),
                               featurizer=SimpleNamespace(role_features=lambda d, trigger, base: base))
    crf = CRFTagger().fit(X, [[t.replace("-T", "-TRIGGER") for t in tags] for tags in Y])  # the stage's label
    extractor = SimpleNamespace(prediction_features=lambda docs: StageFeatures([features], [features]), role_labeller=labeller,
                                trigger_finder=SimpleNamespace(tagger=crf))
    record = Record("r1", "d-1", doc.text, (Event((3, 8), (RoleSpan("mover", (0, 2)),)),))
    explained = span_explanations(extractor, [doc], [record], top=3)["r1"]
    # Trigger "go on": B-TRIGGER on "go", I-TRIGGER on "on"; each token has one attribute (w:go, w:on), value 1.
    state = crf.crf_.state_features_
    expected = sorted([("w:go", state[("w:go", "B-TRIGGER")]), ("w:on", state[("w:on", "I-TRIGGER")])],
                      key=lambda i: -i[1])
    assert explained[("trigger", 3, 8)] == [(f, pytest.approx(w, abs=1e-6)) for f, w in expected]
    # Mover "we": the logistic coefficient of the column w=we for class B-mover (value 1), the only positive one.
    # Two classes, B-mover and O: scikit-learn keeps one row, for the second class (O); B-mover's is its negation.
    tagger = labeller.tagger
    assert list(tagger.model_.classes_) == ["B-mover", "O"]
    column = list(tagger.vectorizer_.get_feature_names_out()).index("w=we")
    assert explained[("mover", 0, 2)] == [("w=we", pytest.approx(-tagger.model_.coef_[0][column], abs=1e-6))]
    assert all(type(w) is float for spans in explained.values() for _, w in spans)


def test_span_explanations_skip_rule_stages_and_spans_off_the_tokens(crf) -> None:
    from spacy.tokens import Doc
    from spacy.vocab import Vocab

    from trainer.corpus.records import Event, Record
    from trainer.models.explain import span_explanations

    doc = Doc(Vocab(), words=["we", "go"])
    rules = SimpleNamespace(prediction_features=lambda docs: StageFeatures(*[[[{"w": "we"}, {"w": "go"}]]] * 2),
                            trigger_finder=RuleTriggerFinder(None), role_labeller=RuleTriggerFinder(None))
    assert span_explanations(rules, [doc], [Record("r", "d", doc.text, (Event((3, 5), ()),))]) == {}
    assert span_explanations(rules, [], []) == {}


def test_a_tuned_trigger_threshold_is_named_beside_the_trigger_weights(crf) -> None:
    finder = SimpleNamespace(tagger=crf, decision_threshold=0.3)
    extractor = SimpleNamespace(trigger_finder=finder, role_labeller=RuleTriggerFinder(None),
                                threshold_scores_={0.25: 0.71, 0.3: 0.755, 0.35: 0.74})
    stages = explain_extractor(TrainedExtractor(extractor, config_from_dict({}), "test-pipeline"))
    assert stages[0].note == ("a token starts a trigger at probability 0.30 or more, the threshold chosen on inner "
                              "folds of the training docs (trigger F1 there 0.755)")
    untuned = SimpleNamespace(trigger_finder=SimpleNamespace(tagger=crf), role_labeller=RuleTriggerFinder(None))
    assert explain_extractor(TrainedExtractor(untuned, config_from_dict({}), "test-pipeline"))[0].note == ""
