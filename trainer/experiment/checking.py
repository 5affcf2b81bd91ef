"""Checking annotation files: every problem found, and the statistics of what can be read."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

from trainer.config import DEFAULT_PIPELINE
from trainer.corpus.reader import expand_paths
from trainer.corpus.stats import corpus_stats
from trainer.corpus.validate import check_files


@dataclass
class CheckOutcome:
    """The problems (errors and warnings, in file order) and the corpus statistics as text."""

    problems: list[Any]
    statistics: str
    errors: int
    warnings: int
    bad_records: int

    def failed(self, *, strict: bool = False) -> bool:
        """Errors were found (or, ``strict``, warnings)."""
        return bool(self.errors or (strict and self.warnings))


def check_annotations(files: Sequence[Path], roles: tuple[str, ...], *, lemmas: bool = True,
                      pipeline: str | None = None) -> CheckOutcome:
    """Validate files with exactly the rules ``fit`` reads by; ``lemmas`` lemmatises triggers (loading the parser
    only when some record has events) for the statistics."""
    result = check_files(expand_paths(files), roles)
    records = [r for _, _, r in result.records]
    lemmatize = None
    with_triggers = [r for r in records if r.events]
    if lemmas and with_triggers:
        from trainer.parsing.pipeline import load_pipeline, trigger_lemmatizer

        lemmatize = trigger_lemmatizer(load_pipeline(pipeline or DEFAULT_PIPELINE, groups=()), with_triggers)
    statistics = corpus_stats(records, roles=roles, lemmatize=lemmatize).to_text()
    return CheckOutcome(list(result.problems), statistics, len(result.errors), len(result.warnings), result.bad_records)
