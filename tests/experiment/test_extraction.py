"""Extraction runs: options no run can use are refused before anything is read or written."""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from trainer.cli import app
from trainer.errors import ConfigError
from trainer.experiment.extraction import ExtractOptions, check_options, extract
from trainer.models.apply import extract_file
from trainer.models.training import load_extractor


@pytest.mark.parametrize("options, refused", [
    (ExtractOptions(batch_size=0), "--batch-size 0: a batch needs at least 1 sentence"),
    (ExtractOptions(jobs=0), "--jobs 0: at least one worker is needed"),
    (ExtractOptions(input_format="xml"), "--input-format 'xml' is not an input format"),
    (ExtractOptions(doc="  "), "--doc is empty: every record needs a document name"),
])
def test_unusable_options_are_refused(options, refused):
    with pytest.raises(ConfigError) as raised:
        check_options(options)
    assert raised.value.cause == refused and raised.value.exit_code == 2


def test_usable_options_pass():
    check_options(ExtractOptions(batch_size=1, jobs=2, input_format="jsonl", doc="book-1"))
    check_options(ExtractOptions())


def test_a_refused_option_reads_and_writes_nothing(tmp_path):
    out = tmp_path / "out.jsonl"
    with pytest.raises(ConfigError):  # the model path is not even looked at
        extract(tmp_path / "no-model.itin", [tmp_path / "no-book.txt"], out, ExtractOptions(batch_size=0))
    assert list(tmp_path.iterdir()) == []
    result = CliRunner().invoke(app, ["extract", str(tmp_path / "m.itin"), str(tmp_path / "b.txt"), "-o", str(out),
                                      "--jobs", "0"])
    assert result.exit_code == 2 and "--jobs 0" in result.output and "Traceback" not in result.output


def test_extract_file_refuses_an_empty_batch_size_from_python(rules_model_file, tmp_path):
    trained, _ = load_extractor(rules_model_file)
    source = tmp_path / "b.txt"
    source.write_text("We left Caddow.\n", encoding="utf-8")
    with pytest.raises(ConfigError, match="^--batch-size 0: a batch needs at least 1 sentence"):
        extract_file(trained, source, tmp_path / "o.jsonl", batch_size=0)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b.txt"]
