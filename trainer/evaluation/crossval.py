"""Cross-validation: several configs trained and tested on the same document folds.

Every sentence is parsed once per run (through the parse cache) and the same
parses serve all folds and all configs. Each config yields held-out
predictions for every annotated record, from the full pipeline and with the
gold triggers given, plus per-fold timings. Scoring is a separate step
(:mod:`trainer.evaluation.summary`), so predictions can be rescored later.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Callable, Sequence

from joblib import Parallel, delayed, parallel_config
from spacy.language import Language
from spacy.tokens import Doc

from trainer.config import ExperimentConfig
from trainer.corpus.records import Record
from trainer.errors import ConfigError
from trainer.evaluation.folds import FoldPlan
from trainer.features.extract import Featurizer
from trainer.models.explain import SpanKey, span_explanations
from trainer.models.extractor import MotionExtractor
from trainer.models.training import ParsedAuxiliary, parse_auxiliary, parser_for, with_auxiliary
from trainer.parsing.parse import parse_records

Progress = Callable[[str], None]


@dataclass
class FoldOutput:
    """Held-out predictions of one config on one fold."""

    config: str
    repeat: int
    fold: int
    predicted: list[Record]
    predicted_gold_triggers: list[Record]
    train_seconds: float
    predict_seconds: float
    train_records: int  # of the target corpus; auxiliary corpora come on top
    # record id -> (label, start, end) -> the features that weighed most for that predicted span (if asked for)
    explanations: dict[str, dict[SpanKey, list[tuple[str, float]]]] = field(default_factory=dict)


@dataclass
class SystemRun:
    """One config's held-out predictions over all folds (corpus order, per repeat)."""

    name: str
    config: ExperimentConfig
    folds: list[FoldOutput] = field(default_factory=list)

    def predictions(self, repeat: int = 0, *, gold_triggers: bool = False) -> list[Record]:
        """All held-out predictions of one repeat, sorted by record id."""
        out = [r for f in self.folds if f.repeat == repeat
               for r in (f.predicted_gold_triggers if gold_triggers else f.predicted)]
        return sorted(out, key=lambda r: r.id)

    def explanations(self, repeat: int = 0) -> dict[str, dict[SpanKey, list[tuple[str, float]]]]:
        """The span explanations of one repeat's held-out predictions, by record id (empty unless asked for)."""
        return {rid: spans for f in self.folds if f.repeat == repeat for rid, spans in f.explanations.items()}


@dataclass
class CrossvalRun:
    """Gold records, the fold plans and each config's held-out predictions."""

    records: list[Record]
    plans: list[FoldPlan]
    systems: list[SystemRun]
    parse_seconds: float
    parsed: int
    cached: int
    docs: list[Doc] = field(default_factory=list, repr=False)
    auxiliary: dict[str, ParsedAuxiliary] = field(default_factory=dict, repr=False)


def _unique_names(configs: Sequence[ExperimentConfig]) -> list[str]:
    names = [c.name for c in configs]
    if len(set(names)) != len(names):
        raise ConfigError(f"configs share a name: {names}", "give each config a distinct `name` (or file name)")
    return names


def _run_fold(config: ExperimentConfig, featurizer: Featurizer, repeat: int, index: int, train: list[Record],
              train_docs: list[Doc], test: list[Record], test_docs: list[Doc],
              domains: list[str] | None, target_records: int, explain: bool = False) -> FoldOutput:
    started = time.perf_counter()
    extractor = MotionExtractor(config, featurizer).fit(train, train_docs, domains=domains)
    trained_at = time.perf_counter()
    predicted = extractor.predict(test, test_docs)
    given = extractor.predict(test, test_docs, gold_triggers=True)
    predicted_at = time.perf_counter()
    return FoldOutput(config.name, repeat, index, predicted, given, trained_at - started,
                      predicted_at - trained_at, target_records,
                      span_explanations(extractor, test_docs, predicted) if explain else {})


def run_crossval(
    records: Sequence[Record],
    configs: Sequence[ExperimentConfig],
    plans: Sequence[FoldPlan],
    *,
    nlp: Language | None = None,
    docs: Sequence[Doc] | None = None,
    auxiliary: dict[str, ParsedAuxiliary] | None = None,
    jobs: int = 1,
    scheduler: str | None = None,
    progress: Progress | None = None,
    explain: bool = False,
) -> CrossvalRun:
    """Train every config on every fold's training docs and predict its held-out docs.

    ``explain`` also keeps, for every predicted span, the features that weighed most for it
    (:func:`trainer.models.explain.span_explanations`), for the HTML report.

    Each config's auxiliary corpora (``[auxiliary] corpora``) join every one of
    its training folds and are never scored; pass ``auxiliary`` to reuse them parsed.

    All configs must use the same parser pipeline, so one parse of each record
    serves them all; pass ``docs`` (one per annotated record, in order) to reuse
    parses made earlier. ``jobs`` runs the (config, fold) trainings in parallel
    worker processes with joblib; ``scheduler`` (a Dask scheduler address) sends
    them to a Dask cluster instead. Results are the same either way.
    """
    names = _unique_names(configs)
    pipelines = {c.parser.pipeline for c in configs}
    if len(pipelines) > 1:
        raise ConfigError(f"configs use different parsers: {sorted(pipelines)}",
                          "compare configs that share [parser] pipeline; run one crossval per parser")
    annotated = [r for r in records if r.is_annotated]
    nlp = nlp or parser_for(configs[0])
    started = time.perf_counter()
    if docs is None:
        docs, stats = parse_records(nlp, annotated, configs[0].parser, scheduler=scheduler)
        parsed, cached = stats.parsed, stats.cached
    else:
        parsed, cached = 0, len(docs)
    if auxiliary is None:
        auxiliary = parse_auxiliary([s for c in configs for s in c.auxiliary.corpora], target=annotated, nlp=nlp,
                                    parser=configs[0].parser, roles=configs[0].roles, scheduler=scheduler)
    parse_seconds = time.perf_counter() - started
    featurizers = {c.name: Featurizer.from_config(c.features, nlp) for c in configs}
    by_doc: dict[str, list[int]] = {}
    for i, record in enumerate(annotated):
        by_doc.setdefault(record.doc, []).append(i)

    def pick(doc_names: Sequence[str]) -> list[int]:
        return sorted(i for d in doc_names for i in by_doc.get(d, []))

    tasks = []
    for config in configs:
        for plan in plans:
            for index, (train_names, test_names) in enumerate(plan.folds):
                train_ids, test_ids = pick(train_names), pick(test_names)
                train, train_docs, domains = with_auxiliary([annotated[i] for i in train_ids],
                                                            [docs[i] for i in train_ids], config, auxiliary)
                tasks.append(delayed(_run_fold)(
                    config, featurizers[config.name], plan.repeat, index, train, train_docs,
                    [annotated[i] for i in test_ids], [docs[i] for i in test_ids], domains, len(train_ids), explain))
    if progress:
        progress(f"{len(annotated)} records parsed ({cached} from cache) in {parse_seconds:.1f} s; "
                 f"{len(tasks)} training runs ({len(configs)} config(s) x {sum(len(p.folds) for p in plans)} fold(s))")
        for parsed_aux in auxiliary.values():
            aux = parsed_aux.corpus
            progress(f"auxiliary corpus '{aux.name}' ({aux.source}): {len(aux.records)} record(s) join every training "
                     f"fold of the configs naming it, {aux.left_out} left out (doc or id shared with the corpus)")
    outputs = _dispatch(tasks, jobs=jobs, scheduler=scheduler, progress=progress)
    systems = [SystemRun(name, config, [o for o in outputs if o.config == name]) for name, config in zip(names, configs)]
    return CrossvalRun(annotated, list(plans), systems, parse_seconds, parsed, cached, list(docs), auxiliary)


def _dispatch(tasks: list, *, jobs: int, scheduler: str | None, progress: Progress | None) -> list[FoldOutput]:
    """Run the training tasks serially, in local worker processes, or on a Dask cluster; order is kept."""
    if scheduler:
        try:
            from dask.distributed import Client
        except ImportError:
            raise ConfigError("a Dask scheduler was given but dask.distributed is not installed",
                              "install it with `pip install 'itinerant[cluster]'` (or `pip install 'dask[distributed]'`)") from None
        if progress:
            progress(f"sending {len(tasks)} training runs to the Dask scheduler at {scheduler}")
        with Client(scheduler), parallel_config(backend="dask"):
            return Parallel(n_jobs=-1)(tasks)
    if jobs > 1:
        return Parallel(n_jobs=jobs, prefer="processes", verbose=10 if progress else 0)(tasks)
    return _serial(tasks, progress)


def _serial(tasks: list, progress: Progress | None) -> list[FoldOutput]:
    outputs = []
    for number, (function, args, kwargs) in enumerate(tasks, start=1):
        output = function(*args, **kwargs)
        outputs.append(output)
        if progress:
            progress(f"[{number}/{len(tasks)}] {output.config} repeat {output.repeat} fold {output.fold}: "
                     f"trained on {output.train_records} records in {output.train_seconds:.1f} s")
    return outputs
