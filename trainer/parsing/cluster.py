"""Parsing spread over a Dask cluster, for inputs too large to parse on one machine in good time.

Texts go to the workers in chunks; each worker loads the named pipeline once
(with the same components disabled) and sends the parses back in spaCy's
binary DocBin format, which the caller reads into its own vocabulary. The
result equals a local parse with the same pipeline version.
"""

from __future__ import annotations

import functools
from typing import Sequence

from joblib import Parallel, delayed, parallel_config
from spacy.language import Language
from spacy.tokens import Doc, DocBin

from trainer.errors import ConfigError

CHUNK = 500


@functools.lru_cache(maxsize=4)
def _worker_pipeline(name: str, disabled: tuple[str, ...]) -> Language:
    import spacy

    nlp = spacy.load(name)
    for component in disabled:
        nlp.disable_pipe(component)
    return nlp


def _parse_chunk(name: str, disabled: tuple[str, ...], texts: list[str], attrs: list[str]) -> bytes:
    nlp = _worker_pipeline(name, disabled)
    return DocBin(attrs=attrs, docs=nlp.pipe(texts)).to_bytes()


def parse_on_cluster(nlp: Language, pipeline: str, texts: Sequence[str], *, scheduler: str,
                     chunk: int = CHUNK) -> list[Doc]:
    """Parse ``texts`` on the Dask cluster at ``scheduler`` with the pipeline ``pipeline`` (as ``nlp`` is set up)."""
    from trainer.parsing.cache import ATTRS

    try:
        from dask.distributed import Client
    except ImportError:
        raise ConfigError("a Dask scheduler was given but dask.distributed is not installed",
                          "install it with `pip install 'itinerant[cluster]'`") from None
    disabled = tuple(nlp.disabled)
    pieces = [list(texts[i : i + chunk]) for i in range(0, len(texts), chunk)]
    with Client(scheduler), parallel_config(backend="dask"):
        parsed = Parallel(n_jobs=-1)(delayed(_parse_chunk)(pipeline, disabled, piece, ATTRS) for piece in pieces)
    return [doc for data in parsed for doc in DocBin().from_bytes(data).get_docs(nlp.vocab)]
