"""Scoring a prediction file: missing predictions named, both modes, per doc and book, honest intervals."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from report_samples import ROLES, gold_records, predictions, tiny_report, with_confidences
from typer.testing import CliRunner

from trainer.cli import app
from trainer.corpus.jsonl import write_jsonl
from trainer.errors import CorpusError
from trainer.evaluation.summary import EvaluationSettings
from trainer.experiment.score import score_report
from trainer.reports.html import html_report
from trainer.reports.markdown import markdown_summary, score_markdown

SETTINGS = EvaluationSettings(bootstrap_samples=50)


@pytest.fixture
def files(tmp_path: Path) -> tuple[Path, Path]:
    """Gold (four annotated records in d1, d2) and beta's predictions without d1-s2."""
    gold, pred = tmp_path / "gold.jsonl", tmp_path / "beta.jsonl"
    write_jsonl(gold_records(), gold)
    write_jsonl([r for r in predictions()["beta"] if r.id != "d1-s2"], pred)
    return gold, pred


def test_gold_records_without_a_prediction_are_refused_and_named(files) -> None:
    gold, pred = files
    with pytest.raises(CorpusError, match=r"1 annotated gold record\(s\) .* have no prediction: 'd1-s2'") as caught:
        score_report(gold, pred, roles=ROLES, settings=SETTINGS)
    assert "--allow-missing" in caught.value.fix


@pytest.mark.parametrize("lines, held", [
    ([], "it holds no records"),
    ([{"id": "u", "doc": "d1", "text": "We rested."}], "its 1 record(s) are all unannotated"),
])
def test_a_gold_file_without_annotated_records_is_refused_before_any_scoring(tmp_path: Path, lines, held) -> None:
    gold, pred = tmp_path / "gold.jsonl", tmp_path / "pred.jsonl"
    gold.write_text("".join(json.dumps(line) + "\n" for line in lines), encoding="utf-8")
    write_jsonl(predictions()["beta"], pred)
    out = tmp_path / "scores"
    with pytest.raises(CorpusError, match=re.escape(f"no annotated gold records to score against: {held}")) as caught:
        score_report(gold, pred, roles=ROLES, settings=SETTINGS, folder=out)
    assert "`events` list" in caught.value.fix
    assert not out.exists()


def test_allow_missing_counts_them_as_missed_and_lists_them(files, tmp_path: Path) -> None:
    gold, pred = files
    report = score_report(gold, pred, roles=ROLES, settings=SETTINGS, allow_missing=True, folder=tmp_path / "s")
    assert report["missing_predictions"] == {"count": 1, "ids": ["d1-s2"]}
    # d1-s2's trigger "followed" and its mover, path and destination are all missed (beta got d1-s1's triggers).
    doc = report["per_doc"]["d1"]["exact"]
    assert doc["trigger"]["fn"] == 1 == report["scores"]["trigger"]["fn"]
    assert doc["roles"]["path"]["fn"] == 1 and doc["roles"]["destination"]["fn"] == 1
    assert doc["roles"]["mover"]["fn"] == 2  # and the mover "We" of "rode" in d1-s1
    assert json.loads((tmp_path / "s" / "score.json").read_text())["missing_predictions"]["ids"] == ["d1-s2"]
    text = score_markdown(report)
    assert "- warning: 1 gold record(s) had no prediction and count as missed: d1-s2" in text


def test_the_score_report_gives_both_modes_per_doc_and_warns_about_few_docs(files) -> None:
    gold, pred = files
    report = score_report(gold, pred, roles=ROLES, settings=SETTINGS, allow_missing=True)
    assert report["schema_version"] == 2
    assert list(report["matching"]) == ["exact", "overlap"]
    assert report["matching"]["exact"]["micro"] == {k: report["scores"]["micro"][k] for k in report["matching"]["exact"]["micro"]}
    assert list(report["per_doc"]) == ["d1", "d2"] and list(report["per_book"]) == ["d1", "d2"]
    assert report["interval_docs"] == 2
    assert "only 2 doc(s)" in report["interval_warning"]
    assert "- warning: the intervals come from only 2 doc(s)" in score_markdown(report)


def test_cli_score_stops_without_allow_missing_and_scores_with_it(files) -> None:
    gold, pred = files
    runner = CliRunner()
    refused = runner.invoke(app, ["score", str(gold), str(pred), "--bootstrap", "50"])
    assert refused.exit_code == 1 and "'d1-s2'" in refused.output and "Traceback" not in refused.output
    allowed = runner.invoke(app, ["score", str(gold), str(pred), "--bootstrap", "50", "--allow-missing"])
    assert allowed.exit_code == 0, allowed.output
    assert "count as missed: d1-s2" in allowed.output


def test_every_view_warns_about_intervals_from_few_docs_and_shows_holm() -> None:
    report = tiny_report(curve=True)  # two docs
    warning = "the intervals come from only 2 doc(s) (fewer than 5)"
    assert report["systems"][0]["interval_warning"].startswith(warning)
    text = markdown_summary(report)
    assert text.count(f"- warning: {warning}") == 3  # alpha, beta and the learning curve
    assert "| alpha | beta | micro | +0.100 | 0.0300 | 0.0300 |" in text
    page = html_report(report, gold_records(), predictions())
    assert page.count(f'<p class="warning">Warning: {warning}') == 3
    assert "<th class=\"num\">p (Holm)</th>" in page


def test_views_show_both_modes_per_book_doc_and_the_full_learning_curve() -> None:
    report = tiny_report(curve=True)
    text = markdown_summary(report)
    assert "| score | exact P | exact R | exact F1 | overlap P | overlap R | overlap F1 |" in text
    assert "Per book:" in text and "Per doc:" in text
    # The learning curve shows every role and trigger with intervals, share 100% included.
    assert "| share | training records | micro | mover | source | path | destination | trigger |" in text
    assert "| 100% | 10 | 0.720 [0.620, 0.770] |" in text
    page = html_report(report, gold_records(), predictions())
    assert 'class="matching"' in page and 'class="per-book"' in page and 'class="per-doc"' in page
    assert 'class="confidence"' in page


def test_predictions_without_confidences_say_so_instead_of_an_empty_threshold_list(tmp_path: Path) -> None:
    gold = tmp_path / "gold.jsonl"
    write_jsonl(gold_records(), gold)
    report = score_report(gold, gold, roles=ROLES, settings=SETTINGS)  # gold records carry no confidences
    assert all(c["instances"] == 0 for c in report["calibration"].values())
    text = score_markdown(report)
    assert "Calibration and confidence thresholds: none, the predictions carry no confidences." in text
    assert "F1-optimal confidence thresholds" not in text and "Expected calibration error" not in text


def test_predictions_with_confidences_list_their_calibration_and_thresholds(tmp_path: Path) -> None:
    gold, pred = tmp_path / "gold.jsonl", tmp_path / "pred.jsonl"
    write_jsonl(gold_records(), gold)
    write_jsonl(with_confidences(predictions()["beta"]), pred)
    report = score_report(gold, pred, roles=ROLES, settings=SETTINGS)
    assert any(c["instances"] for c in report["calibration"].values())
    text = score_markdown(report)
    assert "Expected calibration error of held-out confidences (instances): trigger " in text
    assert "F1-optimal confidence thresholds on held-out predictions: trigger " in text


def test_roles_given_as_a_subset_are_scored_and_the_others_left_out_and_counted(files) -> None:
    gold, pred = files
    full = score_report(gold, pred, roles=ROLES, settings=SETTINGS, allow_missing=True)
    with pytest.raises(CorpusError, match="unknown role"):  # without subset the roles are the files' inventory
        score_report(gold, pred, roles=("mover", "destination"), settings=SETTINGS, allow_missing=True)
    part = score_report(gold, pred, roles=("mover", "destination"), settings=SETTINGS, allow_missing=True, subset=True)
    assert list(part["scores"]["roles"]) == ["mover", "destination"]
    for role in ("mover", "destination"):
        assert part["scores"]["roles"][role] == full["scores"]["roles"][role]
    assert part["left_out_roles"]["gold"] == {r: full["scores"]["roles"][r]["gold"] for r in ("path", "source")
                                              if full["scores"]["roles"][r]["gold"]}
    assert part["scores"]["trigger"] == full["scores"]["trigger"]
