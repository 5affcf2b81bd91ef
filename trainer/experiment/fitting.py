"""Fitting a model file: read the corpus, train the configured extractor, write the model and its digest."""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Sequence

from trainer.config import check_jobs
from trainer.corpus.auxiliary import local_paths
from trainer.corpus.reader import expand_paths, read_corpus, skipped_summary
from trainer.errors import ConfigError
from trainer.evaluation.runs import Progress
from trainer.experiment.settings import RunSettings
from trainer.outputs import check_output, output_lock


@dataclass
class FitOutcome:
    """What ``fit`` did: the model written, what it was trained on, what was left out."""

    model: Path
    config: str
    records: int
    docs: int
    metadata: dict[str, Any]
    auxiliary: list[dict[str, Any]] = field(default_factory=list)
    skipped: int = 0  # records with errors left out (skip_bad)
    widened: int = 0  # gold spans widened to token boundaries
    dropped: int = 0  # gold spans that could not be aligned
    thresholds: dict[str, float] = field(default_factory=dict)  # learned by [confidence], per label
    calibrated: list[str] = field(default_factory=list)  # labels whose confidences are calibrated
    held_out: dict[str, int] = field(default_factory=dict)  # held-out predictions each label's policy came from
    unreached: list[str] = field(default_factory=list)  # labels below the target precision at every threshold
    # With [trigger_model] tune_threshold: the threshold chosen and the pooled trigger F1 the inner folds gave it
    trigger_threshold: float | None = None
    trigger_threshold_f1: float | None = None
    # The stages ("triggers", "roles") whose features were augmented by corpus: both with [auxiliary] augment,
    # those whose annotation departs where the conventions differ
    augmented: list[str] = field(default_factory=list)
    departures: list[str] = field(default_factory=list)  # where the conventions differ, measured against the rules
    boundaries_only: bool = False  # every departure is of span boundaries (none of which spans are triggers or roles)


def fit_model(corpus: Sequence[Path | str], output: Path | str, settings: RunSettings, *, skip_bad: bool = False,
              jobs: int = 1,
              progress: Progress | None = None) -> FitOutcome:
    """Train the first config of ``settings`` on the annotated records and write a model file (a pickle) with its digest.

    The model file and its digest are checked to be writable (and not inputs)
    before anything is read, and locked while training; an earlier model file
    survives a failed or killed run. Unreviewed pre-annotated records are left out.
    """
    from joblib import parallel_config

    from trainer.models.persist import digest_path
    from trainer.models.training import fit_extractor, save_extractor

    check_jobs(jobs)
    corpus, output = [Path(p) for p in corpus], Path(output)
    config = settings.configs[0]
    say = progress or (lambda message: None)
    auxiliary = local_paths(config.auxiliary.corpora)
    inputs = [*corpus, *expand_paths(corpus), *settings.config_paths, *auxiliary, *expand_paths(auxiliary)]
    check_output(output, inputs=inputs, what="model file")
    check_output(digest_path(output), inputs=inputs, what="model digest file")
    with output_lock(output):
        data = read_corpus(corpus, roles=config.roles, skip_bad=skip_bad)
        if data.skipped:
            say(skipped_summary(data))
        annotated, unreviewed = data.training_records()
        if unreviewed:
            say(f"left out {len(unreviewed)} pre-annotated record(s) nobody has reviewed (provenance 'predicted'): "
                f"{', '.join(unreviewed[:10])}{' ...' if len(unreviewed) > 10 else ''}")
        docs = len({r.doc for r in annotated})
        learns_confidence = config.confidence.calibration != "none" or config.confidence.thresholds != "none"
        if learns_confidence and docs < 2:
            raise ConfigError(f"[confidence] learns from held-out predictions on inner folds over the corpus's docs, "
                              f"so it needs at least two annotated docs; this corpus has {docs}",
                              "annotate a second doc (or name each chapter its own doc), or leave out --calibration "
                              "and --thresholds ([confidence] in the config)")
        say(f"training '{config.name}' on {len(annotated)} annotated record(s) from {docs} doc(s)")
        started = time.perf_counter()
        with parallel_config(n_jobs=jobs):
            trained = fit_extractor(annotated, config)
        metadata = save_extractor(trained, output, records=annotated, training_seconds=time.perf_counter() - started)
    alignment = trained.alignment
    policy = trained.extractor.confidence_
    tuned = metadata.get("trigger_threshold") or {}
    return FitOutcome(output, config.name, len(annotated), docs, metadata, trained.auxiliary, len(data.skipped),
                      alignment.widened if alignment else 0, alignment.dropped if alignment else 0,
                      dict(policy.thresholds) if policy else {}, sorted(policy.calibrators) if policy else [],
                      dict(policy.held_out) if policy else {}, list(policy.unreached) if policy else [],
                      tuned.get("threshold"), tuned.get("inner_fold_f1"), metadata["augmentation"]["stages"],
                      metadata["augmentation"]["conventions_departing"],
                      bool(trained.extractor.departures_)
                      and all(d.of_boundaries for d in trained.extractor.departures_))
