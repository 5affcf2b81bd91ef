"""Scoring saved predictions and contrasting saved runs: no parser and no model is loaded.

``score_report`` scores any system's predictions against gold with the same
scorer as cross-validation; ``contrast_runs`` tests one config of each of two
saved cross-validation runs against each other on their held-out predictions.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, Sequence

from trainer.config import DEFAULT_SEED, DEFAULT_TRIALS, SCORING_MODES
from trainer.corpus.auxiliary import within_inventory
from trainer.corpus.reader import fingerprint, read_corpus
from trainer.corpus.records import Record
from trainer.errors import ConfigError, CorpusError, UnreadableInputError
from trainer.evaluation.bootstrap import bootstrap_f1s, interval_warning
from trainer.evaluation.breakdown import breakdown
from trainer.evaluation.confidence import confidence_report
from trainer.evaluation.error_analysis import error_analysis
from trainer.evaluation.scoring import count_corpus, missing_predictions
from trainer.evaluation.significance import compare_f1s
from trainer.evaluation.summary import EvaluationSettings
from trainer.outputs import check_output
from trainer.reports.folder import REPORT_JSON
from trainer.reports.json_report import dump_json, library_versions


def gold_records(gold_path: Path, *, roles: Sequence[str] | None, skip_bad: bool = False,
                 skippable: bool = False) -> list[Record]:
    """The records of a gold file, refused when none is annotated (``roles``: the inventory, None for any role
    name; ``skip_bad``: bad records left out; ``skippable``: the command offers ``--skip-bad``, so an error
    about a bad record may suggest it)."""
    gold = read_corpus([gold_path], roles=None if roles is None else tuple(roles), skip_bad=skip_bad,
                       skippable=skippable).records
    if not any(record.is_annotated for record in gold):
        held = f"its {len(gold)} record(s) are all unannotated (no `events` key)" if gold else "it holds no records"
        raise CorpusError(f"{gold_path}: no annotated gold records to score against: {held}",
                          "name the gold file: records with an `events` list ([] for a sentence without motion)")
    return gold


def score_report(gold_path: Path | str, pred_path: Path | str, *, roles: Sequence[str], settings: EvaluationSettings,
                 folder: Path | str | None = None, allow_missing: bool = False, skip_bad: bool = False,
                 subset: bool = False) -> dict[str, Any]:
    """Score any system's predictions (canonical JSONL) against gold with the same scorer as cross-validation.

    Annotated gold records with no predicted record are refused, naming them,
    unless ``allow_missing``: then they count as misses and the report lists them.
    ``skip_bad`` leaves out gold records with errors (as an extraction with ``--skip-bad`` did).
    ``roles`` is the inventory both files must keep to; with ``subset`` it is the roles scored instead, and
    role spans of other roles are left out of both files and counted (``left_out_roles``).
    """
    gold_path, pred_path, folder = Path(gold_path), Path(pred_path), Path(folder) if folder is not None else None
    if folder is not None:
        check_output(folder, inputs=[gold_path, pred_path], folder=True, what="score folder")
    gold = gold_records(gold_path, roles=None if subset else roles, skip_bad=skip_bad)
    predicted = read_corpus([pred_path], roles=None if subset else tuple(roles), skippable=False).records
    left_out: dict[str, dict[str, int]] = {}
    if subset:
        gold, left_out["gold"] = within_inventory(gold, roles)
        predicted, left_out["predictions"] = within_inventory(predicted, roles)
    missing = missing_predictions(gold, predicted)
    if missing and not allow_missing:
        named = ", ".join(repr(i) for i in missing[:5]) + (f" and {len(missing) - 5} more" if len(missing) > 5 else "")
        raise CorpusError(f"{pred_path}: {len(missing)} annotated gold record(s) of {gold_path} have no prediction: "
                          f"{named}", "predict every gold record, or pass --allow-missing (allow_missing=True) "
                          "to count their gold instances as missed")
    by_mode = {mode: count_corpus(gold, predicted, roles=roles, mode=mode) for mode in SCORING_MODES}
    counts = by_mode[settings.mode]
    scores = counts.scores()
    docs = len(set(counts.doc_of.values()))
    confidence = confidence_report(gold, predicted, roles=roles, mode=settings.mode)
    report = {
        "schema": "itinerant.score-report",
        "schema_version": 2,
        "gold": {"file": str(gold_path), "fingerprint": fingerprint(gold), "records": len(gold)},
        "predictions": {"file": str(pred_path), "records": len(predicted)},
        "missing_predictions": {"count": len(missing), "ids": missing},
        "left_out_roles": left_out,
        "settings": settings.to_dict(),
        "versions": library_versions(),
        "scores": scores.to_dict(),
        "intervals": {k: [round(lo, 6), round(hi, 6)] for k, (lo, hi) in bootstrap_f1s(
            counts.units(by=settings.bootstrap_unit), roles, samples=settings.bootstrap_samples,
            seed=settings.seed, confidence=settings.confidence).items()},
        "interval_docs": docs,
        "interval_warning": interval_warning(docs),
        **breakdown(by_mode),
        "calibration": confidence["calibration"],
        "thresholds": confidence["thresholds"],
        "errors": error_analysis(gold, predicted, roles=roles).to_dict(),
    }
    if folder is not None:
        folder.mkdir(parents=True, exist_ok=True)
        dump_json(report, folder / "score.json")
    return report


def _saved_run(folder: Path) -> dict[str, Any]:
    try:
        data = json.loads((folder / REPORT_JSON).read_text(encoding="utf-8"))
    except (FileNotFoundError, NotADirectoryError):
        raise UnreadableInputError(f"{folder}: no {REPORT_JSON} here", "name a folder written by `itinerant crossval`") from None
    except (OSError, ValueError, RecursionError) as exc:
        raise UnreadableInputError(f"{folder / REPORT_JSON}: cannot be read as a report ({exc})",
                                   "rerun the cross-validation") from None
    if not isinstance(data, dict):
        raise UnreadableInputError(f"{folder / REPORT_JSON}: not a report (expected a JSON object)", "rerun the cross-validation")
    return data


def contrast_runs(folder_a: Path | str, folder_b: Path | str, *, system_a: str | None = None, system_b: str | None = None,
                  trials: int = DEFAULT_TRIALS, seed: int = DEFAULT_SEED) -> dict[str, Any]:
    """A paired test between one config of each of two saved runs, on their saved held-out predictions."""
    folder_a, folder_b = Path(folder_a), Path(folder_b)
    report_a, report_b = _saved_run(folder_a), _saved_run(folder_b)
    if report_a["corpus"]["fingerprint"] != report_b["corpus"]["fingerprint"]:
        raise CorpusError("the two runs were made on different corpora (fingerprints differ)",
                          "contrast runs made on the same annotated records")
    plans = (report_a.get("fold_plan_fingerprint"), report_b.get("fold_plan_fingerprint"))
    if plans[0] != plans[1]:
        raise CorpusError(f"the two runs held out different folds (fold plans {plans[0]} and {plans[1]}), so a "
                          "difference would mix the configs with the splits", "rerun one of them with the other's "
                          "fold options (--folds, --repeats, --seed, --leave-one-doc-out, --leave-one-book-out)")
    if report_a["settings"]["mode"] != report_b["settings"]["mode"]:
        raise CorpusError(f"the runs use different scoring modes ({report_a['settings']['mode']} vs "
                          f"{report_b['settings']['mode']})", "rerun one of them with the other's --mode")
    roles = tuple(report_a["roles"])
    gold = read_corpus(report_a["corpus"]["files"], roles=roles, skippable=False).annotated()
    if fingerprint(gold) != report_a["corpus"]["fingerprint"]:
        raise CorpusError("the corpus files named in the report have changed since the run",
                          "rerun the cross-validation on the current files")
    mode = report_a["settings"]["mode"]
    picked = []
    for folder, report, name in ((folder_a, report_a, system_a), (folder_b, report_b, system_b)):
        system = next((s for s in report["systems"] if name in (None, s["name"])), None)
        if system is None:
            raise ConfigError(f"{folder}: no config named {name!r}", f"choose from: {[s['name'] for s in report['systems']]}")
        predicted = read_corpus([folder / system["predictions"]], roles=roles, skippable=False).records
        picked.append((system["name"], count_corpus(gold, predicted, roles=roles, mode=mode)))
    (name_a, counts_a), (name_b, counts_b) = picked
    tests = compare_f1s(counts_a.units(by="doc"), counts_b.units(by="doc"), roles, trials=trials, seed=seed)
    return {
        "a": {"run": str(folder_a), "system": name_a, "f1": counts_a.scores().f1s()},
        "b": {"run": str(folder_b), "system": name_b, "f1": counts_b.scores().f1s()},
        "mode": mode,
        "tests": {name: {"difference": round(d, 6), "p_value": round(p, 6)} for name, (d, p) in tests.items()},
    }
