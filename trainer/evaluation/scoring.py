"""Scoring predicted motion events against gold, as the annotation spec's section 3 says.

Three layers, as in seqeval: **counts -> scores -> views**.

- :func:`count_record` / :func:`count_corpus` match instances record by record
  and return :class:`Counts` (tp, fp, fn) per key.
- :func:`scores_from_counts` pools counts into :class:`Scores` (per role,
  micro, macro, trigger, and the trigger-free "unlinked" view). The pooled
  scores, the bootstrap and the significance test all go through the same
  array core (:func:`counts_array`, :func:`f1_arrays`), so they cannot drift.
- :meth:`Scores.to_dict` is the JSON view.

Instances, per record (identical instances collapse to one: each view is a set):

- role instance: ``(trigger span, role, argument span)``;
- unlinked role instance (``link=False``): ``(role, argument span)``;
- trigger instance: ``trigger span``.

Matching: ``exact`` needs every span equal. ``overlap`` lets a prediction
match at most one gold instance of the same role whose spans all overlap it,
one-to-one, greedily by largest overlap (characters shared by the arguments
plus characters shared by the triggers); ties go first to exact pairs, then
by position (gold spans, then predicted spans). Exact pairs always have the
largest overlap their two instances can reach, so the tie rule means every
exact match is also an overlap match: overlap scores are never below exact.

Roles not listed in ``roles`` are not scored. Undefined metrics (no gold, no
predictions) are reported as 0.0 and named in :attr:`Scores.undefined`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from trainer.config import DEFAULT_MODE, SCORING_MODES
from trainer.corpus.records import DEFAULT_ROLES, Record
from trainer.errors import ConfigError, CorpusError

TRIGGER = "trigger"
MICRO = "micro"
MACRO = "macro"
UNLINKED = "unlinked:"
RESERVED_NAMES = (TRIGGER, MICRO, MACRO)
MAX_NAMED = 5
DIGITS = 6

Span = tuple[int, int]
Instance = tuple[Span, ...]
UnitCounts = Mapping[str, "Counts"]


# ---------------------------------------------------------------- counts and scores


def _prf_arrays(tp: Any, fp: Any, fn: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Element-wise precision, recall, F1 of count arrays; 0.0 where a denominator is 0."""
    tp, fp, fn = (np.asarray(x, dtype=float) for x in (tp, fp, fn))
    predicted, gold, f_denominator = tp + fp, tp + fn, 2 * tp + fp + fn
    precision = np.divide(tp, predicted, out=np.zeros(predicted.shape), where=predicted > 0)
    recall = np.divide(tp, gold, out=np.zeros(gold.shape), where=gold > 0)
    f1 = np.divide(2 * tp, f_denominator, out=np.zeros(f_denominator.shape), where=f_denominator > 0)
    return precision, recall, f1


def prf(tp: int, fp: int, fn: int) -> tuple[float, float, float]:
    """Precision, recall and F1 from counts; 0.0 where undefined (no predictions, no gold, neither).

    F1 is computed as ``2tp / (2tp + fp + fn)``, equal to the harmonic mean of
    precision and recall whenever both are defined.

    >>> prf(3, 1, 2)
    (0.75, 0.6, 0.6666666666666666)
    """
    precision, recall, f1 = _prf_arrays(tp, fp, fn)
    return float(precision), float(recall), float(f1)


@dataclass(frozen=True)
class Counts:
    """True positives, false positives and false negatives; add them to pool."""

    tp: int = 0
    fp: int = 0
    fn: int = 0

    def __add__(self, other: "Counts") -> "Counts":
        if not isinstance(other, Counts):
            return NotImplemented
        return Counts(self.tp + other.tp, self.fp + other.fp, self.fn + other.fn)

    def __radd__(self, other: object) -> "Counts":
        """Lets ``sum(counts)`` start from 0."""
        if other == 0:
            return self
        return NotImplemented

    @property
    def gold(self) -> int:
        return self.tp + self.fn

    @property
    def predicted(self) -> int:
        return self.tp + self.fp


@dataclass(frozen=True)
class RoleScore:
    """Precision, recall, F1 and the counts behind them."""

    precision: float
    recall: float
    f1: float
    tp: int
    fp: int
    fn: int
    gold: int
    predicted: int

    @classmethod
    def from_counts(cls, counts: Counts) -> "RoleScore":
        precision, recall, f1 = prf(counts.tp, counts.fp, counts.fn)
        return cls(precision, recall, f1, counts.tp, counts.fp, counts.fn, counts.gold, counts.predicted)

    def to_dict(self) -> dict[str, float | int]:
        return {
            "precision": round(self.precision, DIGITS),
            "recall": round(self.recall, DIGITS),
            "f1": round(self.f1, DIGITS),
            "tp": self.tp,
            "fp": self.fp,
            "fn": self.fn,
            "gold": self.gold,
            "predicted": self.predicted,
        }


@dataclass(frozen=True)
class MacroScore:
    """Unweighted means over roles of per-role precision, recall and F1."""

    precision: float
    recall: float
    f1: float

    def to_dict(self) -> dict[str, float]:
        return {"precision": round(self.precision, DIGITS), "recall": round(self.recall, DIGITS),
                "f1": round(self.f1, DIGITS)}


@dataclass
class Scores:
    """Everything section 3 of the spec asks for, for one scoring mode.

    ``per_role``, ``micro`` (counts pooled over roles) and ``macro`` (mean of
    per-role scores) score role instances with their trigger link;
    ``unlinked`` and ``unlinked_micro`` score (role, argument span) only;
    ``trigger`` scores trigger spans. ``records`` annotated gold records were
    scored; ``unannotated`` gold records (no ``events``) were skipped.
    """

    mode: str
    roles: tuple[str, ...]
    per_role: dict[str, RoleScore]
    micro: RoleScore
    macro: MacroScore
    trigger: RoleScore
    unlinked: dict[str, RoleScore]
    unlinked_micro: RoleScore
    records: int = 0
    unannotated: int = 0
    undefined: list[str] = field(default_factory=list)

    def f1s(self) -> dict[str, float]:
        """Every F1 held here, named as :func:`f1_names` names them (the bootstrap uses the same names)."""
        out = {role: self.per_role[role].f1 for role in self.roles}
        out[MICRO] = self.micro.f1
        out[MACRO] = self.macro.f1
        out[TRIGGER] = self.trigger.f1
        out.update({UNLINKED + role: self.unlinked[role].f1 for role in self.roles})
        out[UNLINKED + MICRO] = self.unlinked_micro.f1
        return out

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-able data, keys in a fixed order, floats rounded to 6 places."""
        return {
            "mode": self.mode,
            "records": self.records,
            "unannotated_skipped": self.unannotated,
            "roles": {role: self.per_role[role].to_dict() for role in self.roles},
            "micro": self.micro.to_dict(),
            "macro": self.macro.to_dict(),
            "trigger": self.trigger.to_dict(),
            "unlinked": {role: self.unlinked[role].to_dict() for role in self.roles},
            "unlinked_micro": self.unlinked_micro.to_dict(),
            "undefined": list(self.undefined),
        }


# ---------------------------------------------------------------- the array core


def score_keys(roles: Sequence[str]) -> tuple[str, ...]:
    """The count keys of one record: each role, ``trigger``, then ``unlinked:<role>`` for each role."""
    return (*roles, TRIGGER, *(UNLINKED + role for role in roles))


def f1_names(roles: Sequence[str]) -> tuple[str, ...]:
    """The names of every F1 in :class:`Scores`, in report order."""
    return (*roles, MICRO, MACRO, TRIGGER, *(UNLINKED + role for role in roles), UNLINKED + MICRO)


def counts_array(units: Iterable[UnitCounts], roles: Sequence[str]) -> np.ndarray:
    """Counts of each unit as an int array of shape ``(units, len(score_keys(roles)), 3)`` (tp, fp, fn).

    A key missing from a unit counts as zeros.
    """
    keys = score_keys(roles)
    zero = Counts()
    rows = [[(c.tp, c.fp, c.fn) for c in (unit.get(key, zero) for key in keys)] for unit in units]
    return np.asarray(rows, dtype=np.int64).reshape(len(rows), len(keys), 3)


def _views(totals: np.ndarray, roles: Sequence[str]) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """(precision, recall, F1) and pooled (tp, fp, fn), each an array ``(..., 3)``, for every name of :func:`f1_names`.

    ``totals`` has shape ``(..., keys, 3)``; micro sums the role keys; macro
    (no counts) is the mean of the per-role precision, recall and F1.
    """
    n = len(roles)
    names = (*score_keys(roles), MICRO, UNLINKED + MICRO)
    pooled = np.concatenate([totals, totals[..., :n, :].sum(axis=-2, keepdims=True),
                             totals[..., n + 1 :, :].sum(axis=-2, keepdims=True)], axis=-2)
    scores = np.stack(_prf_arrays(pooled[..., 0], pooled[..., 1], pooled[..., 2]), axis=-1)
    by_name = {name: scores[..., i, :] for i, name in enumerate(names)}
    by_name[MACRO] = scores[..., :n, :].mean(axis=-2)
    counts = {name: pooled[..., i, :] for i, name in enumerate(names)}
    return {name: by_name[name] for name in f1_names(roles)}, counts


def f1_arrays(totals: np.ndarray, roles: Sequence[str]) -> dict[str, np.ndarray]:
    """F1 for every name of :func:`f1_names`, from pooled counts of shape ``(..., keys, 3)``.

    With a leading axis (bootstrap samples, permutation trials) every F1 comes
    back as an array over that axis.
    """
    return {name: values[..., 2] for name, values in _views(totals, roles)[0].items()}


def check_roles(roles: Sequence[str]) -> tuple[str, ...]:
    """The roles as a tuple; repeats and score names (trigger, micro, macro, ``unlinked:``...) are refused."""
    roles = tuple(roles)
    if not roles:
        raise ConfigError("roles must not be empty", "score at least one role, e.g. roles=('mover',)")
    if len(set(roles)) != len(roles):
        raise ConfigError(f"roles must not repeat, got {list(roles)}", "list each role once")
    bad = [r for r in roles if r in RESERVED_NAMES or r.startswith(UNLINKED)]
    if bad:
        raise ConfigError(f"role name(s) {bad} are reserved for score names",
                          f"rename them: {', '.join(RESERVED_NAMES)} and the '{UNLINKED}' prefix are taken")
    return roles


def _check_mode(mode: str) -> None:
    if mode not in SCORING_MODES:
        raise ConfigError(f"mode={mode!r} is not a scoring mode", f"use one of: {', '.join(SCORING_MODES)}")


def scores_from_counts(
    counts: Mapping[str, UnitCounts] | Iterable[UnitCounts],
    roles: Sequence[str] = DEFAULT_ROLES,
    *,
    mode: str = DEFAULT_MODE,
    records: int | None = None,
    unannotated: int = 0,
) -> Scores:
    """Pool per-record (or per-document) counts into :class:`Scores`.

    ``counts`` is a mapping ``unit id -> {key: Counts}`` (keys from
    :func:`score_keys`) or just an iterable of such dicts. ``records`` defaults
    to the number of units; ``mode`` only labels the result.
    """
    roles = check_roles(roles)
    _check_mode(mode)
    units = list(counts.values()) if isinstance(counts, Mapping) else list(counts)
    totals = counts_array(units, roles).sum(axis=0)
    views, pooled = _views(totals, roles)

    def role_score(name: str) -> RoleScore:
        tp, fp, fn = (int(x) for x in pooled[name])
        (precision, recall, f1) = (float(x) for x in views[name])
        return RoleScore(precision, recall, f1, tp, fp, fn, tp + fn, tp + fp)

    scores = Scores(
        mode=mode,
        roles=roles,
        per_role={role: role_score(role) for role in roles},
        micro=role_score(MICRO),
        macro=MacroScore(*(float(x) for x in views[MACRO])),
        trigger=role_score(TRIGGER),
        unlinked={role: role_score(UNLINKED + role) for role in roles},
        unlinked_micro=role_score(UNLINKED + MICRO),
        records=len(units) if records is None else records,
        unannotated=unannotated,
    )
    scores.undefined = _undefined(scores)
    return scores


def _undefined(scores: Scores) -> list[str]:
    """Warnings for every metric that is undefined and reported as 0.0."""
    notes = []
    if scores.records == 0:
        notes.append("no annotated gold records were scored: every metric is undefined (reported as 0.0)")
    for role in scores.roles:
        score = scores.per_role[role]
        if score.gold == 0:
            notes.append(f"role {role} has no gold instances: its recall is undefined (reported as 0.0)")
        if score.predicted == 0:
            notes.append(f"no predictions for role {role}: its precision is undefined (reported as 0.0)")
    if scores.trigger.gold == 0:
        notes.append("trigger has no gold instances: its recall is undefined (reported as 0.0)")
    if scores.trigger.predicted == 0:
        notes.append("no predictions for trigger: its precision is undefined (reported as 0.0)")
    if any(scores.per_role[r].gold == 0 and scores.per_role[r].predicted == 0 for r in scores.roles):
        notes.append("macro averages include roles with neither gold nor predictions, counted as F1 0.0")
    return notes


# ---------------------------------------------------------------- matching


def span_overlap(a: Span, b: Span) -> int:
    """Characters two ``[start, end)`` spans share."""
    return max(0, min(a[1], b[1]) - max(a[0], b[0]))


def match_instances(gold: set[Instance], pred: set[Instance], mode: str) -> list[tuple[Instance, Instance]]:
    """One-to-one (gold, predicted) pairs that match, in gold order.

    An instance is a tuple of spans (trigger and argument, or one of them).
    ``exact``: equal instances. ``overlap``: every span pair overlaps; greedy by
    the summed overlap, ties to exact pairs, then by position.
    """
    _check_mode(mode)
    if mode == "exact":
        return [(inst, inst) for inst in sorted(gold & pred)]
    candidates = []
    for g in gold:
        for p in pred:
            sizes = [span_overlap(a, b) for a, b in zip(g, p)]
            if g == p or all(size > 0 for size in sizes):
                candidates.append((-sum(sizes), g != p, g, p))
    candidates.sort()
    used_gold: set[Instance] = set()
    used_pred: set[Instance] = set()
    pairs = []
    for _, _, g, p in candidates:
        if g not in used_gold and p not in used_pred:
            used_gold.add(g)
            used_pred.add(p)
            pairs.append((g, p))
    return sorted(pairs)


def as_span(value: Sequence[int]) -> Span:
    """A span as a tuple of two ints (JSON gives lists)."""
    return (int(value[0]), int(value[1]))


def role_instances(record: Record, role: str, *, link: bool = True) -> set[Instance]:
    """The record's instances of one role: ``(trigger, argument)`` spans, or ``(argument,)`` without link."""
    out: set[Instance] = set()
    for event in record.events or ():
        for argument in event.roles:
            if argument.role == role:
                span = as_span(argument.span)
                out.add((as_span(event.trigger), span) if link else (span,))
    return out


def trigger_instances(record: Record) -> set[Instance]:
    """The record's trigger spans, each as a one-span instance."""
    return {(as_span(event.trigger),) for event in record.events or ()}


def _counts(gold: set[Instance], pred: set[Instance], mode: str) -> Counts:
    tp = len(match_instances(gold, pred, mode))
    return Counts(tp, len(pred) - tp, len(gold) - tp)


def count_record(
    gold: Record, pred: Record, *, roles: Sequence[str] = DEFAULT_ROLES, mode: str = DEFAULT_MODE, link: bool = True
) -> dict[str, Counts]:
    """Counts of one record: a key per role, plus ``trigger``.

    ``pred.events`` of ``None`` counts as no prediction. ``link=False`` scores
    (role, argument span) and ignores the trigger.
    """
    roles = check_roles(roles)
    _check_mode(mode)
    if gold.events is None:
        raise CorpusError(f"gold record {gold.id!r} is unannotated (no 'events'), so it cannot be scored",
                          "score only annotated records; score_corpus skips unannotated ones")
    if pred.text != gold.text:
        raise CorpusError(f"record {gold.id!r}: the prediction's text differs from the gold text",
                          "predict on the gold records' text unchanged; offsets only compare on identical text")
    out = {role: _counts(role_instances(gold, role, link=link), role_instances(pred, role, link=link), mode)
           for role in roles}
    out[TRIGGER] = _counts(trigger_instances(gold), trigger_instances(pred), mode)
    return out


# ---------------------------------------------------------------- corpora


def _name_some(ids: Sequence[str]) -> str:
    """Up to five ids, quoted, with how many more were left out."""
    named = ", ".join(repr(i) for i in ids[:MAX_NAMED])
    return named + (f" and {len(ids) - MAX_NAMED} more" if len(ids) > MAX_NAMED else "")


def _duplicates(records: Sequence[Record]) -> list[str]:
    seen: set[str] = set()
    repeated: list[str] = []
    for record in records:
        if record.id in seen and record.id not in repeated:
            repeated.append(record.id)
        seen.add(record.id)
    return repeated


def pair_by_id(gold: Sequence[Record], pred: Sequence[Record]) -> tuple[list[tuple[Record, Record]], list[str]]:
    """(gold, prediction) pairs for every annotated gold record, and the ids of unannotated gold records.

    A gold record with no prediction is paired with an empty prediction.
    Refused: repeated ids, predicted ids that are not in the gold, and a
    prediction whose text differs from its gold record's.
    """
    for name, records in (("gold", gold), ("predicted", pred)):
        repeated = _duplicates(records)
        if repeated:
            raise CorpusError(f"{len(repeated)} id(s) occur more than once in the {name} records: {_name_some(repeated)}",
                              "give every record a unique id")
    gold_ids = {record.id for record in gold}
    unknown = [record.id for record in pred if record.id not in gold_ids]
    if unknown:
        raise CorpusError(f"{len(unknown)} predicted record(s) have ids not in the gold records: {_name_some(unknown)}",
                          "score predictions against the gold file they were made from, or drop those records")
    by_id = {record.id: record for record in pred}
    pairs: list[tuple[Record, Record]] = []
    unannotated: list[str] = []
    changed: list[str] = []
    for record in gold:
        if record.events is None:
            unannotated.append(record.id)
            continue
        prediction = by_id.get(record.id, record.with_events(()))
        if prediction.text != record.text:
            changed.append(record.id)
        pairs.append((record, prediction))
    if changed:
        raise CorpusError(f"{len(changed)} prediction(s) have a text that differs from the gold record with the same id: "
                          f"{_name_some(changed)}",
                          "predict on the gold records' text unchanged; offsets only compare on identical text")
    return pairs, unannotated


def missing_predictions(gold: Sequence[Record], pred: Sequence[Record]) -> list[str]:
    """Ids of annotated gold records that no predicted record answers (they would count as misses)."""
    predicted = {record.id for record in pred}
    return [record.id for record in gold if record.events is not None and record.id not in predicted]


@dataclass
class CorpusCounts:
    """Per-record counts of a corpus: ``by_record[id][key]`` with keys from :func:`score_keys`.

    ``doc_of`` maps each scored record to its document, for grouping counts
    into bootstrap or significance units; ``unannotated`` lists gold records
    that were skipped.
    """

    mode: str
    roles: tuple[str, ...]
    by_record: dict[str, dict[str, Counts]]
    doc_of: dict[str, str]
    unannotated: list[str] = field(default_factory=list)

    def units(self, *, by: str = "doc") -> dict[str, dict[str, Counts]]:
        """Counts summed per unit (``by="doc"`` or ``"record"``), units sorted by id."""
        if by not in ("doc", "record"):
            raise ConfigError(f"by={by!r} is not a resampling unit", "use 'doc' or 'record'")
        grouped: dict[str, dict[str, Counts]] = {}
        for record_id, counts in self.by_record.items():
            unit = grouped.setdefault(self.doc_of[record_id] if by == "doc" else record_id, {})
            for key, value in counts.items():
                unit[key] = unit.get(key, Counts()) + value
        return {unit: grouped[unit] for unit in sorted(grouped)}

    def scores(self) -> Scores:
        """The pooled :class:`Scores`."""
        return scores_from_counts(self.by_record, self.roles, mode=self.mode, records=len(self.by_record),
                                  unannotated=len(self.unannotated))


def count_corpus(
    gold: Sequence[Record], pred: Sequence[Record], *, roles: Sequence[str] = DEFAULT_ROLES, mode: str = DEFAULT_MODE
) -> CorpusCounts:
    """Counts of every annotated gold record, paired with its prediction by id (see :func:`pair_by_id`)."""
    roles = check_roles(roles)
    _check_mode(mode)
    pairs, unannotated = pair_by_id(gold, pred)
    by_record: dict[str, dict[str, Counts]] = {}
    for g, p in pairs:
        counts = count_record(g, p, roles=roles, mode=mode, link=True)
        unlinked = count_record(g, p, roles=roles, mode=mode, link=False)
        counts.update({UNLINKED + role: unlinked[role] for role in roles})
        by_record[g.id] = counts
    return CorpusCounts(mode, roles, by_record, {g.id: g.doc for g, _ in pairs}, unannotated)


def merge_counts(parts: Iterable[CorpusCounts]) -> CorpusCounts:
    """Pool the counts of held-out folds (one repeat at a time) into one :class:`CorpusCounts`."""
    parts = list(parts)
    if not parts:
        raise CorpusError("no fold counts to merge", "pass the counts of at least one held-out fold")
    first = parts[0]
    merged = CorpusCounts(first.mode, first.roles, {}, {}, [])
    for part in parts:
        if (part.mode, part.roles) != (first.mode, first.roles):
            raise ConfigError(f"cannot merge counts scored with mode={part.mode!r}, roles={list(part.roles)} into "
                              f"mode={first.mode!r}, roles={list(first.roles)}", "score every fold the same way")
        twice = [record_id for record_id in part.by_record if record_id in merged.by_record]
        if twice:
            raise CorpusError(f"{len(twice)} record(s) were scored in two folds: {_name_some(twice)}",
                              "merge the folds of one repeat at a time; each record is held out once per repeat")
        merged.by_record.update(part.by_record)
        merged.doc_of.update(part.doc_of)
        merged.unannotated.extend(part.unannotated)
    return merged


def score_corpus(
    gold: Sequence[Record], pred: Sequence[Record], *, roles: Sequence[str] = DEFAULT_ROLES, mode: str = DEFAULT_MODE
) -> Scores:
    """Score predictions against gold records, paired by id; see the module docstring for the rules."""
    return count_corpus(gold, pred, roles=roles, mode=mode).scores()


# ---------------------------------------------------------------- BIO tags


def _check_iob2(seqs: Sequence[Sequence[str]], name: str) -> None:
    for s, tags in enumerate(seqs):
        previous = "O"
        for t, tag in enumerate(tags):
            prefix, _, label = tag.partition("-")
            valid = tag == "O" or (prefix in ("B", "I") and label)
            if valid and prefix == "I" and previous not in (f"B-{label}", f"I-{label}"):
                valid = False
            if not valid:
                raise CorpusError(f"{name} sequence {s}, token {t}: {tag!r} after {previous!r} is not valid IOB2",
                                  "tags are O, B-X or I-X, and I-X follows B-X or I-X; repair the tags before scoring")
            previous = tag


def span_counts_from_bio(true_seqs: Sequence[Sequence[str]], pred_seqs: Sequence[Sequence[str]]) -> dict[str, Counts]:
    """Chunk counts per label (sorted) from IOB2 tag sequences, one list of tags per sentence.

    Strict: a chunk matches only with the same label, start and end, and
    invalid IOB2 (an ``I-X`` not continuing ``X``) is refused, not repaired.
    """
    # Imported here: bio_to_ranges lives with the tokeniser alignment, and
    # scoring records must not pay for loading spaCy.
    from trainer.parsing.align import bio_to_ranges

    if len(true_seqs) != len(pred_seqs):
        raise CorpusError(f"{len(true_seqs)} gold tag sequences but {len(pred_seqs)} predicted ones",
                          "pass one predicted sequence per gold sentence")
    for s, (true, pred) in enumerate(zip(true_seqs, pred_seqs)):
        if len(true) != len(pred):
            raise CorpusError(f"sentence {s}: {len(true)} gold tags but {len(pred)} predicted tags",
                              "predict one tag per token")
    _check_iob2(true_seqs, "gold")
    _check_iob2(pred_seqs, "predicted")
    gold = {(s, *chunk) for s, tags in enumerate(true_seqs) for chunk in bio_to_ranges(list(tags))}
    pred = {(s, *chunk) for s, tags in enumerate(pred_seqs) for chunk in bio_to_ranges(list(tags))}
    labels = sorted({chunk[3] for chunk in gold | pred})
    out = {}
    for label in labels:
        g = {c for c in gold if c[3] == label}
        p = {c for c in pred if c[3] == label}
        tp = len(g & p)
        out[label] = Counts(tp, len(p) - tp, len(g) - tp)
    return out


def span_scores_from_bio(true_seqs: Sequence[Sequence[str]], pred_seqs: Sequence[Sequence[str]]) -> dict[str, RoleScore]:
    """Chunk-level scores per label (sorted), then ``"micro"`` (counts pooled over labels).

    Same figures as ``seqeval.metrics.classification_report(..., mode="strict",
    scheme=IOB2)``, which follows the CoNLL chunk-scoring convention.
    """
    counts = span_counts_from_bio(true_seqs, pred_seqs)
    if MICRO in counts:
        raise CorpusError(f"a tag label is called {MICRO!r}, which names the pooled score", "rename that label")
    out = {label: RoleScore.from_counts(c) for label, c in counts.items()}
    out[MICRO] = RoleScore.from_counts(sum(counts.values(), Counts()))
    return out
