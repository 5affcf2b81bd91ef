"""Shared fixtures: the demo corpus location and a loaded default pipeline (loaded once per session)."""

from __future__ import annotations

from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
DEMO = REPO / "demo_annotations"


@pytest.fixture(scope="session")
def nlp():
    from trainer.parsing.pipeline import load_pipeline

    return load_pipeline()


@pytest.fixture(scope="session")
def demo_train() -> Path:
    return DEMO / "train"


@pytest.fixture(scope="session")
def demo_test() -> Path:
    return DEMO / "test"
