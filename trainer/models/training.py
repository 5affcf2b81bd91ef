"""Training an extractor from a config, and model files that carry everything needed to apply it."""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Sequence

from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import ExperimentConfig, ParserConfig
from trainer.corpus.auxiliary import TARGET_DOMAIN, AuxiliaryCorpus, read_auxiliary
from trainer.corpus.reader import fingerprint
from trainer.corpus.records import Record
from trainer.features.extract import Featurizer
from trainer.models.extractor import MotionExtractor
from trainer.models.kinds import MODEL_KINDS
from trainer.models.persist import load_model, save_model
from trainer.parsing.align import AlignmentReport
from trainer.parsing.parse import parse_records
from trainer.parsing.pipeline import load_pipeline, pipeline_identity
from trainer.errors import CorpusError, ModelFileError


@dataclass
class ParsedAuxiliary:
    """An auxiliary corpus with one parse per record, ready to join training sets."""

    corpus: AuxiliaryCorpus
    docs: list[Doc]


def parse_auxiliary(sources: Sequence[str], *, target: Sequence[Record], nlp: Language, parser: ParserConfig,
                    roles: tuple[str, ...], scheduler: str | None = None) -> dict[str, ParsedAuxiliary]:
    """Read and parse each auxiliary source once (through the parse cache), keyed by source."""
    out = {}
    for corpus in read_auxiliary(sorted(set(sources)), target=target, roles=roles):
        docs, _ = parse_records(nlp, corpus.records, parser, scheduler=scheduler)
        out[corpus.source] = ParsedAuxiliary(corpus, list(docs))
    return out


def with_auxiliary(records: Sequence[Record], docs: Sequence[Doc], config: ExperimentConfig,
                   auxiliary: dict[str, ParsedAuxiliary]) -> tuple[list[Record], list[Doc], list[str] | None]:
    """The training set of one config: the target's records plus its auxiliary corpora, and each record's corpus.

    The corpus names (``"target"`` or the auxiliary corpus's name, one per record) are ``None`` when the
    config names no auxiliary corpus.
    """
    records, docs = list(records), list(docs)
    domains = [TARGET_DOMAIN] * len(records)
    for source in config.auxiliary.corpora:
        parsed = auxiliary[source]
        records += parsed.corpus.records
        docs += parsed.docs
        domains += [parsed.corpus.name] * len(parsed.docs)
    return records, docs, domains if config.auxiliary.corpora else None


@dataclass
class TrainedExtractor:
    """A fitted extractor with the config and the pipeline it was trained with."""

    extractor: MotionExtractor
    config: ExperimentConfig
    pipeline_identity: str
    auxiliary: list[dict[str, Any]] = field(default_factory=list)

    @property
    def roles(self) -> tuple[str, ...]:
        return self.config.roles

    @property
    def alignment(self) -> AlignmentReport | None:
        return self.extractor.alignment_


def parser_for(config: ExperimentConfig) -> Language:
    """The spaCy pipeline a config names, with unused components disabled."""
    return load_pipeline(config.parser.pipeline, groups=config.features.groups)


def build_extractor(config: ExperimentConfig, *, nlp: Language | None = None,
                    featurizer: Featurizer | None = None) -> MotionExtractor:
    """The one assembly of a config's featurizer and two-stage extractor, unfitted: ``fit`` and every fold use it.

    Pass ``featurizer`` to share one (lexicons and gazetteer loaded once) across folds; otherwise ``nlp``
    (the config's parser by default) serves the gazetteer's matcher.
    """
    if featurizer is None:
        featurizer = Featurizer.from_config(config.features, nlp or parser_for(config))
    return MotionExtractor(config, featurizer)


def fit_extractor(
    records: Sequence[Record],
    config: ExperimentConfig,
    *,
    nlp: Language | None = None,
    docs: Sequence[Doc] | None = None,
    auxiliary: dict[str, ParsedAuxiliary] | None = None,
) -> TrainedExtractor:
    """Parse (through the cache) and train on annotated records plus the config's auxiliary corpora.

    Pass ``docs`` to reuse parses, and ``auxiliary`` (from :func:`parse_auxiliary`) to reuse parsed auxiliary corpora.
    """
    require_training_data(records, config)
    nlp = nlp or parser_for(config)
    if docs is None:
        docs, _ = parse_records(nlp, records, config.parser)
    if auxiliary is None:
        auxiliary = parse_auxiliary(config.auxiliary.corpora, target=records, nlp=nlp, parser=config.parser,
                                    roles=config.roles)
    train, train_docs, domains = with_auxiliary(records, docs, config, auxiliary)
    extractor = build_extractor(config, nlp=nlp).fit(train, train_docs, domains=domains)
    return TrainedExtractor(extractor=extractor, config=config, pipeline_identity=pipeline_identity(nlp),
                            auxiliary=[auxiliary[s].corpus.to_dict() for s in config.auxiliary.corpora])


def require_training_data(records: Sequence[Record], config: ExperimentConfig) -> None:
    """Refuse to train on no annotated record, or (for a learned model) on records without any event."""
    annotated = [r for r in records if r.is_annotated]
    if not annotated:
        raise CorpusError("no annotated record to train on"
                          + (f" (none of the {len(records)} record(s) has an \"events\" list)" if records else ""),
                          "train on annotated records; unannotated text is for `itinerant extract` or `suggest`")
    learned = {kind for kind in (config.trigger_model.kind, config.role_model.kind) if MODEL_KINDS[kind].learned}
    if learned and not any(r.events for r in annotated):
        raise CorpusError(f"the {len(annotated)} annotated record(s) hold no motion event, so a "
                          f"{'/'.join(sorted(learned))} model has nothing to learn from",
                          "add records with events, or use the rule baseline (kind = \"rules\")")


def tuned_trigger_threshold(extractor: MotionExtractor) -> dict[str, float] | None:
    """The trigger threshold chosen on inner folds and the pooled F1 it gave there (None when none was tuned).

    The F1 is over exact token ranges of the held-out target docs of the inner folds: an early estimate of
    trigger finding on the user's own text, from models trained on about two thirds of the training docs.
    """
    scores = getattr(extractor, "threshold_scores_", None)  # absent in model files written before tuning
    if not scores:
        return None
    threshold = extractor.trigger_finder.decision_threshold
    return {"threshold": threshold, "inner_fold_f1": scores[threshold]}


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
        "auxiliary_corpora": trained.auxiliary,
        "augmentation": {"augmented": bool(trained.extractor.domains_),
                         "stages": list(trained.extractor.augmented_stages_),
                         "conventions_departing": [d.describe() for d in trained.extractor.departures_]},
        "trigger_threshold": tuned_trigger_threshold(trained.extractor),
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
