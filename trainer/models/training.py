"""Training an extractor from a config, and model files that carry everything needed to apply it."""

from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import ExperimentConfig
from trainer.corpus.reader import fingerprint
from trainer.corpus.records import Record
from trainer.features.extract import Featurizer
from trainer.models.extractor import MotionExtractor
from trainer.models.persist import load_model, save_model
from trainer.parsing.align import AlignmentReport
from trainer.parsing.parse import parse_records
from trainer.parsing.pipeline import load_pipeline, pipeline_identity
from trainer.errors import ModelFileError


@dataclass
class TrainedExtractor:
    """A fitted extractor with the config and the pipeline it was trained with."""

    extractor: MotionExtractor
    config: ExperimentConfig
    pipeline_identity: str

    @property
    def roles(self) -> tuple[str, ...]:
        return self.config.roles

    @property
    def alignment(self) -> AlignmentReport | None:
        return self.extractor.alignment_


def parser_for(config: ExperimentConfig) -> Language:
    """The spaCy pipeline a config names, with unused components disabled."""
    return load_pipeline(config.parser.pipeline, groups=config.features.groups)


def fit_extractor(
    records: Sequence[Record],
    config: ExperimentConfig,
    *,
    nlp: Language | None = None,
    docs: Sequence[Doc] | None = None,
) -> TrainedExtractor:
    """Parse (through the cache) and train on annotated records; pass ``docs`` to reuse parses."""
    nlp = nlp or parser_for(config)
    if docs is None:
        docs, _ = parse_records(nlp, records, config.parser)
    featurizer = Featurizer.from_config(config.features, nlp)
    extractor = MotionExtractor(config, featurizer).fit(records, docs)
    return TrainedExtractor(extractor=extractor, config=config, pipeline_identity=pipeline_identity(nlp))


def save_extractor(trained: TrainedExtractor, path: Path | str, *, records: Sequence[Record],
                   training_seconds: float) -> dict[str, Any]:
    """Write a model file (a pickle, see :mod:`trainer.models.persist`) with its metadata block."""
    metadata = {
        "kind": "itinerant-extractor",
        "config": trained.config.to_dict(),
        "roles": list(trained.roles),
        "pipeline": trained.pipeline_identity,
        "training_corpus": {
            "fingerprint": fingerprint(records),
            "records": len(records),
            "docs": len({r.doc for r in records}),
            "events": sum(len(r.events or ()) for r in records),
        },
        "training_seconds": round(training_seconds, 2),
        "created": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
    }
    return save_model(trained, path, metadata)


def load_extractor(path: Path | str) -> tuple[TrainedExtractor, dict[str, Any]]:
    """Load a verified model file; refuse anything that is not a trained extractor."""
    loaded = load_model(path)
    if not isinstance(loaded.model, TrainedExtractor):
        raise ModelFileError(f"{path}: holds a {type(loaded.model).__name__}, not an extractor",
                             "name a file written by `itinerant fit`")
    return loaded.model, loaded.metadata
