"""A tiny hand-made report dict and records for the report tests (no training, no parsing).

Records (offsets found with ``str.index`` so they can be checked by eye):

- ``d1-s1`` "We left Caddow & rode by the <ford> to Kell Ferry." two events sharing the
  mover ``We``; alpha predicts it all, beta misses the source and the second mover;
- ``d1-s2`` "The mules followed the road to Kell Ferry." a destination nested in a path;
  alpha cuts the path to ``the road``, beta predicts nothing;
- ``d1-s3`` unannotated (``events`` None): never shown;
- ``d2-s1`` an annotated negative nobody predicts anything for: not shown;
- ``d2-s2`` an annotated negative where beta predicts a spurious event: shown.
"""

from __future__ import annotations

import copy
import dataclasses
from typing import Any

from trainer.corpus.records import Event, Record, RoleSpan
from trainer.evaluation.bootstrap import interval_warning
from trainer.evaluation.breakdown import breakdown
from trainer.evaluation.confidence import confidence_report
from trainer.evaluation.scoring import count_corpus

ROLES = ["mover", "source", "path", "destination"]

S1 = "We left Caddow & rode by the <ford> to Kell Ferry."
S2 = "The mules followed the road to Kell Ferry."
S5 = "The wind rose after noon."


def at(text: str, phrase: str, start: int = 0) -> tuple[int, int]:
    """The span of the first ``phrase`` in ``text`` at or after ``start``."""
    i = text.index(phrase, start)
    return (i, i + len(phrase))


def event(text: str, trigger: str, *roles: tuple[str, str]) -> Event:
    return Event(at(text, trigger), tuple(RoleSpan(role, at(text, phrase)) for role, phrase in roles))


LEFT = event(S1, "left", ("mover", "We"), ("source", "Caddow"))
RODE = event(S1, "rode", ("mover", "We"), ("path", "the <ford>"), ("destination", "Kell Ferry"))
FOLLOWED = event(S2, "followed", ("mover", "The mules"), ("path", "the road to Kell Ferry"),
                 ("destination", "Kell Ferry"))


def gold_records() -> list[Record]:
    return [
        Record("d1-s1", "d1", S1, (LEFT, RODE)),
        Record("d1-s2", "d1", S2, (FOLLOWED,)),
        Record("d1-s3", "d1", "Unannotated text about <nothing>."),
        Record("d2-s1", "d2", "It rained all day.", ()),
        Record("d2-s2", "d2", S5, ()),
    ]


def predictions() -> dict[str, list[Record]]:
    gold = {r.id: r for r in gold_records()}
    alpha = [
        gold["d1-s1"],
        gold["d1-s2"].with_events([event(S2, "followed", ("mover", "The mules"), ("path", "the road"),
                                         ("destination", "Kell Ferry"))]),
        gold["d2-s1"], gold["d2-s2"],
    ]
    beta = [
        gold["d1-s1"].with_events([event(S1, "left", ("mover", "We")),
                                   event(S1, "rode", ("path", "the <ford>"), ("destination", "Kell Ferry"))]),
        gold["d1-s2"].with_events([]),
        gold["d2-s1"],
        gold["d2-s2"].with_events([event(S5, "rose", ("mover", "The wind"))]),
    ]
    return {"alpha": alpha, "beta": beta}


def with_confidences(records: list[Record]) -> list[Record]:
    """The records with made-up confidences: 0.9 on triggers, 0.8 on spans longer than 8 characters, else 0.55."""
    def role(span: RoleSpan) -> RoleSpan:
        return dataclasses.replace(span, confidence=0.8 if span.span[1] - span.span[0] > 8 else 0.55)

    return [r.with_events([dataclasses.replace(e, confidence=0.9, roles=tuple(role(a) for a in e.roles))
                           for e in r.events]) if r.events is not None else r for r in records]


def measured(name: str) -> dict[str, Any]:
    """Both modes, per doc and per book, calibration and thresholds, computed from the sample records."""
    gold, predicted = gold_records(), with_confidences(predictions()[name])
    by_mode = {mode: count_corpus(gold, predicted, roles=ROLES, mode=mode) for mode in ("exact", "overlap")}
    confidence = confidence_report(gold, predicted, roles=ROLES)
    return {**breakdown(by_mode), "per_fold": [], "calibration": confidence["calibration"],
            "thresholds": confidence["thresholds"]}


def _score(precision: float, recall: float, f1: float, gold: int = 10, predicted: int = 9) -> dict[str, Any]:
    return {"precision": precision, "recall": recall, "f1": f1, "tp": 7, "fp": predicted - 7, "fn": gold - 7,
            "gold": gold, "predicted": predicted}


def _scores(shift: float) -> dict[str, Any]:
    roles = {role: _score(0.8 - shift, 0.7 - shift, 0.75 - shift - i / 20) for i, role in enumerate(ROLES)}
    return {
        "mode": "exact", "records": 4, "unannotated_skipped": 1, "roles": roles,
        "micro": _score(0.81 - shift, 0.71 - shift, 0.756 - shift, 40, 36),
        "macro": {"precision": 0.8 - shift, "recall": 0.7 - shift, "f1": 0.675 - shift},
        "trigger": _score(0.9 - shift, 0.85 - shift, 0.874 - shift, 3, 3),
        "unlinked": roles, "unlinked_micro": _score(0.85 - shift, 0.8 - shift, 0.824 - shift, 38, 35),
        "undefined": ["no predictions for role source: its precision is undefined (reported as 0.0)"] if shift else [],
    }


def _system(name: str, shift: float) -> dict[str, Any]:
    scores = _scores(shift)
    f1 = {role: scores["roles"][role]["f1"] for role in ROLES}
    f1.update(micro=scores["micro"]["f1"], macro=scores["macro"]["f1"], trigger=scores["trigger"]["f1"],
              **{"unlinked:micro": scores["unlinked_micro"]["f1"]})
    return {
        "name": name,
        "config": {"name": name, "trigger_model": {"kind": "crf"}, "role_model": {"kind": "logistic"},
                   "features": {"groups": ["lexical", "syntax"]}},
        "scores": scores,
        "gold_trigger_scores": _scores(shift / 2),
        "intervals": {key: [round(value - 0.1, 6), round(min(value + 0.05, 1.0), 6)] for key, value in f1.items()},
        "interval_docs": 2,
        "interval_warning": interval_warning(2),
        **measured(name),
        "fold_f1": {key: {"mean": value, "std": 0.02, "per_fold": [value - 0.02, value + 0.02]} for key, value in f1.items()},
        "errors": {
            "roles": ROLES,
            "counts": {"correct": 7, "boundary": 1, "wrong_role": 0, "wrong_trigger_link": 0, "missed": 2, "spurious": 1},
            "confusion": {row: {col: (7 if row == col == "mover" else 0) for col in [*ROLES, "none"]}
                          for row in [*ROLES, "none"]},
            "triggers": [["followed", 2], ["left", 1]],
            "prepositions": [["to", 2]],
            "examples": {
                "correct": [],
                "boundary": [{"id": "d1-s2", "text": S2, "kind": "boundary", "gold_role": "path",
                              "gold_trigger": "followed", "gold_span": "the road to Kell Ferry",
                              "predicted_role": "path", "predicted_trigger": "followed", "predicted_span": "the road"}],
                "missed": [{"id": "d1-s1", "text": S1, "kind": "missed", "gold_role": "path", "gold_trigger": "rode",
                            "gold_span": "the <ford>", "predicted_role": None, "predicted_trigger": None,
                            "predicted_span": None}],
            },
        },
        "predictions": f"predictions/{name}.jsonl",
        "predictions_gold_triggers": f"predictions/{name}.gold-triggers.jsonl",
    }


def tiny_report(*, curve: bool = False) -> dict[str, Any]:
    """A report dict shaped like ``report.json`` (version 2) for two configs, alpha and beta."""
    report: dict[str, Any] = {
        "schema": "itinerant.evaluation-report",
        "schema_version": 2,
        "corpus": {"files": ["tiny/<train>.jsonl"], "fingerprint": "0123456789abcdef" * 4, "records": 5, "docs": 2},
        "roles": list(ROLES),
        "settings": {"mode": "exact", "bootstrap_samples": 200, "bootstrap_unit": "doc", "confidence": 0.95,
                     "seed": 7, "trials": 999},
        "fold_plan_fingerprint": "feedfacecafebeef",
        "folds": [{"kind": "grouped_kfold", "seed": 7, "repeat": 0,
                   "folds": [{"fold": 0, "train_docs": ["d2"], "test_docs": ["d1"]},
                             {"fold": 1, "train_docs": ["d1"], "test_docs": ["d2"]}],
                   "test_fold_of": {"d1": 0, "d2": 1}}],
        "versions": {"python": "3.11", "itinerant": "0.1.0"},
        "systems": [_system("alpha", 0.0), _system("beta", 0.1)],
        "comparisons": [{"a": "alpha", "b": "beta", "tests": {
            "micro": {"difference": 0.1, "p_value": 0.03, "p_holm": 0.03},
            "mover": {"difference": -0.02, "p_value": 0.5, "p_holm": 0.5},
            **{name: {"difference": 0.05, "p_value": 0.2, "p_holm": 0.2}
               for name in ("source", "path", "destination", "trigger")}}}],
        "learning_curve": None,
    }
    if curve:
        report["learning_curve"] = {"shares": [0.5, 1.0], "systems": {
            name: [{"share": share, "train_records": 10 * share,
                    "f1": {key: round(value * share, 6) for key, value in
                           {**{r: 0.7 for r in ROLES}, "micro": 0.72, "macro": 0.7, "trigger": 0.9}.items()},
                    "intervals": {key: [round(value * share - 0.1, 6), round(value * share + 0.05, 6)] for key, value in
                                  {**{r: 0.7 for r in ROLES}, "micro": 0.72, "macro": 0.7, "trigger": 0.9}.items()},
                    "interval_warning": interval_warning(2)}
                   for share in (0.5, 1.0)]
            for name in ("alpha", "beta")}}
    return copy.deepcopy(report)
