"""Auxiliary corpora: annotations of other books that join every training set and are never scored.

A team starting a new book usually has annotations of other books (the demo
corpus, an earlier project). Those records are added to the training records
of every fold and of ``fit``; held-out folds stay the target corpus's own docs.
A record of an auxiliary corpus whose doc or id also occurs in the target
corpus is left out (and counted), so a corpus can never leak into its own
evaluation, e.g. when the packaged demo corpus is both target and auxiliary.

Sources are JSONL files or folders, or ``packaged:<name>`` for a corpus that
ships inside itinerant (:data:`PACKAGED_CORPORA`).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any, Sequence

from trainer.corpus.reader import fingerprint, read_corpus
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.errors import ConfigError, UnreadableInputError

PACKAGED_PREFIX = "packaged:"
TARGET_DOMAIN = "target"  # the name of the corpus being trained on, beside the auxiliary corpora's names
# name -> (file inside trainer/data, what it is)
PACKAGED_CORPORA: dict[str, tuple[str, str]] = {
    "demo": ("demo-train.jsonl", "the invented demo corpus's training journals, as in demo_annotations/train"),
}


@dataclass
class AuxiliaryCorpus:
    """One auxiliary corpus as it joins training: its domain name, source and usable records."""

    name: str
    source: str
    records: list[Record]
    fingerprint: str
    left_out: int = 0
    roles_left_out: dict[str, int] = field(default_factory=dict)  # role spans outside the target's inventory, by role

    def to_dict(self) -> dict[str, Any]:
        """What a model file's metadata and a report say about it."""
        return {"name": self.name, "source": self.source, "records": len(self.records),
                "docs": len({r.doc for r in self.records}), "fingerprint": self.fingerprint,
                "left_out_shared_with_target": self.left_out, "role_spans_left_out": dict(self.roles_left_out)}


def packaged_name(source: str) -> str | None:
    """The corpus name of a ``packaged:<name>`` source, or ``None`` for a file or folder path."""
    return source[len(PACKAGED_PREFIX):] if source.startswith(PACKAGED_PREFIX) else None


def packaged_corpus_path(name: str) -> Path:
    """The file of a packaged corpus, e.g. ``demo``."""
    if name not in PACKAGED_CORPORA:
        raise ConfigError(f"no packaged corpus named {name!r}",
                          "use one of: " + "; ".join(f"{PACKAGED_PREFIX}{n} ({about})" for n, (_, about) in
                                                     PACKAGED_CORPORA.items()) + "; or a path")
    return Path(str(resources.files("trainer").joinpath("data", PACKAGED_CORPORA[name][0])))


def source_path(source: str) -> Path:
    """Where a source's records are: the packaged corpus's file, or the path itself."""
    name = packaged_name(source)
    return Path(source) if name is None else packaged_corpus_path(name)


def resolve_source(source: str, base: Path) -> str:
    """A source with a relative path made absolute from ``base``; packaged names stay as they are."""
    return source if packaged_name(source) is not None else str((base / source).resolve())


def local_paths(sources: Sequence[str]) -> list[Path]:
    """The sources that are files or folders of the user's (not packaged corpora)."""
    return [Path(source) for source in sources if packaged_name(source) is None]


def check_sources(sources: Sequence[str]) -> None:
    """Refuse, before any work starts, a packaged name that does not exist or a path that is missing."""
    for source in sources:
        if not source_path(source).exists():
            raise UnreadableInputError(f"{source}: no such auxiliary corpus (file or folder)",
                                       "fix the path given with --aux or in [auxiliary] corpora")


def _domain_name(source: str, taken: set[str]) -> str:
    """A short, unique name for the corpus: the packaged name, or the file or folder stem."""
    base = packaged_name(source) or Path(source).stem or "aux"
    name, number = base, 2
    while name in taken or name == TARGET_DOMAIN:
        name, number = f"{base}{number}", number + 1
    return name


def read_auxiliary(sources: Sequence[str], *, target: Sequence[Record],
                   roles: tuple[str, ...] = DEFAULT_ROLES) -> list[AuxiliaryCorpus]:
    """Read each auxiliary source, keeping the records a model may learn from that the target does not hold.

    Unreviewed pre-annotations are left out as in any training corpus; so are
    records whose doc or id is in ``target``. An auxiliary corpus may use
    other roles than ``roles``, the target's inventory (another project's
    conventions): its role spans outside the inventory are left out, and
    counted by role; its events and other roles still teach the model.
    """
    target_docs = {r.doc for r in target}
    target_ids = {r.id for r in target}
    out: list[AuxiliaryCorpus] = []
    for source in sources:
        usable, _ = read_corpus([source_path(source)], roles=None, skippable=False).training_records()
        kept = [r for r in usable if r.doc not in target_docs and r.id not in target_ids]
        kept, outside = within_inventory(kept, roles)
        name = _domain_name(source, {c.name for c in out})
        out.append(AuxiliaryCorpus(name, source, kept, fingerprint(kept), len(usable) - len(kept), outside))
    return out


def within_inventory(records: Sequence[Record], roles: Sequence[str]) -> tuple[list[Record], dict[str, int]]:
    """The records with only the role spans whose role is in ``roles``, and how many spans of each other role went."""
    allowed, outside, out = set(roles), Counter(), []
    for record in records:
        kept, left_out = record.within_roles(allowed)
        outside.update(role.role for _, role in left_out)
        out.append(kept)
    return out, dict(sorted(outside.items()))
