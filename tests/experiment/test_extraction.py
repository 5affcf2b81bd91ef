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


def test_a_table_name_of_no_table_format_is_refused_before_any_work(tmp_path):
    from trainer.errors import UnknownFormatError

    with pytest.raises(UnknownFormatError) as raised:
        check_options(ExtractOptions(table=tmp_path / "events.xlsx"))
    assert raised.value.cause.endswith("a table must end in .csv or .tsv, not '.xlsx'") and raised.value.exit_code == 2


GOOD = '{"id": "g1", "doc": "d", "text": "We left Caddow.", "events": [{"trigger": [3, 7], "roles": []}]}'


def test_compare_is_refused_before_writing_when_the_input_has_no_gold(rules_model_file, tmp_path):
    source = tmp_path / "plain.jsonl"
    source.write_text('{"id": "u1", "doc": "d", "text": "We left Caddow."}\n', encoding="utf-8")
    out = tmp_path / "out.jsonl"
    out.write_text("an earlier result\n", encoding="utf-8")
    result = CliRunner().invoke(app, ["extract", str(rules_model_file), str(source), "-o", str(out), "--compare"])
    assert result.exit_code == 1 and "no annotated gold records to score against" in result.output
    assert out.read_text(encoding="utf-8") == "an earlier result\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.jsonl", "plain.jsonl"]


def test_compare_with_skip_bad_scores_the_good_records(rules_model_file, tmp_path):
    source = tmp_path / "mixed.jsonl"
    source.write_text(GOOD + '\n{"id": "bad", "doc": "d", "text": 5}\n', encoding="utf-8")
    out = tmp_path / "out.jsonl"
    result = CliRunner().invoke(app, ["extract", str(rules_model_file), str(source), "-o", str(out), "--compare",
                                      "--skip-bad"])
    assert result.exit_code == 0, result.output
    assert "skipped " in result.output and "| trigger | 1.000 | 1.000 | 1.000 |" in result.output
    assert len(out.read_text(encoding="utf-8").splitlines()) == 1


def test_a_bad_first_record_leaves_no_partial_file(rules_model_file, tmp_path):
    source = tmp_path / "bad.jsonl"
    source.write_text("{not json\n" + GOOD + "\n", encoding="utf-8")
    result = CliRunner().invoke(app, ["extract", str(rules_model_file), str(source), "-o", str(tmp_path / "o.jsonl")])
    assert result.exit_code == 1 and "malformed JSON" in result.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.jsonl"]
