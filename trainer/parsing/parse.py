"""Parsing a corpus: the one entry point the rest of the tool calls for parsed sentences.

Records whose id the ``[parser] conllu`` file holds take their Doc from it
(see :mod:`trainer.parsing.conllu_input`); all others are parsed by the
pipeline, through the cache when it is enabled.
"""

from __future__ import annotations

from functools import partial
from typing import Sequence

from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import ParserConfig
from trainer.corpus.records import Record
from trainer.parsing.cache import ParseStats, parse_with_cache
from trainer.parsing.cluster import parse_on_cluster
from trainer.parsing.conllu_input import docs_for_records


def parse_records(nlp: Language, records: Sequence[Record], config: ParserConfig, *,
                  scheduler: str | None = None) -> tuple[list[Doc], ParseStats]:
    """Docs for records (in order): from the CoNLL-U file when it has the record, else parsed.

    The stats count only what the pipeline served (``cached`` + ``parsed`` =
    records not in the CoNLL-U file). With ``scheduler`` (a Dask scheduler
    address) the texts the cache lacks are parsed on that cluster.
    """
    given = docs_for_records(config.conllu, records, nlp.vocab) if config.conllu else {}
    parsed, stats = parse_with_cache(
        nlp,
        [r.text for r in records if r.id not in given],
        cache_dir=config.cache_dir if config.use_cache else None,
        batch_size=config.batch_size,
        workers=config.workers,
        parser=partial(parse_on_cluster, nlp, config.pipeline, scheduler=scheduler) if scheduler else None,
    )
    rest = iter(parsed)
    return [given[r.id] if r.id in given else next(rest) for r in records], stats
