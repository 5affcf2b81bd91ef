"""Parsing a corpus: the one entry point the rest of the tool calls for parsed sentences."""

from __future__ import annotations

from typing import Sequence

from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import ParserConfig
from trainer.corpus.records import Record
from trainer.parsing.cache import ParseStats, parse_with_cache


def parse_records(nlp: Language, records: Sequence[Record], config: ParserConfig) -> tuple[list[Doc], ParseStats]:
    """Parsed docs for records (in order), through the cache when the config enables it."""
    return parse_with_cache(
        nlp,
        [r.text for r in records],
        cache_dir=config.cache_dir if config.use_cache else None,
        batch_size=config.batch_size,
        workers=config.workers,
    )
