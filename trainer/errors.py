"""The package's error classes.

Every error a user can cause is an :class:`ItinerantError`: its message says
what is wrong, where, and what to do. The CLI prints the message and exits
with ``exit_code``, with no traceback; anything else is a bug and keeps its
traceback.
"""

from __future__ import annotations

from contextlib import contextmanager
from pathlib import Path
from typing import Iterator


class ItinerantError(Exception):
    """Base class: a problem the user can fix. ``exit_code`` is what the CLI returns."""

    exit_code = 1

    def __init__(self, cause: str, fix: str = "") -> None:
        self.cause = cause
        self.fix = fix
        super().__init__(f"{cause}\n  fix: {fix}" if fix else cause)

    def __reduce__(self):  # raised in a worker process and re-raised in the parent with its cause and fix apart
        return type(self), (self.cause, self.fix)


class UnreadableInputError(ItinerantError):
    """A file could not be opened or decoded at all."""

    exit_code = 2


class CorpusError(ItinerantError):
    """A corpus has errors and the caller did not ask to skip bad records."""

    exit_code = 1


class ConfigError(ItinerantError):
    """An experiment config has an unknown key or a value out of range."""

    exit_code = 2


class PipelineNotFoundError(ItinerantError):
    """The requested spaCy pipeline is not installed."""

    exit_code = 2


class ModelFileError(ItinerantError):
    """A model file is missing, altered, truncated or not ours."""

    exit_code = 2


class NotFittedError(ItinerantError):
    """A model was asked to predict before it was fitted."""

    exit_code = 2


class OutputError(ItinerantError):
    """An output that would replace an input, is the wrong kind of path, cannot be written, or is being written."""

    exit_code = 2


class WorkerLostError(ItinerantError):
    """A worker process ended abruptly (killed, out of memory) while it extracted part of a book."""

    exit_code = 1


class StaleCopyError(ItinerantError):
    """A change was made on an older copy of a file than the one on disk (two tabs, or an edit elsewhere)."""

    exit_code = 1


class UnknownFormatError(ItinerantError):
    """A format name (or a file extension standing for one) that no converter handles."""

    exit_code = 2


class GazetteerError(ItinerantError):
    """A gazetteer file has missing columns, bad numbers, out-of-range coordinates or clashing names."""

    exit_code = 1


class TableFormatError(UnknownFormatError):
    """A table (an event table, an itinerary, a gazetteer) was given a file name that names no table format."""

    exit_code = 2


class GateInputError(ItinerantError):
    """A report or baseline that cannot be compared (exit code 2)."""

    exit_code = 2


class NoUncertaintyError(ItinerantError):
    """The model has a stage (the rule baseline) that gives no probabilities to measure uncertainty with."""

    exit_code = 2


class StrictJSONError(ItinerantError):
    """Text that is not one clean JSON value (``fix`` says what to do).

    Raised by :func:`trainer.corpus.validate.strict_loads`; the readers catch it
    and report it with the file, line and field it was found in.
    """

    exit_code = 1


@contextmanager
def opening(path: Path | str, *, expected: str, what: str = "file", missing_fix: str = "check the path",
            error: type[ItinerantError] = UnreadableInputError) -> Iterator[None]:
    """Turn the operating system's refusals to open ``path`` into a located error the CLI prints.

    Missing: ``<path>: no such <what>``; a folder: ``<path>: is a folder, not a <what>`` with the fix
    ``name <expected>``; any other refusal (permissions, a device): ``<path>: cannot open (<reason>)``.
    Wrap only the opening or reading call, so errors of the caller's own work pass through.
    """
    try:
        yield
    except FileNotFoundError:
        raise error(f"{path}: no such {what}", missing_fix) from None
    except IsADirectoryError:
        raise error(f"{path}: is a folder, not a {what}", f"name {expected}") from None
    except OSError as exc:
        raise error(f"{path}: cannot open ({exc.strerror})", "check the path and permissions") from None
