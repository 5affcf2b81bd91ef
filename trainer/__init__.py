"""itinerant: train, evaluate and apply extractors of motion events in travel prose.

The package is laid out in the order a record travels: ``corpus`` -> ``parsing``
-> ``features`` -> ``models`` -> ``evaluation`` -> ``experiment`` -> ``reports``;
``annotation`` and ``gate`` serve the experiment layer and ``cli`` sits on top.
See DEVELOPERS.md.

The public API is the names below (listed in the README), importable from
``trainer`` directly. They are loaded on first use, so ``import trainer`` stays
light and loads neither spaCy nor scikit-learn.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__version__ = "0.1.0"

# Public name -> the module that defines it.
PUBLIC_API: dict[str, str] = {
    # settings and data
    "load_config": "trainer.config",
    "ExperimentConfig": "trainer.config",
    "resolve_settings": "trainer.experiment.settings",
    "Overrides": "trainer.experiment.settings",
    "RunSettings": "trainer.experiment.settings",
    "read_corpus": "trainer.corpus.reader",
    "Record": "trainer.corpus.records",
    "Event": "trainer.corpus.records",
    # training and applying
    "fit_extractor": "trainer.models.training",
    "load_extractor": "trainer.models.training",
    "fit_model": "trainer.experiment.fitting",
    "extract": "trainer.experiment.extraction",
    "ExtractOptions": "trainer.experiment.extraction",
    # evaluating
    "count_corpus": "trainer.evaluation.scoring",
    "crossval_experiment": "trainer.experiment.crossval",
    "run_crossval": "trainer.experiment.crossval",
    "score_report": "trainer.experiment.score",
    "contrast_runs": "trainer.experiment.score",
    "run_gate": "trainer.experiment.gating",
    "GateRequest": "trainer.experiment.gating",
    # errors
    "ItinerantError": "trainer.errors",
}
__all__ = sorted(PUBLIC_API)


def __getattr__(name: str) -> Any:
    if name not in PUBLIC_API:
        raise AttributeError(f"module 'trainer' has no attribute {name!r}")
    value = getattr(import_module(PUBLIC_API[name]), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted([*globals(), *PUBLIC_API])
