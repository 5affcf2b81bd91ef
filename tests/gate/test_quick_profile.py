"""Reproducibility: the quick CI profile twice on the demo corpus gives byte-identical metric JSON."""

from __future__ import annotations

from pathlib import Path

import pytest

from trainer.experiment.crossval import crossval_experiment
from trainer.experiment.settings import resolve_settings

pytestmark = pytest.mark.slow
CONFIGS = Path(__file__).resolve().parents[2] / "configs"


def test_two_runs_of_the_quick_profile_write_identical_report_json(tmp_path, demo_train):
    first = tmp_path / "first"
    second = tmp_path / "second"
    settings = resolve_settings([CONFIGS / "quick.toml"])
    crossval_experiment([demo_train], settings, first)
    crossval_experiment([demo_train], settings, second)
    assert (first / "report.json").read_bytes() == (second / "report.json").read_bytes()
    for name in ("quick.jsonl", "quick.gold-triggers.jsonl"):
        assert (first / "predictions" / name).read_bytes() == (second / "predictions" / name).read_bytes()
