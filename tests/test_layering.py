"""The package's layers: data flows one way, from records to reports, and scoring stays light.

Checked on the source itself: every import (module level, inside functions, or
under TYPE_CHECKING) of the lower layers is read with :mod:`ast`, and a fresh
interpreter imports the scorer to see what it loads.
"""

from __future__ import annotations

import ast
import json
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "trainer"
LOWER_LAYERS = ("corpus", "parsing", "features", "models", "evaluation")
UPPER_LAYERS = ("trainer.experiment", "trainer.reports", "trainer.cli")


def imported_modules(path: Path) -> set[str]:
    """Every module a source file imports, wherever the import statement stands."""
    names: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            names.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names.add(node.module)
            names.update(f"{node.module}.{alias.name}" for alias in node.names)
    return names


@pytest.mark.parametrize("layer", LOWER_LAYERS)
def test_lower_layers_never_import_the_experiment_layer_the_reports_or_the_cli(layer: str) -> None:
    files = sorted((PACKAGE / layer).rglob("*.py"))
    assert files
    offending = {str(f.relative_to(PACKAGE)): sorted(m for m in imported_modules(f) if m.startswith(UPPER_LAYERS))
                 for f in files}
    assert {name: found for name, found in offending.items() if found} == {}


def test_the_import_reader_sees_imports_inside_functions_and_type_checking_blocks(tmp_path: Path) -> None:
    source = tmp_path / "sample.py"
    source.write_text("from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from trainer.reports import html\n"
                      "def f():\n    import trainer.cli\n", encoding="utf-8")
    assert {"trainer.reports", "trainer.reports.html", "trainer.cli"} <= imported_modules(source)


@pytest.mark.parametrize("module", ["trainer.evaluation.scoring", "trainer.evaluation.summary", "trainer.config",
                                    "trainer.experiment.score", "trainer.experiment.settings"])
def test_scoring_and_settings_load_neither_the_parser_nor_the_model_libraries(module: str) -> None:
    code = f"import sys, json, {module}; print(json.dumps(sorted(sys.modules)))"
    loaded = set(json.loads(subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                                           check=True).stdout))
    assert module in loaded
    assert not {"spacy", "sklearn", "sklearn_crfsuite", "trainer.models.extractor"} & loaded


def test_every_cli_command_is_a_thin_call_into_the_library() -> None:
    """Each command's body (after its docstring) stays within about 25 lines: parse, call, print, exit."""
    tree = ast.parse((PACKAGE / "cli.py").read_text(encoding="utf-8"))
    lengths = {}
    for node in tree.body:
        if isinstance(node, ast.FunctionDef) and any(
                isinstance(d, ast.Call) and getattr(d.func, "attr", "") == "command" for d in node.decorator_list):
            body = node.body[1:] if isinstance(node.body[0], ast.Expr) else node.body
            lengths[node.name] = node.end_lineno - body[0].lineno + 1
    assert len(lengths) >= 15
    assert {name: n for name, n in lengths.items() if n > 25} == {}


def test_every_public_name_resolves_and_importing_the_package_stays_light() -> None:
    import trainer

    assert all(getattr(trainer, name) is not None for name in trainer.__all__)
    code = "import sys, json, trainer; print(json.dumps(sorted(sys.modules)))"
    loaded = set(json.loads(subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                                           check=True).stdout))
    assert not {"spacy", "sklearn", "trainer.config"} & loaded
    with pytest.raises(AttributeError):
        trainer.no_such_name  # noqa: B018


def test_the_public_functions_take_paths_as_strings(demo_train, tmp_path, monkeypatch) -> None:
    """Everything the CLI does works from Python, where paths are often plain strings."""
    import trainer
    from trainer.corpus.records import DEFAULT_ROLES
    from trainer.experiment.itineraries import itinerary_files
    from trainer.experiment.settings import scoring_settings

    monkeypatch.chdir(tmp_path)
    gold = str(demo_train / "quarne-salt-1.jsonl")
    settings = trainer.resolve_settings([str(PACKAGE.parent / "configs" / "rules.toml")])
    assert trainer.fit_model([gold], "m.itin", settings).records > 0
    outcome = trainer.extract("m.itin", [gold], "out.jsonl")
    assert outcome.book.sentences > 0 and (tmp_path / "out.jsonl").is_file()
    scored = trainer.score_report(gold, "out.jsonl", roles=DEFAULT_ROLES, settings=scoring_settings(), folder="scored")
    assert scored["scores"]["micro"]["f1"] > 0 and (tmp_path / "scored" / "score.json").is_file()
    itinerary_files([gold], "route.tsv")
    assert (tmp_path / "route.tsv").is_file()
    assert trainer.GateRequest(report="run", baseline="b.json").report == Path("run")
