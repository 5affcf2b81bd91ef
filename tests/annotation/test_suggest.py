"""Choosing batches: the greedy diversity rule and near duplicates by hand, then suggest_batch on a small model."""

from __future__ import annotations

import random

import pytest

from trainer.corpus.provenance import events_digest
from trainer.annotation.suggest import NO_TRIGGER, Candidate, near_duplicates, select_batch, suggest_batch
from trainer.config import config_from_dict
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Record
from trainer.errors import ConfigError, CorpusError
from trainer.models.apply import predict_records
from trainer.models.training import fit_extractor
from trainer.models.uncertainty import record_uncertainty
from trainer.parsing.parse import parse_records


def cand(id: str, doc: str, u: float, text: str | None = None, lemmas: tuple[str, ...] = ()) -> Candidate:
    return Candidate(id, doc, text or f"sentence {id} of {doc}", u, frozenset(lemmas or {NO_TRIGGER}))


def ids(chosen) -> list[str]:
    return [c.id for c, _ in chosen]


# ---------------------------------------------------------------- selection by hand


def test_diversity_picks_from_another_doc():
    pool = [cand("a1", "A", 0.9, lemmas=("leave",)), cand("a2", "A", 0.8, lemmas=("reach",)),
            cand("b1", "B", 0.6, lemmas=("cross",))]
    chosen = select_batch(pool, 2, diversity=0.5)
    # a2: 0.8 - 0.5 * (1/1 + 0/1) / 2 = 0.55 < b1: 0.6
    assert ids(chosen) == ["a1", "b1"]
    assert [round(score, 6) for _, score in chosen] == [0.9, 0.6]
    assert ids(select_batch(pool, 2, diversity=0.0)) == ["a1", "a2"]  # uncertainty alone


def test_diversity_spreads_over_trigger_lemmas():
    pool = [cand("s1", "A", 0.9, lemmas=("leave",)), cand("s2", "B", 0.8, lemmas=("leave", "ride")),
            cand("s3", "C", 0.7, lemmas=("reach",))]
    # s2 shares 'leave' with s1: 0.8 - 0.5 * (0 + 1) / 2 = 0.55 < s3: 0.7
    assert ids(select_batch(pool, 2, diversity=0.5)) == ["s1", "s3"]


def test_sentences_without_a_predicted_trigger_are_spread_too():
    pool = [cand("n1", "A", 0.9), cand("n2", "B", 0.85), cand("t1", "C", 0.7, lemmas=("sail",))]
    # n2 shares the pseudo-lemma '(no trigger)' with n1: 0.85 - 0.25 = 0.6 < 0.7
    assert ids(select_batch(pool, 2, diversity=0.5)) == ["n1", "t1"]


def test_the_penalty_is_a_share_of_the_chosen_records():
    pool = [cand("a1", "A", 0.9, lemmas=("x",)), cand("b1", "B", 0.89, lemmas=("y",)), cand("a2", "A", 0.88, lemmas=("z",)),
            cand("c1", "C", 0.5, lemmas=("w",))]
    chosen = select_batch(pool, 4, diversity=1.0)
    # after a1: a2 = 0.88 - (1/1 + 0) / 2 = 0.38 < b1 = 0.89; after a1, b1: a2 = 0.88 - (1/2 + 0) / 2 = 0.63 > c1 = 0.5
    assert ids(chosen) == ["a1", "b1", "a2", "c1"]
    assert [round(s, 6) for _, s in chosen] == [0.9, 0.89, 0.63, 0.5]


def test_near_duplicates_are_skipped():
    pool = [cand("a", "A", 0.9, "We left Caddow at dawn with the mules."),
            cand("b", "B", 0.85, "we left Caddow at dawn with the mules"),  # same normalised text
            cand("c", "C", 0.8, "We left Caddow at dawn with mules."),  # Jaccard 7/8 = 0.875
            cand("d", "D", 0.1, "The road runs north.")]
    assert ids(select_batch(pool, 3, diversity=0.0)) == ["a", "d"]  # the pool ran out: fewer than n


def test_near_duplicate_threshold():
    assert near_duplicates("We left Caddow at dawn.", "WE LEFT CADDOW AT DAWN!")
    assert near_duplicates("a b c d e f g h", "a b c d e f g i j") is False  # 7/10 = 0.7
    assert near_duplicates("a b c d", "a b c d e")  # 4/5 = 0.8: at the threshold counts
    assert near_duplicates("a b c", "d e f") is False
    assert near_duplicates("...", "!!!")  # no words on either side: same normalised text


def test_ties_go_to_the_smaller_id_whatever_the_input_order():
    pool = [cand(f"r{i}", f"D{i}", 0.5, lemmas=(f"l{i}",)) for i in range(6)]
    expected = ["r0", "r1", "r2"]
    for seed in range(5):
        shuffled = pool[:]
        random.Random(seed).shuffle(shuffled)
        assert ids(select_batch(shuffled, 3, diversity=0.5)) == expected


@pytest.mark.parametrize(("n", "diversity", "message"), [
    (0, 0.5, "n must be a positive whole number of records, got 0"),
    (2.5, 0.5, "n must be a positive whole number of records, got 2.5"),
    (2, 1.5, "diversity must lie in [0, 1], got 1.5"),
    (2, -0.1, "diversity must lie in [0, 1], got -0.1"),
])
def test_bad_options_are_refused(n, diversity, message):
    with pytest.raises(ConfigError) as caught:
        select_batch([cand("a", "A", 0.5)], n, diversity=diversity)
    assert caught.value.cause == message


# ---------------------------------------------------------------- suggest_batch on a small trained model


@pytest.fixture(scope="module")
def setting(nlp, demo_train, demo_test, tmp_path_factory):
    config = config_from_dict({
        "name": "small-crf",
        "parser": {"cache_dir": str(tmp_path_factory.getbasetemp() / "uncertainty-cache")},
        "trigger_model": {"kind": "crf", "iterations": 50},
        "role_model": {"kind": "crf", "iterations": 50},
    })
    training = read_corpus([demo_train / f"{name}.jsonl" for name in ("amsel-pilgrim-1", "brannick-log-1", "fairbeck-diary-1")]).records
    model = fit_extractor(training, config, nlp=nlp)
    pool = [Record(r.id, r.doc, r.text, None, {"source_line": i}) for i, r in enumerate(read_corpus([demo_test]).records)]
    docs, _ = parse_records(nlp, pool, config.parser)
    return model, pool, docs


@pytest.mark.slow
def test_suggested_records_carry_predictions_and_are_marked(setting, nlp):
    model, pool, docs = setting
    batch = suggest_batch(model, pool, 8, docs=docs, model_name="small.itin sha256:0123abcd")
    assert len(batch) == 8
    predicted = {r.id: r for r in predict_records(model, pool, docs=docs)}
    uncertainty = dict(zip((r.id for r in pool), record_uncertainty(model, pool, docs)))
    for rank, record in enumerate(batch, start=1):
        block = record.meta["itinerant"]
        assert block == {"provenance": "predicted", "uncertainty": round(uncertainty[record.id], 4), "rank": rank,
                         "model": "small.itin sha256:0123abcd", "measure": "least_confidence",
                         "prediction_digest": events_digest(record.events)}
        assert "source_line" in record.meta  # existing meta kept
        assert record.events == predicted[record.id].events  # pre-annotation = the model's prediction
        assert record.is_annotated
    assert batch[0].meta["itinerant"]["uncertainty"] == round(max(uncertainty.values()), 4)
    assert len({r.doc for r in batch}) == 2  # both held-out journals represented
    assert all(r.meta is not None and "itinerant" not in r.meta for r in pool)  # inputs untouched


@pytest.mark.slow
def test_suggest_is_deterministic_and_defaults_the_model_name(setting, nlp):
    model, pool, docs = setting
    first = suggest_batch(model, pool, 5, docs=docs, measure="entropy", diversity=0.3)
    again = suggest_batch(model, list(reversed(pool)), 5, docs=list(reversed(docs)), measure="entropy", diversity=0.3)
    assert [r.id for r in first] == [r.id for r in again]
    assert all(a.same_content(b) for a, b in zip(first, again))
    assert first[0].meta["itinerant"]["model"] == "small-crf"


@pytest.mark.slow
def test_without_diversity_the_ranking_is_by_uncertainty(setting):
    model, pool, docs = setting
    batch = suggest_batch(model, pool, 6, docs=docs, diversity=0.0)
    values = [r.meta["itinerant"]["uncertainty"] for r in batch]
    assert values == sorted(values, reverse=True)


@pytest.mark.slow
def test_annotated_records_are_refused(setting):
    model, pool, docs = setting
    mixed = [pool[0].with_events(()), pool[1], pool[2].with_events(())]
    with pytest.raises(CorpusError) as caught:
        suggest_batch(model, mixed, 2, docs=docs[:3])
    assert caught.value.cause == (f"2 record(s) are already annotated (they have 'events'): {pool[0].id}, {pool[2].id}")


def test_repeated_ids_and_bad_measure_are_refused_before_any_work():
    records = [Record("x", "d", "We left."), Record("x", "d", "We rode.")]
    with pytest.raises(CorpusError, match="1 id\\(s\\) occur more than once: x"):
        suggest_batch(None, records, 1)
    with pytest.raises(ConfigError, match="measure='margin' is not an uncertainty measure"):
        suggest_batch(None, records, 1, measure="margin")
    assert suggest_batch(None, [], 3) == []
