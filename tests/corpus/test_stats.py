"""Corpus statistics: exact counts on a small corpus, and the demo corpus meets its targets."""

from __future__ import annotations

from trainer.corpus.convert.inline import parse_inline
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Record
from trainer.corpus.stats import corpus_stats


def small():
    lines = [
        "[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].",
        "The road runs north.",
        "[The mules|mover1] [crossed|T1] [the Aun|path1].",
    ]
    recs = [parse_inline(t, record_id=f"r{i}", doc="a" if i < 2 else "b") for i, t in enumerate(lines)]
    return recs + [Record("u", "b", "Unread.", events=None)]


def test_counts_on_a_small_corpus():
    stats = corpus_stats(small())
    assert (stats.records, stats.docs, stats.annotated, stats.negative, stats.unannotated) == (4, 2, 3, 1, 1)
    assert stats.events == 3
    assert stats.role_counts == {"mover": 3, "source": 1, "path": 1, "destination": 1}
    assert stats.events_per_record == {0: 1, 1: 1, 2: 1}
    assert stats.trigger_lemmas == {"crossed": 1, "left": 1, "rode": 1}
    assert stats.span_words["mover"] == {"mean": 4 / 3, "max": 2}
    assert stats.records_per_doc == {"a": 2, "b": 2}
    text = stats.to_text()
    assert "records: 4 in 2 doc(s)" in text and "negative: 1 (25%)" in text


def test_lemmatizer_is_used_when_given():
    stats = corpus_stats(small(), lemmatize=lambda record, span: record.span_text(span)[:3])
    assert stats.lemma_source == "parser lemmas"
    assert stats.trigger_lemmas == {"cro": 1, "lef": 1, "rod": 1}


def test_demo_corpus_meets_the_numbers_it_promises(demo_train, demo_test, nlp):
    from trainer.parsing.pipeline import trigger_lemmatizer

    corpus = read_corpus([demo_train, demo_test])
    assert not corpus.skipped and not corpus.warnings
    stats = corpus_stats(corpus.records, lemmatize=trigger_lemmatizer(nlp, corpus.records))
    assert stats.annotated >= 600 and stats.docs >= 12
    assert 0.30 <= stats.negative / stats.annotated <= 0.45
    assert stats.events >= 450
    assert len(stats.trigger_lemmas) >= 80
    assert min(stats.role_counts.values()) >= 150
    assert stats.events_per_record.get(2, 0) + stats.events_per_record.get(3, 0) >= 50  # several events per sentence


def test_the_summary_of_no_records_says_none_instead_of_ending_lines_empty():
    text = corpus_stats([]).to_text()
    assert text.splitlines()[0] == "records: 0 in 0 doc(s)"
    assert not [line for line in text.splitlines() if line.rstrip().endswith(":")]
    assert "records per doc: none" in text and "most frequent: none" in text
