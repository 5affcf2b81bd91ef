"""Shared fixtures: the demo corpus location and a loaded default pipeline (loaded once per session)."""

from __future__ import annotations

import importlib.util
import os
import shutil
import sys
from pathlib import Path
from types import ModuleType

import pytest

REPO = Path(__file__).resolve().parent.parent
DEMO = REPO / "demo_annotations"
# Headless Debian Chromium on a closed network: no GPU, no sandbox as root, no background connections.
CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync"]


def chromium_or_skip(*, playwright: bool = False) -> str:
    """Debian's Chromium binary (and, with ``playwright``, Playwright's Python package to drive it).

    Without them a developer machine skips the test; CI fails it, since .ci/run installs both.
    """
    binary = shutil.which("chromium") or shutil.which("/usr/bin/chromium")
    missing = [] if binary else ["chromium"]
    if playwright and importlib.util.find_spec("playwright") is None:
        missing.append("playwright")
    if missing:
        names = " and ".join(missing)
        if os.environ.get("CI"):
            pytest.fail(f"{names} is not installed but CI is set: .ci/run should have installed it")
        pytest.skip(f"{names} is not installed (apt-get install chromium; pip install -e '.[test]'); CI runs this test")
    return binary


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
