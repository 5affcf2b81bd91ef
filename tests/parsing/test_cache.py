"""The parse cache: served without the parser the second time, corruption never trusted, same parses.

`nlp` is the default pipeline, loaded once per session (tests/conftest.py).
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path
from typing import Sequence

import pytest
from spacy.language import Language
from spacy.tokens import Doc

import trainer.parsing.cache as cache_module
from trainer.config import ParserConfig
from trainer.corpus.records import Record
from trainer.parsing.cache import ParseCache, ParseStats, parse_with_cache, text_key
from trainer.parsing.parse import parse_records
from trainer.parsing.pipeline import parse_texts, pipeline_identity

TEXTS = [
    "We rode through the Sallow Gap to Quillon.",
    "On 3 May the mules went down to Kell Ferry with Colm Amsel. Then we slept.",
    "The brethren stood at the gate.",
]


@pytest.fixture()
def parser_calls(monkeypatch: pytest.MonkeyPatch) -> list[list[str]]:
    """The texts of every call the cache makes to the parser."""
    calls: list[list[str]] = []

    def counting(nlp: Language, texts: Sequence[str], **options: int) -> list[Doc]:
        calls.append(list(texts))
        return parse_texts(nlp, texts, **options)

    monkeypatch.setattr(cache_module, "parse_texts", counting)
    return calls


def annotations(doc: Doc) -> list[tuple]:
    """Everything a feature reads of a parse, token by token, plus the entity spans."""
    tokens = [
        (t.text, t.whitespace_, t.tag_, t.pos_, str(t.morph), t.lemma_, t.dep_, t.head.i, t.ent_iob_, t.ent_type_,
         t.is_sent_start)
        for t in doc
    ]
    return tokens + [(e.start, e.end, e.label_) for e in doc.ents]


def cache_folder(root: Path, nlp: Language) -> Path:
    return ParseCache(root, nlp).folder


def test_second_call_is_served_from_the_cache_without_the_parser(
    nlp: Language, tmp_path: Path, parser_calls: list[list[str]]
) -> None:
    first, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[])
    assert parser_calls == [TEXTS]

    second, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=3, parsed=0, rebuilt_shards=[])
    assert parser_calls == [TEXTS]  # no second call
    assert [annotations(d) for d in second] == [annotations(d) for d in first]


def test_only_new_texts_are_parsed_and_order_is_kept(
    nlp: Language, tmp_path: Path, parser_calls: list[list[str]]
) -> None:
    parse_with_cache(nlp, TEXTS[:2], cache_dir=tmp_path)
    docs, stats = parse_with_cache(nlp, [TEXTS[2], TEXTS[0], TEXTS[2]], cache_dir=tmp_path)
    assert parser_calls == [TEXTS[:2], [TEXTS[2]]]
    assert stats == ParseStats(cached=1, parsed=1, rebuilt_shards=[])
    assert [d.text for d in docs] == [TEXTS[2], TEXTS[0], TEXTS[2]]


def test_cached_parses_equal_fresh_parses(nlp: Language, tmp_path: Path) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    cached, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats.cached == 3
    fresh = parse_texts(nlp, TEXTS)
    assert [annotations(d) for d in cached] == [annotations(d) for d in fresh]
    assert [[s.text for s in d.sents] for d in cached] == [[s.text for s in d.sents] for d in fresh]
    assert [[c.text for c in d.noun_chunks] for d in cached] == [[c.text for c in d.noun_chunks] for d in fresh]
    assert [d.ents for d in fresh][1]  # the fixture does exercise entities
    assert all(d.vocab is nlp.vocab for d in cached)


def test_layout_index_and_shard(nlp: Language, tmp_path: Path) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    folder = cache_folder(tmp_path, nlp)
    index = json.loads((folder / "index.json").read_text(encoding="utf-8"))
    assert index["format"] == cache_module.CACHE_FORMAT
    assert index["pipeline"] == pipeline_identity(nlp)
    [shard] = index["shards"]
    assert sorted(p.name for p in folder.iterdir()) == sorted(["index.json", shard])
    assert index["entries"] == {text_key(t): [shard, i] for i, t in enumerate(TEXTS)}


def test_corrupted_shard_is_detected_and_rebuilt(nlp: Language, tmp_path: Path, parser_calls: list[list[str]]) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    folder = cache_folder(tmp_path, nlp)
    [shard] = json.loads((folder / "index.json").read_text(encoding="utf-8"))["shards"]
    data = bytearray((folder / shard).read_bytes())
    data[len(data) // 2] ^= 0xFF
    (folder / shard).write_bytes(bytes(data))

    docs, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[shard])
    assert parser_calls == [TEXTS, TEXTS]
    assert [annotations(d) for d in docs] == [annotations(d) for d in parse_texts(nlp, TEXTS)]

    # Shards are named by their digest: the same parses rewrite the same shard, now intact.
    index = json.loads((folder / "index.json").read_text(encoding="utf-8"))
    assert index["shards"] == {shard: hashlib.sha256((folder / shard).read_bytes()).hexdigest()}
    _, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=3, parsed=0, rebuilt_shards=[])  # the rebuilt cache is trusted again
    assert len(parser_calls) == 2


def test_missing_shard_is_rebuilt(nlp: Language, tmp_path: Path, parser_calls: list[list[str]]) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    folder = cache_folder(tmp_path, nlp)
    [shard] = json.loads((folder / "index.json").read_text(encoding="utf-8"))["shards"]
    (folder / shard).unlink()
    _, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[shard])


def test_shard_matching_its_digest_but_not_a_docbin_is_rebuilt(
    nlp: Language, tmp_path: Path, parser_calls: list[list[str]]
) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    folder = cache_folder(tmp_path, nlp)
    index = json.loads((folder / "index.json").read_text(encoding="utf-8"))
    [shard] = index["shards"]
    garbage = b"not a DocBin"
    (folder / shard).write_bytes(garbage)
    index["shards"][shard] = hashlib.sha256(garbage).hexdigest()
    (folder / "index.json").write_text(json.dumps(index), encoding="utf-8")
    _, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[shard])


@pytest.mark.parametrize(
    "change",
    [
        {"pipeline": "en_core_web_lg-3.8.0[tok2vec,tagger,parser,attribute_ruler,lemmatizer,ner]"},
        {"format": 0},
    ],
    ids=["other-pipeline", "other-format"],
)
def test_foreign_index_is_not_trusted(
    nlp: Language, tmp_path: Path, parser_calls: list[list[str]], change: dict
) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    index_path = cache_folder(tmp_path, nlp) / "index.json"
    index = json.loads(index_path.read_text(encoding="utf-8"))
    index.update(change)
    index_path.write_text(json.dumps(index), encoding="utf-8")

    docs, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[])
    assert parser_calls == [TEXTS, TEXTS]
    assert [annotations(d) for d in docs] == [annotations(d) for d in parse_texts(nlp, TEXTS)]
    rebuilt = json.loads(index_path.read_text(encoding="utf-8"))
    assert (rebuilt["format"], rebuilt["pipeline"]) == (cache_module.CACHE_FORMAT, pipeline_identity(nlp))


def test_unreadable_index_is_not_trusted(nlp: Language, tmp_path: Path, parser_calls: list[list[str]]) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    (cache_folder(tmp_path, nlp) / "index.json").write_text("{not json", encoding="utf-8")
    _, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[])


def test_other_active_components_use_another_cache_folder(
    nlp: Language, tmp_path: Path, parser_calls: list[list[str]]
) -> None:
    parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
    with nlp.select_pipes(disable=["ner"]):
        docs, stats = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path)
        folder_without_ner = cache_folder(tmp_path, nlp)
    assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[])
    assert [d.ents for d in docs] == [(), (), ()]
    assert folder_without_ner != cache_folder(tmp_path, nlp)
    assert len(parser_calls) == 2


def test_no_cache_dir_always_parses(nlp: Language, tmp_path: Path, parser_calls: list[list[str]]) -> None:
    records = [Record(id=f"r{i}", doc="d", text=t) for i, t in enumerate(TEXTS)]
    config = ParserConfig(cache_dir=str(tmp_path / "cache"), use_cache=False)
    for _ in range(2):
        docs, stats = parse_records(nlp, records, config)
        assert stats == ParseStats(cached=0, parsed=3, rebuilt_shards=[])
    assert parser_calls == [TEXTS, TEXTS]
    assert not (tmp_path / "cache").exists()


def test_parse_records_goes_through_the_cache(nlp: Language, tmp_path: Path, parser_calls: list[list[str]]) -> None:
    records = [Record(id=f"r{i}", doc="d", text=t) for i, t in enumerate(TEXTS)]
    config = ParserConfig(cache_dir=str(tmp_path))
    parse_records(nlp, records, config)
    docs, stats = parse_records(nlp, records, config)
    assert stats == ParseStats(cached=3, parsed=0, rebuilt_shards=[])
    assert [d.text for d in docs] == TEXTS
    assert parser_calls == [TEXTS]


def test_a_cache_that_cannot_be_written_is_left_out_not_fatal(nlp: Language, tmp_path: Path) -> None:
    blocked = tmp_path / "a-file"
    blocked.write_text("not a folder\n", encoding="utf-8")
    docs, stats = parse_with_cache(nlp, TEXTS, cache_dir=blocked / "cache")
    assert [annotations(d) for d in docs] == [annotations(d) for d in parse_texts(nlp, TEXTS)]
    assert stats.parsed == 3 and stats.unwritable.startswith(str(blocked / "cache"))
    _, fine = parse_with_cache(nlp, TEXTS, cache_dir=tmp_path / "cache")
    assert fine.unwritable == ""
