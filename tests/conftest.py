"""Shared fixtures: the demo corpus location and a loaded default pipeline (loaded once per session)."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path
from types import ModuleType

import pytest

REPO = Path(__file__).resolve().parent.parent
DEMO = REPO / "demo_annotations"


def load_bench(name: str) -> ModuleType:
    """A benchmark script of ``bench/`` loaded as a module, so a test can run its functions."""
    spec = importlib.util.spec_from_file_location(name, REPO / "bench" / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # its dataclasses look their module up there
    spec.loader.exec_module(module)
    return module


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
