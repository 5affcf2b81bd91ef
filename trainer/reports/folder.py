"""A run's report folder: JSON, Markdown, HTML and every config's held-out predictions."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any, Sequence

from trainer.corpus.jsonl import write_jsonl
from trainer.evaluation.summary import RunSummary
from trainer.reports.json_report import dump_json, report_dict, run_info
from trainer.reports.markdown import markdown_summary
from trainer.outputs import output_lock, write_text

if TYPE_CHECKING:  # only named in hints (see trainer.evaluation.summary)
    from trainer.evaluation.runs import CrossvalRun

REPORT_JSON = "report.json"
RUN_INFO_JSON = "run-info.json"
SUMMARY_MD = "summary.md"
REPORT_HTML = "report.html"


def write_report_folder(
    folder: Path, run: CrossvalRun, summary: RunSummary, *, corpus_files: Sequence[str], seconds: float,
    learning_curve: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """Write the report folder and return the report data (under the folder's lock, so two runs never mix).

    Prediction files an earlier run left in the folder for configs this run does not have are removed, so
    the folder holds one run's files only.
    """
    folder.mkdir(parents=True, exist_ok=True)
    report = report_dict(run, summary, corpus_files=corpus_files, learning_curve=learning_curve)
    predictions = {}
    with output_lock(folder):
        written = set()
        for system in run.systems:
            predicted = system.predictions()
            predictions[system.name] = predicted
            for path, records in ((folder / "predictions" / f"{system.name}.jsonl", predicted),
                                  (folder / "predictions" / f"{system.name}.gold-triggers.jsonl",
                                   system.predictions(gold_triggers=True))):
                write_jsonl(records, path)
                written.add(path.name)
        for stale in (folder / "predictions").glob("*.jsonl"):
            if stale.name not in written:
                stale.unlink()
        dump_json(report, folder / REPORT_JSON)
        dump_json(run_info(run, summary, seconds), folder / RUN_INFO_JSON)
        write_text(folder / SUMMARY_MD, markdown_summary(report))
        from trainer.reports.html import html_report  # plots need matplotlib: loaded only when a report is written

        explanations = {system.name: system.explanations() for system in run.systems}
        write_text(folder / REPORT_HTML, html_report(report, run.records, predictions, explanations=explanations))
    return report
