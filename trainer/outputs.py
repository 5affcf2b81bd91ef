"""Writing output files so that nothing is lost: checked first, written beside, renamed at the end.

Every file itinerant writes goes through :func:`atomic_output` (or the
small helpers on top of it; a cache shared by concurrent runs uses
:func:`write_shared_bytes`, the same write without the lock):

- the data goes to a temporary file in the target's folder, which replaces the
  target by a rename only once it is complete and flushed to disk, so an
  existing output stays intact until the new one is whole, and a crash or a
  kill leaves either the old file or the complete new one;
- a lock file ``<target>.lock`` holding the writer's process id makes a second
  concurrent writer fail with a message instead of interleaving (a lock left
  by a process that no longer runs is taken over);
- the finished file gets the permissions of a normally created file (``0666``
  minus the user's umask), not the ``0600`` of a temporary file.

:func:`check_output` runs before any work: it refuses an output that is also
an input, a folder named as a file (or a file named as a folder), and a place
that cannot be written, so a long training is never lost to a bad ``-o``.
"""

from __future__ import annotations

import errno
import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import IO, Iterable, Iterator

from trainer.errors import OutputError

LOCK_SUFFIX = ".lock"
_held: dict[Path, int] = {}  # lock files this process holds, with a re-entry count


def file_mode() -> int:
    """The mode a newly created file gets under the current umask (``0666 & ~umask``)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except OSError:
        return False


def _nearest_existing(path: Path) -> Path:
    path = path.absolute()
    while not path.exists() and path != path.parent:
        path = path.parent
    return path


def check_output(path: Path | str, *, inputs: Iterable[Path | str] = (), folder: bool = False,
                 what: str = "output") -> Path:
    """Refuse an output that is an input, the wrong kind of path, or not writable; return it as a Path.

    ``folder`` says the output is a folder (a report folder) rather than a file.
    Missing parent folders are fine when they can be created.
    """
    path = Path(path)
    for source in inputs:
        if _same_file(path, Path(source)):
            raise OutputError(f"{path}: the {what} is also an input; writing it would replace what is being read",
                              f"write the {what} somewhere else (another -o path)")
    if not folder and path.is_dir():
        raise OutputError(f"{path}: is a folder, but the {what} is a file", f"name a file, e.g. {path / 'out'}")
    if folder and path.exists() and not path.is_dir():
        raise OutputError(f"{path}: is a file, but the {what} is a folder", "name a folder (it is created if missing)")
    base = _nearest_existing(path if folder else path.parent)
    if not base.is_dir():
        raise OutputError(f"{path}: cannot be created because {base} is a file, not a folder",
                          f"choose a path for the {what} whose folders exist or can be created")
    try:
        fd, trial = tempfile.mkstemp(dir=base, prefix=".itinerant-write-check.", suffix=".tmp")
    except OSError as exc:
        raise OutputError(f"{path}: cannot write in {base} ({exc.strerror})",
                          f"choose a writable place for the {what}, or change the folder's permissions") from None
    os.close(fd)
    os.unlink(trial)
    return path


def lock_path(path: Path) -> Path:
    return path.with_name(path.name + LOCK_SUFFIX)


def _running(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _take(lock: Path) -> bool:
    """Create the lock file with our process id in one step (a hard link of a finished file), or say it exists."""
    fd, name = tempfile.mkstemp(dir=lock.parent, prefix=f".{lock.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="ascii") as handle:
            handle.write(f"{os.getpid()}\n")
        os.link(name, lock)
    except FileExistsError:
        return False
    finally:
        os.unlink(name)
    return True


def _holder(lock: Path) -> int | None:
    try:
        return int(lock.read_text(encoding="ascii").split()[0])
    except (OSError, ValueError, IndexError):
        return None


def _clear_stale(lock: Path, holder: int | None) -> bool:
    """Move aside a lock left by a process that has ended; False when another process took it meanwhile."""
    aside = lock.with_name(f".{lock.name}.stale.{os.getpid()}")
    try:
        os.rename(lock, aside)
    except FileNotFoundError:
        return True  # another process cleared it first; taking it decides who goes on
    try:
        if _holder(aside) != holder:  # a live lock taken between our look and the move: put it back
            try:
                os.link(aside, lock)
            except FileExistsError:
                pass
            return False
        return True
    finally:
        aside.unlink(missing_ok=True)


@contextmanager
def output_lock(path: Path | str) -> Iterator[Path]:
    """Hold ``<path>.lock`` while writing ``path``; a second writer gets an :class:`OutputError`.

    Re-entrant within one process, so a command can lock its output for the
    whole run and the final write can lock it again.
    """
    path = Path(path).absolute()
    lock = lock_path(path)
    if lock in _held:
        _held[lock] += 1
    else:
        try:
            lock.parent.mkdir(parents=True, exist_ok=True)
            taken = _take(lock)
        except OSError as exc:
            raise OutputError(f"{path}: cannot write in {lock.parent} ({exc.strerror})",
                              "choose a writable place for the output") from None
        if not taken:
            holder = _holder(lock)
            if holder is not None and holder != os.getpid() and _running(holder):
                raise OutputError(f"{path}: another itinerant process (pid {holder}) is writing it",
                                  f"wait for it to finish, or write elsewhere; if no such process runs, delete {lock}")
            if not (_clear_stale(lock, holder) and _take(lock)):
                raise OutputError(f"{path}: another process took the lock {lock} at the same moment",
                                  "run one writer at a time per output")
        _held[lock] = 1
    try:
        yield lock
    finally:
        _held[lock] -= 1
        if not _held[lock]:
            del _held[lock]
            lock.unlink(missing_ok=True)


def publish(handle: IO, temporary: Path, path: Path) -> None:
    """Flush a finished temporary file to disk, give it the umask's mode and rename it over ``path``."""
    handle.flush()
    os.fsync(handle.fileno())
    os.chmod(temporary, file_mode())
    os.replace(temporary, path)


def write_failed(path: Path, exc: OSError) -> OutputError:
    """The error for a write the disk refused half-way (full, quota, read-only, I/O error)."""
    return OutputError(f"{path}: writing failed ({exc.strerror or exc}); an earlier {path.name}, if any, is unchanged",
                       "free some space or choose another place for the output, then run again")


# What the disk answers when a write cannot go on; other errors are bugs and keep their traceback.
WRITE_ERRNOS = frozenset({errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EROFS, errno.EIO, errno.EACCES, errno.EPERM})


@contextmanager
def _replacing(path: Path, *, binary: bool) -> Iterator[IO]:
    """A handle on a temporary file beside ``path`` that replaces it when the block ends without an error."""
    fd, name = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    temporary = Path(name)
    try:
        handle = os.fdopen(fd, "wb") if binary else os.fdopen(fd, "w", encoding="utf-8", newline="\n")
        with handle:
            yield handle
            publish(handle, temporary, path)
    except OSError as exc:
        if exc.errno not in WRITE_ERRNOS:
            raise
        raise write_failed(path, exc) from None
    finally:
        temporary.unlink(missing_ok=True)


@contextmanager
def atomic_output(path: Path | str, *, binary: bool = False) -> Iterator[IO]:
    """Yield a handle whose contents replace ``path`` only when the block ends without an error."""
    path = check_output(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    with output_lock(path), _replacing(path, binary=binary) as handle:
        yield handle


def write_text(path: Path | str, text: str) -> Path:
    """Write UTF-8 text atomically (``\\n`` line ends kept as given); return the path."""
    with atomic_output(path) as out:
        out.write(text)
    return Path(path)


def refresh_generated(path: Path | str, text: str, *, check_only: bool = False) -> bool:
    """Bring a generated file up to date with ``text`` (written atomically); ``check_only`` only compares.

    Returns whether the file now holds ``text``: always true when writing, and
    with ``check_only`` false for a missing or stale file.
    """
    path = Path(path)
    if check_only:
        return path.is_file() and path.read_text(encoding="utf-8") == text
    write_text(path, text)
    return True


def write_bytes(path: Path | str, data: bytes) -> Path:
    """Write bytes atomically; return the path."""
    with atomic_output(path, binary=True) as out:
        out.write(data)
    return Path(path)


def write_shared_bytes(path: Path | str, data: bytes) -> Path:
    """Write bytes atomically into an existing folder, without the lock; return the path.

    For a cache that several runs may fill at once (the parse cache): a second
    writer is no error there, the last complete copy wins, and readers never
    see a half-written file.
    """
    path = Path(path)
    with _replacing(path, binary=True) as out:
        out.write(data)
    return path
