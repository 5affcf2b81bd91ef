"""Auxiliary corpora: read, named, and never sharing a doc or a record with the target corpus."""

from __future__ import annotations

from pathlib import Path

import pytest

from trainer.config import add_auxiliary, config_from_dict, load_config
from trainer.corpus.auxiliary import PACKAGED_CORPORA, packaged_corpus_path, read_auxiliary
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import ConfigError

ROOT = Path(__file__).resolve().parents[2]


def _record(record_id: str, doc: str) -> Record:
    return Record(id=record_id, doc=doc, text="We left Caddow.",
                  events=(Event(trigger=(3, 7), roles=(RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14)))),))


def test_records_sharing_a_doc_or_an_id_with_the_target_are_left_out_and_counted(tmp_path: Path) -> None:
    path = tmp_path / "other-book.jsonl"
    write_jsonl([_record("a-s001", "a-1"), _record("b-s001", "b-1"), _record("t-s009", "c-1")], path)
    target = [_record("t-s001", "b-1"), _record("t-s009", "t-1")]
    (corpus,) = read_auxiliary([str(path)], target=target)
    assert [r.id for r in corpus.records] == ["a-s001"]
    assert (corpus.name, corpus.left_out) == ("other-book", 2)
    assert corpus.to_dict()["records"] == 1 and corpus.to_dict()["left_out_shared_with_target"] == 2


def test_an_auxiliary_corpus_with_other_roles_joins_with_those_spans_left_out_and_counted(tmp_path: Path) -> None:
    path = tmp_path / "earlier-project.jsonl"
    other = Record(id="e-s002", doc="e-1", text="We rode to Quillon by cart.",
                   events=(Event(trigger=(3, 7), roles=(RoleSpan("mover", (0, 2)), RoleSpan("destination", (11, 18)),
                                                         RoleSpan("vehicle", (22, 26)))),))
    write_jsonl([_record("e-s001", "e-1"), other], path)
    assert read_corpus([path], roles=None).records[1] == other  # read with any role name, as written
    (corpus,) = read_auxiliary([str(path)], target=[], roles=("mover", "destination"))
    assert corpus.roles_left_out == {"source": 1, "vehicle": 1}
    assert corpus.to_dict()["role_spans_left_out"] == {"source": 1, "vehicle": 1}
    first, second = corpus.records
    assert [e.trigger for e in first.events] == [(3, 7)] and [r.role for r in first.events[0].roles] == ["mover"]
    assert [(r.role, r.span) for r in second.events[0].roles] == [("mover", (0, 2)), ("destination", (11, 18))]
    (same,) = read_auxiliary([str(path)], target=[], roles=("mover", "source", "destination", "vehicle"))
    assert same.roles_left_out == {} and same.records[1] == other


def test_unreviewed_pre_annotations_never_join_training(tmp_path: Path) -> None:
    path = tmp_path / "batch.jsonl"
    unreviewed = Record(id="p-s001", doc="p-1", text="We left Caddow.", events=(),
                        meta={"itinerant": {"provenance": "predicted"}})
    write_jsonl([unreviewed, _record("g-s001", "g-1")], path)
    (corpus,) = read_auxiliary([str(path)], target=[])
    assert [r.id for r in corpus.records] == ["g-s001"]


def test_two_sources_with_one_stem_get_distinct_names(tmp_path: Path) -> None:
    (tmp_path / "x").mkdir()
    (tmp_path / "y").mkdir()
    write_jsonl([_record("a-s001", "a-1")], tmp_path / "x" / "train.jsonl")
    write_jsonl([_record("b-s001", "b-1")], tmp_path / "y" / "train.jsonl")
    corpora = read_auxiliary([str(tmp_path / "x" / "train.jsonl"), str(tmp_path / "y" / "train.jsonl")], target=[])
    assert [c.name for c in corpora] == ["train", "train2"]


def test_the_packaged_demo_corpus_is_the_demo_training_and_auxiliary_journals() -> None:
    packaged = read_corpus([packaged_corpus_path("demo")]).records
    train = read_corpus([ROOT / "demo_annotations" / "train"]).records
    auxiliary = read_corpus([ROOT / "demo_annotations" / "auxiliary"]).records
    assert packaged == train + auxiliary and (len(train), len(auxiliary)) == (656, 792)
    # Used as auxiliary corpus of the demo's training journals, only the auxiliary journals join.
    (corpus,) = read_auxiliary(["packaged:demo"], target=train)
    assert corpus.records == auxiliary and corpus.left_out == 656


def test_an_unknown_packaged_corpus_is_refused() -> None:
    with pytest.raises(ConfigError, match="no packaged corpus named 'atlas'") as caught:
        packaged_corpus_path("atlas")
    assert "packaged:demo" in caught.value.fix and set(PACKAGED_CORPORA) == {"demo"}


def test_config_paths_resolve_from_the_config_folder_and_command_line_ones_from_the_working_folder(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    config_path = tmp_path / "exp.toml"
    config_path.write_text('[auxiliary]\ncorpora = ["books/old", "packaged:demo"]\naugment = true\n', encoding="utf-8")
    config = load_config(config_path)
    assert config.auxiliary.corpora == [str(tmp_path / "books" / "old"), "packaged:demo"]
    monkeypatch.chdir(tmp_path)
    more = add_auxiliary(config, ["extra.jsonl", "packaged:demo"], augment=False)
    assert more.auxiliary.corpora == [str(tmp_path / "books" / "old"), "packaged:demo", str(tmp_path / "extra.jsonl")]
    assert (more.auxiliary.augment, config.auxiliary.augment) == (False, True)
    assert add_auxiliary(config_from_dict({})).auxiliary.corpora == []


def test_auxiliary_corpora_must_be_paths() -> None:
    with pytest.raises(ConfigError, match="'auxiliary.corpora' must list file or folder paths"):
        config_from_dict({"auxiliary": {"corpora": ["packaged:demo", 3]}}, "x.toml")
    with pytest.raises(ConfigError, match="'auxiliary.augment' must be bool"):
        config_from_dict({"auxiliary": {"augment": "yes"}}, "x.toml")
    with pytest.raises(ConfigError, match="'auxiliary.augment_if_conventions_differ' must be bool"):
        config_from_dict({"auxiliary": {"augment_if_conventions_differ": "auto"}}, "x.toml")


def test_augment_on_the_command_line_settles_whether_conventions_are_checked() -> None:
    checking = config_from_dict({"auxiliary": {"corpora": ["packaged:demo"], "augment_if_conventions_differ": True}})
    kept = add_auxiliary(checking)  # no --augment / --no-augment: the config's own choice stands
    assert (kept.auxiliary.augment, kept.auxiliary.augment_if_conventions_differ) == (False, True)
    always = add_auxiliary(checking, augment=True)
    never = add_auxiliary(checking, augment=False)
    assert (always.auxiliary.augment, never.auxiliary.augment) == (True, False)
    assert not always.auxiliary.augment_if_conventions_differ and not never.auxiliary.augment_if_conventions_differ
    assert load_config(ROOT / "configs" / "default.toml").auxiliary.augment_if_conventions_differ
