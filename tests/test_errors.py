"""One error module: every error class of the package lives in trainer.errors and is an ItinerantError."""

from __future__ import annotations

import pytest

import ast
import builtins
import inspect
from pathlib import Path

import trainer.errors
from trainer.errors import ItinerantError, StrictJSONError

PACKAGE = Path(trainer.errors.__file__).resolve().parent


def _class_names(path: Path) -> list[str]:
    return [node.name for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))) if isinstance(node, ast.ClassDef)]


def test_no_module_but_errors_defines_an_exception_class() -> None:
    """Read as source, so no module is imported (and none is missed) to find them."""
    exceptions = {name for name, obj in vars(builtins).items() if inspect.isclass(obj) and issubclass(obj, BaseException)}
    errors_module = PACKAGE / "errors.py"
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        if path == errors_module:
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ClassDef):
                bases = {b.id if isinstance(b, ast.Name) else getattr(b, "attr", "") for b in node.bases}
                if bases & exceptions or any(b.endswith("Error") for b in bases):
                    found.append(f"{path.relative_to(PACKAGE)}: {node.name}")
    assert found == []


def test_every_class_in_errors_is_an_itinerant_error_with_an_exit_code() -> None:
    names = _class_names(PACKAGE / "errors.py")
    assert {"UnknownFormatError", "GazetteerError", "TableFormatError", "GateInputError", "NoUncertaintyError",
            "StrictJSONError"} <= set(names)
    for name in names:
        cls = getattr(trainer.errors, name)
        assert issubclass(cls, ItinerantError), name
        assert cls.exit_code in (1, 2), name
        assert cls.__doc__, name


def test_an_error_carries_cause_and_fix() -> None:
    error = StrictJSONError("malformed JSON: Expecting value at column 3", "each line must be one complete JSON object")
    assert (error.cause, error.fix) == ("malformed JSON: Expecting value at column 3",
                                        "each line must be one complete JSON object")
    assert str(error) == "malformed JSON: Expecting value at column 3\n  fix: each line must be one complete JSON object"


def test_opening_names_the_path_what_was_wrong_and_the_fix(tmp_path) -> None:
    from trainer.errors import GateInputError, UnreadableInputError, opening

    with pytest.raises(UnreadableInputError) as missing:
        with opening(tmp_path / "gone.jsonl", expected="a .jsonl file"):
            open(tmp_path / "gone.jsonl")
    assert str(missing.value) == f"{tmp_path / 'gone.jsonl'}: no such file\n  fix: check the path"
    with pytest.raises(GateInputError) as folder:
        with opening(tmp_path, expected="the JSON file", what="baseline", error=GateInputError):
            (tmp_path).read_text()
    assert str(folder.value) == f"{tmp_path}: is a folder, not a baseline\n  fix: name the JSON file"
    with pytest.raises(ValueError):  # the caller's own errors pass through
        with opening(tmp_path, expected="x"):
            raise ValueError("not ours")
