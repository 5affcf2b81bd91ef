"""Annotation rounds on a new book: suggest what to annotate, merge the corrections back, train on reviewed data.

Sits above models and evaluation, below reports and the CLI:

- :mod:`trainer.annotation.suggest`: :func:`suggest_batch` picks the records the
  model is least sure about, spread over documents and trigger lemmas, and
  pre-annotates them;
- :mod:`trainer.annotation.merge`: :func:`merge_batches` brings corrected
  batches back into the corpus and reports conflicts;
- :mod:`trainer.corpus.provenance`: ``predicted`` / ``corrected`` /
  ``gold`` and :func:`training_records`, which refuses unreviewed predictions;
- :mod:`trainer.annotation.review`: the review page, where a batch is
  corrected in the browser and every change is checked and saved at once;
- :mod:`trainer.annotation.agreement`: agreement between annotators (F1,
  Cohen's and Fleiss' kappa, disagreements by kind).

See docs/retraining.md for the workflow. Merging does not load spaCy;
``suggest_batch`` (which does) is imported on first use.

The package also holds :mod:`trainer.annotation.itinerary` and
:mod:`trainer.annotation.geo`: itineraries and maps from annotated or
extracted records (docs/itineraries.md).
"""

from trainer.annotation.merge import MergeResult, merge_batches, merge_files
from trainer.corpus.provenance import CORRECTED, GOLD, PREDICTED, PROVENANCES, training_records

__all__ = ["CORRECTED", "GOLD", "PREDICTED", "PROVENANCES", "MergeResult", "merge_batches", "merge_files",
           "suggest_batch", "training_records"]


def __getattr__(name: str):
    if name == "suggest_batch":
        from trainer.annotation.suggest import suggest_batch

        return suggest_batch
    raise AttributeError(f"module 'trainer.annotation' has no attribute {name!r}")
