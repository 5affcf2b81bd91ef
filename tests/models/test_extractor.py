"""The two-stage extractor on the demo corpus: learned models beat the rule floor; extraction round trips."""

from __future__ import annotations

import pytest

from trainer.config import config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.corpus.validate import check_files
from trainer.models.apply import extract_file, extract_from_text, predict_records
from trainer.models.training import fit_extractor, load_extractor, save_extractor
from trainer.parsing.parse import parse_records
from trainer.parsing.text import read_text_file

pytestmark = pytest.mark.slow

KINDS = {"rules": ("rules", "rules"), "crf": ("crf", "crf"), "logistic": ("logistic", "logistic"), "mixed": ("crf", "logistic")}


def config_for(kind, tmp):
    trigger, role = KINDS[kind]
    return config_from_dict({
        "parser": {"cache_dir": str(tmp / "cache")},
        "trigger_model": {"kind": trigger, "iterations": 80},
        "role_model": {"kind": role, "iterations": 80},
    })


@pytest.fixture(scope="module")
def demo(nlp, demo_train, demo_test, tmp_path_factory):
    tmp = tmp_path_factory.mktemp("extractor")
    train = read_corpus([demo_train]).records
    test = read_corpus([demo_test]).records
    config = config_for("crf", tmp)
    train_docs, _ = parse_records(nlp, train, config.parser)
    test_docs, _ = parse_records(nlp, test, config.parser)
    models = {k: fit_extractor(train, config_for(k, tmp), nlp=nlp, docs=train_docs) for k in KINDS}
    return {"tmp": tmp, "train": train, "test": test, "test_docs": test_docs, "models": models}


def role_f1(gold, predicted):
    """Exact-match role F1 over (record, trigger, role, span) triples, as the spec scores them."""
    def triples(records):
        return {(r.id, e.trigger, x.role, x.span) for r in records for e in r.events for x in e.roles}

    g, p = triples(gold), triples(predicted)
    tp = len(g & p)
    return 2 * tp / (len(g) + len(p)) if g or p else 1.0


def test_learned_models_beat_the_rule_baseline_on_held_back_docs(demo, nlp):
    scores = {
        kind: role_f1(demo["test"], predict_records(model, demo["test"], nlp=nlp, docs=demo["test_docs"]))
        for kind, model in demo["models"].items()
    }
    print("held-back role F1 (exact):", {k: round(v, 3) for k, v in scores.items()})
    # Two held-back journals (about 200 role instances): a margin of 0.05 F1 is well outside run-to-run noise
    # (same data, same seed give identical numbers) yet does not overstate what 12 training journals buy.
    assert scores["crf"] > scores["rules"] + 0.05
    assert scores["logistic"] > scores["rules"] + 0.05
    assert scores["mixed"] > scores["rules"] + 0.05


def test_roles_given_gold_triggers_score_at_least_as_well_as_the_pipeline(demo, nlp):
    model = demo["models"]["crf"]
    pipeline = role_f1(demo["test"], predict_records(model, demo["test"], nlp=nlp, docs=demo["test_docs"]))
    given = role_f1(demo["test"], predict_records(model, demo["test"], nlp=nlp, docs=demo["test_docs"], gold_triggers=True))
    assert given >= pipeline


def test_fit_save_extract_gives_events_that_check_accepts(demo, nlp, demo_test):
    tmp = demo["tmp"]
    model_path = tmp / "crf.itin"
    save_extractor(demo["models"]["crf"], model_path, records=demo["train"], training_seconds=1.0)
    loaded, meta = load_extractor(model_path)
    assert meta["roles"] == ["mover", "source", "path", "destination"]
    assert meta["training_corpus"]["docs"] == 12
    out = tmp / "held_back.jsonl"
    summary = extract_file(loaded, demo_test / "ruddock-drove-1.jsonl", out, input_format="jsonl", nlp=nlp, batch_size=7)
    assert summary.sentences == 54 and summary.events > 20
    result = check_files([out])
    assert result.errors == []
    ids = [r.id for _, _, r in result.records]
    assert ids == [r.id for r in demo["test"] if r.doc == "ruddock-drove-1"]
    confidences = [e.confidence for _, _, r in result.records for e in r.events]
    assert confidences and all(0 < c <= 1 for c in confidences)


def test_plain_text_extraction_offsets_point_at_the_words_in_the_original_file(demo, nlp, tmp_path):
    from tests.conftest import DEMO

    chapter = DEMO / "unannotated" / "delacott-survey-3.txt"
    out = tmp_path / "chapter.jsonl"
    summary = extract_file(demo["models"]["crf"], chapter, out, input_format="text", nlp=nlp)
    original = read_text_file(chapter)
    records = read_corpus([out]).records
    assert summary.sentences == len(records) > 150
    checked = 0
    for record in records:
        offset = record.meta["offset"]
        assert original[offset : offset + len(record.text)] == record.text
        for event in record.events:
            for start, end in [event.trigger] + [r.span for r in event.roles]:
                assert original[offset + start : offset + end] == record.text[start:end]
                checked += 1
    assert checked > 100


def test_extract_from_a_string(demo, nlp):
    records = extract_from_text(demo["models"]["crf"], "We left Caddow at dawn and rode to Quillon.\n\nThe road runs north.", nlp=nlp)
    assert [r.text for r in records] == ["We left Caddow at dawn and rode to Quillon.", "The road runs north."]
    first = records[0]
    triggers = [first.span_text(e.trigger) for e in first.events]
    assert "left" in triggers


def test_training_twice_gives_identical_predictions(demo, nlp):
    config = config_for("crf", demo["tmp"])
    subset = demo["train"][:200]
    a = fit_extractor(subset, config, nlp=nlp)
    b = fit_extractor(subset, config, nlp=nlp)
    pa = predict_records(a, demo["test"], nlp=nlp, docs=demo["test_docs"])
    pb = predict_records(b, demo["test"], nlp=nlp, docs=demo["test_docs"])
    assert [r.events for r in pa] == [r.events for r in pb]
    assert [[e.confidence for e in r.events] for r in pa] == [[e.confidence for e in r.events] for r in pb]


def test_a_roles_confidence_is_that_of_the_whole_instance_trigger_included(demo, nlp):
    """Role confidence = trigger confidence x the role stage's confidence given the trigger (the chain rule:
    a scored role instance is right only when its trigger is). Given gold triggers it is the role stage's own;
    a model file written before (no ``joint_role_confidence_``) keeps the role stage's own. What it is worth
    (calibration on cross-validation folds) is measured in docs/models.md, not here: two held-back journals
    hold too few role instances to tell."""
    import copy

    trained, docs = demo["models"]["crf"], demo["test_docs"]
    model = trained.extractor
    features = model.prediction_features(docs)
    triggers = model.trigger_finder.predict(docs, features.triggers)
    own = model.role_labeller.predict(docs, triggers, features.roles)
    raw_triggers, joint = model.raw_predictions(docs)
    assert raw_triggers == triggers
    assert [[[r[:3] for r in event] for event in sentence] for sentence in joint] == \
        [[[r[:3] for r in event] for event in sentence] for sentence in own]  # the same roles, only confidences differ
    pairs = [(q[3], r[3], t[2]) for ts, os, js in zip(triggers, own, joint) for t, o, j in zip(ts, os, js)
             for q, r in zip(o, j)]
    assert len(pairs) > 100 and any(t < 0.99 for _, _, t in pairs)
    assert all(r == pytest.approx(q * t) and r <= q for q, r, t in pairs)

    gold = [[(f, e) for f, e, _ in ts] for ts in triggers]
    _, given = model.raw_predictions(docs, gold)
    assert given == model.role_labeller.predict(docs, [[(f, e, 1.0) for f, e in ts] for ts in gold], features.roles)

    old = copy.copy(model)
    del old.joint_role_confidence_
    assert old.raw_predictions(docs)[1] == own
