"""Reading a corpus for training, prediction or evaluation.

Unlike :func:`trainer.corpus.validate.check_files`, which reports, this reader
decides: a corpus with errors is refused unless the caller asks to skip bad
records, and then every skipped record is named and counted.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterable, Iterator, Sequence

from trainer.corpus.jsonl import iter_lines, record_to_dict
from trainer.corpus.provenance import training_records
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.corpus.validate import Problem, check_files, check_line
from trainer.errors import CorpusError, UnreadableInputError

MAX_LISTED = 20


@dataclass
class Corpus:
    """Usable records plus what was skipped or warned about on the way in."""

    records: list[Record]
    files: list[Path]
    skipped: list[Problem] = field(default_factory=list)
    warnings: list[Problem] = field(default_factory=list)

    @property
    def docs(self) -> list[str]:
        """Document names in first-seen order."""
        return list(dict.fromkeys(r.doc for r in self.records))

    def annotated(self) -> list[Record]:
        """Records that carry annotation (including negatives), whatever their provenance."""
        return [r for r in self.records if r.is_annotated]

    def training_records(self) -> tuple[list[Record], list[str]]:
        """Annotated records a model may learn from, and the ids of unreviewed pre-annotations refused."""
        return training_records(self.records)


def expand_paths(paths: Iterable[Path | str], pattern: str = "*.jsonl") -> list[Path]:
    """Files named directly plus the sorted matches of ``pattern`` in named folders."""
    files: list[Path] = []
    for path in map(Path, paths):
        if path.is_dir():
            found = sorted(path.glob(pattern))
            if not found:
                raise UnreadableInputError(f"{path}: folder holds no {pattern} files", "name the files or another folder")
            files.extend(found)
        else:
            files.append(path)
    return files


def read_corpus(
    paths: Sequence[Path | str], *, roles: tuple[str, ...] | None = DEFAULT_ROLES, skip_bad: bool = False,
    skippable: bool = True,
) -> Corpus:
    """Read canonical JSONL files or folders of them into a :class:`Corpus`.

    ``roles`` is the role inventory; ``None`` accepts any role name.

    Raises :class:`CorpusError` listing the errors when any record is bad and
    ``skip_bad`` is false; its fix names ``--skip-bad`` only when ``skippable``
    (the command offers that option).
    """
    files = expand_paths(paths)
    check = check_files(files, roles)
    errors = check.errors
    if errors and not skip_bad:
        shown = "\n".join(str(p) for p in errors[:MAX_LISTED])
        more = f"\n... and {len(errors) - MAX_LISTED} more" if len(errors) > MAX_LISTED else ""
        raise CorpusError(
            f"{len(errors)} error(s) in {check.bad_records} record(s):\n{shown}{more}",
            "fix them (run `itinerant check` for the full list)"
            + (" or pass --skip-bad to leave those records out" if skippable else ""),
        )
    return Corpus(records=[r for _, _, r in check.records], files=files, skipped=errors, warnings=check.warnings)


def iter_records(
    path: Path, *, roles: tuple[str, ...] = DEFAULT_ROLES, skip_bad: bool = False, skipped: list[Problem] | None = None
) -> Iterator[Record]:
    """Stream the records of one JSONL file, validating line by line (memory stays flat).

    The first bad record raises :class:`CorpusError` unless ``skip_bad``; then
    its errors are appended to ``skipped`` and reading goes on. Duplicate ids
    are caught as in :func:`read_corpus`.
    """
    seen: set[str] = set()
    for number, line in iter_lines(Path(path)):
        check = check_line(str(path), number, line, roles, seen)
        if check.errors:
            if not skip_bad:
                raise CorpusError("\n".join(str(p) for p in check.errors), "fix the record or pass --skip-bad to leave it out")
            if skipped is not None:
                skipped.extend(check.errors)
            continue
        yield check.records[0][2]


def skipped_summary(corpus: Corpus) -> str:
    """One line per skipped record plus a count, for the user to see what was left out."""
    by_line = {(p.file, p.line): p for p in corpus.skipped}
    lines = [f"skipped {p.file}:{p.line} (id {p.record_id or '?'}): {p.field}: {p.message}" for p in by_line.values()]
    return "\n".join(lines + [f"{len(by_line)} record(s) skipped"])


def fingerprint(records: Iterable[Record]) -> str:
    """A SHA-256 over the canonical form of the records (order-sensitive, meta excluded)."""
    digest = hashlib.sha256()
    for record in records:
        obj = record_to_dict(record)
        obj.pop("meta", None)
        digest.update(json.dumps(obj, sort_keys=True, ensure_ascii=False).encode("utf-8"))
        digest.update(b"\n")
    return digest.hexdigest()
