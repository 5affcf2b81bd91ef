"""The run summary's breakdown: folds whose training annotation departed from the auxiliary corpora's conventions."""

from __future__ import annotations

from report_samples import ROLES, tiny_report

from trainer.reports.html import breakdown_section
from trainer.reports.markdown import breakdown_lines

DEPARTURE = "the rules' mover precision 0.30 against 0.90, z -22.9"


def _with_folds(*departing: list[str]) -> tuple[dict, dict]:
    report = tiny_report()
    system = report["systems"][0]
    book = next(iter(system["per_book"].values()))
    system["per_fold"] = [{"repeat": 0, "fold": k, "docs": [f"book{k}-1"], **book,
                           **({"conventions_departing": found} if found else {})} for k, found in enumerate(departing)]
    return report, system


def test_the_summary_names_each_fold_whose_features_were_augmented_for_its_conventions():
    _, system = _with_folds([DEPARTURE], [])
    lines = breakdown_lines(system, list(ROLES))
    start = lines.index("Features augmented by corpus in 1 of 2 folds, for the stage (triggers or roles) whose training "
                        "annotation departs from the auxiliary corpora's conventions "
                        "(`[auxiliary] augment_if_conventions_differ`):")
    assert lines[start + 2] == f"- repeat 0 fold 0 (book0-1): {DEPARTURE}"
    assert not any("fold 1" in line and "rules'" in line for line in lines)
    _, plain = _with_folds([], [])
    assert not any("augmented by corpus" in line for line in breakdown_lines(plain, list(ROLES)))


def test_the_page_lists_them_too_escaped():
    report, system = _with_folds([DEPARTURE], [])
    page = breakdown_section(report, system)
    assert "Features augmented by corpus in 1 of 2 folds" in page
    assert "<li>repeat 0 fold 0 (book0-1): the rules&#x27; mover precision 0.30 against 0.90, z -22.9</li>" in page
    assert "augmented by corpus" not in breakdown_section(*_with_folds([], []))
