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


@pytest.fixture(scope="session")
def rules_model_file(tmp_path_factory, nlp, demo_train) -> Path:
    """A model file (with its digest) of the rule stages, "trained" on one demo doc: quick to make, loads like any."""
    from trainer.config import config_from_dict
    from trainer.corpus.reader import read_corpus
    from trainer.models.training import fit_extractor, save_extractor

    config = config_from_dict({"parser": {"use_cache": False}, "trigger_model": {"kind": "rules"},
                               "role_model": {"kind": "rules"}})
    records = read_corpus([demo_train / "quarne-salt-1.jsonl"]).records
    path = tmp_path_factory.mktemp("model") / "rules.itin"
    save_extractor(fit_extractor(records, config, nlp=nlp), path, records=records, training_seconds=0.0)
    return path
