"""Light commands start without the parser or the model libraries.

Each command runs in a fresh interpreter, which then prints the modules it has
loaded. What a module import leaves behind is read from ``sys.modules``, the
interpreter's record of every imported module (Python documentation, "The
import system", section 5.3.1 "The module cache").
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from tests.reports.report_samples import tiny_report
from trainer.corpus.reader import fingerprint, read_corpus

DEMO_TEST = Path(__file__).resolve().parent.parent / "demo_annotations" / "test" / "lisle-letters-1.jsonl"

# Runs one command in-process with typer's runner, then prints its exit code and every loaded module.
RUNNER = """
import json, sys
from typer.testing import CliRunner
from trainer.cli import app
result = CliRunner().invoke(app, sys.argv[1:])
print(json.dumps({"exit": result.exit_code, "output": result.output, "modules": sorted(sys.modules)}))
"""

# Top-level packages of the parser and the model libraries, and the package's modules that load them.
HEAVY_PACKAGES = {"spacy", "thinc", "sklearn", "sklearn_crfsuite", "pycrfsuite"}
HEAVY_MODULES = {"trainer.parsing.pipeline", "trainer.parsing.parse", "trainer.models.extractor",
                 "trainer.models.stages", "trainer.models.sequence", "trainer.models.training",
                 "trainer.experiment.crossval", "trainer.features.extract"}


def run_command(args: list[str], cwd: Path) -> dict:
    done = subprocess.run([sys.executable, "-c", RUNNER, *args], cwd=cwd, capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def heavy(modules: list[str]) -> set[str]:
    return {m for m in modules if m.split(".")[0] in HEAVY_PACKAGES or m in HEAVY_MODULES}


def saved_run(folder: Path, gold: Path) -> Path:
    """A report folder as `crossval` leaves it, with the gold file itself as the one config's predictions."""
    (folder / "predictions").mkdir(parents=True)
    shutil.copy(gold, folder / "predictions" / "alpha.jsonl")
    annotated = read_corpus([gold]).annotated()
    report = {"corpus": {"files": [str(gold)], "fingerprint": fingerprint(annotated)},
              "settings": {"mode": "exact"}, "roles": ["mover", "source", "path", "destination"],
              "systems": [{"name": "alpha", "predictions": "predictions/alpha.jsonl"}]}
    (folder / "report.json").write_text(json.dumps(report), encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def workspace(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("light")
    shutil.copy(DEMO_TEST, root / "gold.jsonl")
    (root / "unannotated.jsonl").write_text(
        json.dumps({"id": "u-1", "doc": "u", "text": "We rode to Kell Ferry."}) + "\n", encoding="utf-8")
    (root / "gated").mkdir()
    (root / "gated" / "report.json").write_text(json.dumps(tiny_report()), encoding="utf-8")
    saved_run(root / "run-a", root / "gold.jsonl")
    saved_run(root / "run-b", root / "gold.jsonl")
    accepted = run_command(["gate", "gated", "--baseline", "baseline.json", "--accept"], root)
    assert accepted["exit"] == 0, accepted["output"]
    return root


LIGHT = {
    "score": (["score", "gold.jsonl", "gold.jsonl", "--bootstrap", "50"], 0),
    "gate": (["gate", "gated", "--baseline", "baseline.json"], 0),
    "contrast": (["contrast", "run-a", "run-b", "--trials", "99"], 0),
    "merge": (["merge", "gold.jsonl", "--batch", "gold.jsonl", "-o", "merged.jsonl"], 0),
    "itinerary": (["itinerary", "gold.jsonl", "-o", "route.tsv"], 0),
    "convert": (["convert", "gold.jsonl", "-o", "gold.tsv"], 0),
    "help": (["--help"], 0),
    "version": (["--version"], 0),
    "check without lemmas": (["check", "gold.jsonl", "--no-lemmas"], 0),
    "check of records without events": (["check", "unannotated.jsonl"], 0),
}


@pytest.mark.parametrize("name", list(LIGHT))
def test_light_command_loads_neither_parser_nor_models(workspace, name):
    args, code = LIGHT[name]
    result = run_command(args, workspace)
    assert result["exit"] == code, result["output"]
    assert heavy(result["modules"]) == set()
    assert "trainer.cli" in result["modules"]


def test_score_output_is_the_scorers(workspace):
    """Gold scored against itself is perfect: every role's F1 is 1 (by the definition of F1, common practice)."""
    result = run_command(["score", "gold.jsonl", "gold.jsonl", "--bootstrap", "50"], workspace)
    rows = [line for line in result["output"].splitlines() if line.startswith("| mover ")]
    assert rows and "1.000" in rows[0]


@pytest.mark.slow
def test_check_loads_the_parser_when_triggers_need_lemmas(workspace):
    """The runner does see the parser when a command needs it: check lemmatises the gold triggers."""
    result = run_command(["check", "gold.jsonl"], workspace)
    assert result["exit"] == 0, result["output"]
    assert {"spacy", "trainer.parsing.pipeline"} <= heavy(result["modules"])
    assert "parser lemmas" in result["output"]
