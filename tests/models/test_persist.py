"""Model files: digest checked before unpickling; tampered, truncated and foreign files refused."""

from __future__ import annotations

import pytest

from trainer.errors import ModelFileError
from trainer.models import persist
from trainer.models.persist import digest_path, load_model, read_metadata, save_model


@pytest.fixture
def model_file(tmp_path):
    path = tmp_path / "m.itin"
    save_model({"weights": [1, 2, 3]}, path, {"kind": "test", "roles": ["mover"]})
    return path


def test_round_trip_keeps_model_and_metadata(model_file):
    loaded = load_model(model_file)
    assert loaded.model == {"weights": [1, 2, 3]}
    assert loaded.metadata["kind"] == "test"
    assert loaded.metadata["format_version"] == persist.FORMAT_VERSION
    assert set(persist.TRACKED_PACKAGES) <= set(loaded.metadata["versions"])
    assert digest_path(model_file).read_text().split()[1] == "m.itin"


def test_changed_bytes_fail_with_the_digest_message(model_file):
    data = bytearray(model_file.read_bytes())
    data[-10] ^= 0xFF
    model_file.write_bytes(bytes(data))
    with pytest.raises(ModelFileError, match="SHA-256 digest mismatch"):
        load_model(model_file)


def test_truncated_file_is_refused(model_file):
    model_file.write_bytes(model_file.read_bytes()[:50])
    with pytest.raises(ModelFileError, match="digest mismatch"):
        load_model(model_file)


def test_missing_digest_and_foreign_files_are_refused(tmp_path, model_file):
    good = digest_path(model_file).read_text()
    digest_path(model_file).write_text("garbage\n")
    with pytest.raises(ModelFileError, match=r"line 1 of the digest file m.itin.sha256 is not `<SHA-256 in hex>  <file name>`"):
        load_model(model_file)
    renamed = model_file.with_name("copy.itin")
    renamed.write_bytes(model_file.read_bytes())
    digest_path(renamed).write_text(good)
    with pytest.raises(ModelFileError, match=r"is for another file \('m.itin'\)") as raised:
        load_model(renamed)
    assert "give it its name back (m.itin) or write its new name in place of the old one" in raised.value.fix
    digest_path(renamed).write_text(good.replace("m.itin", "copy.itin"))
    assert load_model(renamed).model == {"weights": [1, 2, 3]}  # the renamed copy loads once its digest names it
    digest_path(model_file).unlink()
    with pytest.raises(ModelFileError, match="no digest file m.itin.sha256 beside it"):
        load_model(model_file)
    foreign = tmp_path / "foreign.itin"
    foreign.write_bytes(b"\x80\x04K\x01.")  # a pickle, but not ours
    import hashlib

    digest_path(foreign).write_text(hashlib.sha256(foreign.read_bytes()).hexdigest() + "  foreign.itin\n")
    with pytest.raises(ModelFileError, match="not an itinerant model file"):
        read_metadata(foreign)


def test_version_mismatch_warns(model_file, monkeypatch):
    real = persist.library_versions()
    monkeypatch.setattr(persist, "library_versions", lambda: {**real, "scikit-learn": "0.0.1"})
    with pytest.warns(UserWarning, match=r"scikit-learn .* -> 0.0.1"):
        load_model(model_file)


def test_interrupted_write_leaves_the_old_file_intact(model_file, monkeypatch):
    before = model_file.read_bytes()

    def explode(*args, **kwargs):
        raise KeyboardInterrupt

    from trainer import outputs

    monkeypatch.setattr(outputs.os, "fsync", explode)
    with pytest.raises(KeyboardInterrupt):
        save_model({"weights": "new"}, model_file, {"kind": "test"})
    assert model_file.read_bytes() == before
    assert sorted(p.name for p in model_file.parent.iterdir()) == ["m.itin", "m.itin.sha256"]
    assert load_model(model_file).model == {"weights": [1, 2, 3]}


def _sign(path):
    import hashlib

    digest_path(path).write_text(f"{hashlib.sha256(path.read_bytes()).hexdigest()}  {path.name}\n")


def test_a_folder_named_as_the_model_is_refused(tmp_path):
    with pytest.raises(ModelFileError, match="is a folder, not a model file") as caught:
        load_model(tmp_path)
    assert caught.value.exit_code == 2


def test_a_digest_file_naming_another_file_is_refused(tmp_path, model_file):
    other = tmp_path / "other.itin"
    other.write_bytes(model_file.read_bytes())
    digest_path(other).write_text(digest_path(model_file).read_text())  # right digest, but it names m.itin
    with pytest.raises(ModelFileError, match=r"the digest file other.itin.sha256 is for another file \('m.itin'\)"):
        load_model(other)


def test_a_garbage_payload_with_a_valid_digest_is_refused_not_crashed(tmp_path):
    garbage = tmp_path / "g.itin"
    garbage.write_bytes(persist.MAGIC + b" 1\n" + b'{"format_version": 1, "versions": {}}\n' + b"not a pickle at all")
    _sign(garbage)
    with pytest.raises(ModelFileError, match="the model payload cannot be read"):
        load_model(garbage)


def test_a_payload_that_is_not_an_extractor_is_refused(model_file):
    from trainer.models.training import load_extractor

    with pytest.raises(ModelFileError, match="holds a dict, not an extractor"):
        load_extractor(model_file)


def test_a_kill_between_the_model_and_its_digest_still_leaves_a_loadable_pair(model_file, monkeypatch):
    from trainer import outputs

    written = []
    real = outputs.os.replace

    def killed_after_the_model(source, target):  # the process dies right after the model's rename
        real(source, target)
        written.append(str(target))
        if str(target) == str(model_file):
            raise KeyboardInterrupt

    monkeypatch.setattr(outputs.os, "replace", killed_after_the_model)
    with pytest.raises(KeyboardInterrupt):
        save_model({"weights": "new"}, model_file, {"kind": "test"})
    assert written == [str(digest_path(model_file)), str(model_file)]
    assert len(digest_path(model_file).read_text().splitlines()) == 2  # old and new digests, both for m.itin
    assert load_model(model_file).model == {"weights": "new"}
    monkeypatch.setattr(outputs.os, "replace", real)
    save_model({"weights": "newer"}, model_file, {"kind": "test"})
    assert len(digest_path(model_file).read_text().splitlines()) == 1
    assert load_model(model_file).model == {"weights": "newer"}
