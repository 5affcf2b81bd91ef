"""A parse cache on disk, so each sentence is parsed once across folds and runs.

Layout: one folder per pipeline identity (name, version, active components),
holding DocBin shards (spaCy's own binary format) and ``index.json``, which
maps the SHA-256 of each text to a shard and position and records each shard's
own SHA-256. A shard whose digest does not match, or an index written for
another pipeline or format, is never trusted: its texts are parsed again and
the cache is rebuilt.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Sequence

from spacy.language import Language
from spacy.tokens import Doc, DocBin

from trainer.outputs import write_shared_bytes
from trainer.parsing.pipeline import parse_texts, pipeline_identity

CACHE_FORMAT = 1
ATTRS = ["ORTH", "SPACY", "TAG", "POS", "MORPH", "LEMMA", "HEAD", "DEP", "ENT_IOB", "ENT_TYPE", "SENT_START"]


def text_key(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@dataclass
class ParseStats:
    """How a parse request was served: from the cache or by the parser."""

    cached: int = 0
    parsed: int = 0
    rebuilt_shards: list[str] = field(default_factory=list)
    unwritable: str = ""  # why the cache could not be written (the run goes on without it), or ""


class ParseCache:
    """DocBin shards keyed by text hash for one pipeline identity."""

    def __init__(self, directory: Path | str, nlp: Language) -> None:
        self.nlp = nlp
        identity = pipeline_identity(nlp)
        self.identity = identity
        self.folder = Path(directory) / hashlib.sha256(identity.encode()).hexdigest()[:16]
        self.index_path = self.folder / "index.json"
        self.index = self._load_index()

    def _empty_index(self) -> dict:
        return {"format": CACHE_FORMAT, "pipeline": self.identity, "entries": {}, "shards": {}}

    def _load_index(self) -> dict:
        try:
            index = json.loads(self.index_path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return self._empty_index()
        if not isinstance(index, dict) or index.get("format") != CACHE_FORMAT or index.get("pipeline") != self.identity:
            return self._empty_index()
        return index

    def _read_shard(self, shard: str) -> list[Doc] | None:
        """The docs of one shard, or None when it is missing or its bytes do not match the index."""
        try:
            data = (self.folder / shard).read_bytes()
        except OSError:
            return None
        if hashlib.sha256(data).hexdigest() != self.index["shards"].get(shard):
            return None
        try:
            return list(DocBin().from_bytes(data).get_docs(self.nlp.vocab))
        except Exception:  # a shard that matches its digest but fails to decode is foreign: rebuild
            return None

    def lookup(self, keys: Sequence[str], stats: ParseStats) -> dict[str, Doc]:
        """Docs found in trusted shards; entries of untrusted shards are dropped from the index."""
        wanted: dict[str, list[tuple[str, int]]] = {}
        for key in set(keys):
            entry = self.index["entries"].get(key)
            if entry:
                wanted.setdefault(entry[0], []).append((key, entry[1]))
        found: dict[str, Doc] = {}
        for shard, items in sorted(wanted.items()):
            docs = self._read_shard(shard)
            if docs is None or any(pos >= len(docs) for _, pos in items):
                stats.rebuilt_shards.append(shard)
                self._forget_shard(shard)
                continue
            found.update((key, docs[pos]) for key, pos in items)
        return found

    def _forget_shard(self, shard: str) -> None:
        self.index["shards"].pop(shard, None)
        self.index["entries"] = {k: v for k, v in self.index["entries"].items() if v[0] != shard}

    def store(self, keyed_docs: Sequence[tuple[str, Doc]]) -> str:
        """Write new docs as one shard and update the index atomically.

        Returns ``""``, or why the cache could not be written (a read-only or full disk): the cache only saves
        parsing again, so the run goes on without it.
        """
        if not keyed_docs:
            return ""
        data = DocBin(attrs=ATTRS, docs=[d for _, d in keyed_docs]).to_bytes()
        digest = hashlib.sha256(data).hexdigest()
        shard = f"shard-{digest[:16]}.spacy"
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            write_shared_bytes(self.folder / shard, data)
        except OSError as exc:
            return f"{self.folder}: {exc.strerror or exc}"
        self.index["shards"][shard] = digest
        for position, (key, _) in enumerate(keyed_docs):
            self.index["entries"][key] = [shard, position]
        try:
            write_shared_bytes(self.index_path, json.dumps(self.index, sort_keys=True).encode("utf-8"))
        except OSError as exc:
            return f"{self.index_path}: {exc.strerror or exc}"
        return ""


def parse_with_cache(
    nlp: Language,
    texts: Sequence[str],
    *,
    cache_dir: Path | str | None,
    batch_size: int = 64,
    workers: int = 1,
    parser: Callable[[list[str]], list[Doc]] | None = None,
) -> tuple[list[Doc], ParseStats]:
    """Parse texts, reading what the cache has and parsing (then storing) only the rest.

    ``parser`` parses the missing texts instead of ``nlp.pipe`` here (e.g. on a cluster).
    """
    stats = ParseStats()
    keys = [text_key(t) for t in texts]
    cache = ParseCache(cache_dir, nlp) if cache_dir else None
    known = cache.lookup(keys, stats) if cache else {}
    missing = list(dict.fromkeys(k for k in keys if k not in known))
    if missing:
        text_of = dict(zip(keys, texts))
        todo = [text_of[k] for k in missing]
        docs = parser(todo) if parser else parse_texts(nlp, todo, batch_size=batch_size, workers=workers)
        known.update(zip(missing, docs))
        if cache:
            stats.unwritable = cache.store(list(zip(missing, docs)))
    stats.parsed = len(missing)
    missing_keys = set(missing)  # built once: inside the generator it made this count quadratic
    stats.cached = sum(1 for k in keys if k not in missing_keys)
    return [known[k] for k in keys], stats
