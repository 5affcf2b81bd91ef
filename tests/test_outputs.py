"""Output files: checked before work, written beside and renamed, locked against a second writer, umask kept."""

from __future__ import annotations

import os
import stat
import subprocess
import sys

import pytest

from trainer import outputs
from trainer.errors import OutputError
from trainer.outputs import atomic_output, check_output, file_mode, lock_path, output_lock, refresh_generated, write_text

UNWRITABLE = "/proc/itinerant-output-test"  # Linux refuses new files in /proc, even to root


def leftovers(folder):
    return sorted(p.name for p in folder.iterdir())


def test_an_atomic_write_replaces_the_file_and_leaves_nothing_beside_it(tmp_path):
    target = tmp_path / "out.jsonl"
    target.write_text("old\n")
    write_text(target, "new\n")
    assert target.read_text() == "new\n"
    assert leftovers(tmp_path) == ["out.jsonl"]


def test_a_write_that_fails_half_way_keeps_the_old_file(tmp_path):
    target = tmp_path / "out.jsonl"
    target.write_text("old\n")
    with pytest.raises(RuntimeError):
        with atomic_output(target) as out:
            out.write("half of the new")
            raise RuntimeError("disk gone")
    assert target.read_text() == "old\n"
    assert leftovers(tmp_path) == ["out.jsonl"]  # temporary file and lock removed


@pytest.mark.parametrize("mask, mode", [(0o022, 0o644), (0o002, 0o664), (0o077, 0o600)])
def test_written_files_follow_the_umask(tmp_path, mask, mode):
    # 0666 & ~umask is what open(2) gives a new file (POSIX open(), common practice)
    old = os.umask(mask)
    try:
        assert file_mode() == mode
        target = write_text(tmp_path / "out.tsv", "x\n")
    finally:
        os.umask(old)
    assert stat.S_IMODE(target.stat().st_mode) == mode


def test_an_output_equal_to_an_input_is_refused_also_by_another_spelling(tmp_path, monkeypatch):
    source = tmp_path / "corpus.jsonl"
    source.write_text("{}\n")
    monkeypatch.chdir(tmp_path)
    with pytest.raises(OutputError, match="the model file is also an input") as caught:
        check_output("./sub/../corpus.jsonl", inputs=[source], what="model file")
    assert caught.value.exit_code == 2
    link = tmp_path / "link.jsonl"
    link.symlink_to(source)
    with pytest.raises(OutputError, match="also an input"):
        check_output(link, inputs=[source])


def test_a_folder_named_as_a_file_and_a_file_named_as_a_folder_are_refused(tmp_path):
    with pytest.raises(OutputError, match="is a folder, but the output is a file"):
        check_output(tmp_path)
    afile = tmp_path / "a.txt"
    afile.write_text("x")
    with pytest.raises(OutputError, match="is a file, but the report folder is a folder"):
        check_output(afile, folder=True, what="report folder")
    with pytest.raises(OutputError, match=f"because {afile} is a file, not a folder"):
        check_output(afile / "out.jsonl")


def test_a_place_that_cannot_be_written_is_found_before_any_work(tmp_path):
    with pytest.raises(OutputError, match="cannot write in /proc"):
        check_output(f"{UNWRITABLE}/out.jsonl")
    assert check_output(tmp_path / "new" / "deeper" / "out.jsonl") == tmp_path / "new" / "deeper" / "out.jsonl"
    assert not (tmp_path / "new").exists()  # the check creates nothing
    assert leftovers(tmp_path) == []


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders; the /proc case covers it")
def test_a_read_only_folder_is_refused(tmp_path):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o555)
    try:
        with pytest.raises(OutputError, match="cannot write in .*Permission denied"):
            check_output(folder / "out.jsonl")
    finally:
        folder.chmod(0o755)


def test_a_second_writer_is_refused_while_the_first_holds_the_lock(tmp_path):
    target = tmp_path / "out.jsonl"
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        lock_path(target).write_text(f"{sleeper.pid}\n")
        with pytest.raises(OutputError, match=f"another itinerant process \\(pid {sleeper.pid}\\) is writing"):
            write_text(target, "mine\n")
        assert not target.exists()
    finally:
        sleeper.kill()
        sleeper.wait()


def test_a_lock_left_by_a_process_that_ended_is_taken_over(tmp_path):
    target = tmp_path / "out.jsonl"
    ended = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    lock_path(target).write_text(ended.stdout)
    write_text(target, "mine\n")
    assert target.read_text() == "mine\n"
    assert not lock_path(target).exists()


def test_the_lock_is_reentrant_within_one_process_and_released_at_the_end(tmp_path):
    target = tmp_path / "model.itin"
    with output_lock(target) as lock:
        assert lock.read_text().strip() == str(os.getpid())
        write_text(target, "inner\n")
        assert lock.exists()
    assert not lock.exists()
    assert outputs._held == {}


def test_a_full_disk_is_a_message_and_the_old_file_stays(tmp_path, monkeypatch):
    import errno

    target = tmp_path / "out.jsonl"
    target.write_text("old\n")

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(outputs.os, "fsync", full)  # the disk gives up as the file is flushed
    with pytest.raises(OutputError, match="out.jsonl: writing failed \\(No space left on device\\); an earlier "
                                          "out.jsonl, if any, is unchanged") as caught:
        write_text(target, "new\n")
    assert caught.value.exit_code == 2
    assert target.read_text() == "old\n" and leftovers(tmp_path) == ["out.jsonl"]


def test_a_live_lock_taken_while_a_stale_one_is_cleared_is_put_back(tmp_path):
    target = tmp_path / "out.jsonl"
    lock = lock_path(target)
    lock.write_text(f"{os.getpid()}\n")  # as if another writer had just taken over the stale lock
    assert outputs._clear_stale(lock, holder=999999999) is False  # we saw a dead pid; the file now holds a live one
    assert lock.read_text() == f"{os.getpid()}\n"
    assert leftovers(tmp_path) == ["out.jsonl.lock"]
    assert outputs._clear_stale(lock, holder=os.getpid()) is True and leftovers(tmp_path) == []


def test_refresh_generated_compares_when_checking_and_writes_otherwise(tmp_path):
    path = tmp_path / "out.jsonl"
    assert refresh_generated(path, "a\n", check_only=True) is False and not path.exists()
    assert refresh_generated(path, "a\n") is True and path.read_text(encoding="utf-8") == "a\n"
    assert refresh_generated(path, "a\n", check_only=True) is True
    assert refresh_generated(path, "b\n", check_only=True) is False and path.read_text(encoding="utf-8") == "a\n"
