"""Agreement between annotators on the records they all annotated: F1 of one against the other, kappa, disagreements.

Input: two or more annotations of the same sentences, one list of records
per annotator, matched by ``id``. A record counts as annotated by someone
when it has ``events`` and its provenance is not ``predicted`` (a
pre-annotation nobody checked is the model's work, not the annotator's; see
:mod:`trainer.corpus.provenance`). Only ids every annotator annotated are
compared; the same id with a different ``text`` is refused.

What is computed, per pair of annotators (the first as reference, the second
as "prediction"; F1 is symmetric, so the order only swaps precision and
recall):

- trigger and per-role F1, exact and overlap, with
  :func:`trainer.evaluation.scoring.count_corpus` (the spec's section 3);
- Cohen's kappa on token-level BIO labels, in two layers: ``trigger``
  (``B-trigger`` / ``I-trigger`` / ``O``) and ``roles`` (``B-<role>`` /
  ``I-<role>`` / ``O``, arguments of all events of the sentence, not linked to
  their trigger). Tokens are words and punctuation marks
  (:func:`trainer.corpus.convert.columns.tokenise`), cut at every span edge
  any annotator used, so every span falls on token boundaries and all
  annotators label the same tokens. Where two spans of a layer cover a token
  the one starting first (then the longer, then the earlier role) labels it;

and over all annotators, when there are more than two, Fleiss' kappa on the
same labels. Kappa is pooled over every token of the compared records.

Disagreements (:data:`KINDS`) are found per pair and record, after exact
matches are set aside: a trigger or role instance both gave with overlapping
but different spans (``boundary``), the same argument under another role
(``role-label``), and what only one of the two gave (``only-one``).

>>> from trainer.corpus.records import Event, Record, RoleSpan
>>> a = [Record("s1", "d", "We left Caddow.", (Event((3, 7), (RoleSpan("source", (8, 14)),)),))]
>>> b = [Record("s1", "d", "We left Caddow.", (Event((3, 7), (RoleSpan("path", (8, 14)),)),))]
>>> result = agreement({"ann": a, "bea": b})
>>> result.pairs[0].exact.trigger.f1, [d.kind for d in result.disagreements]
(1.0, ['role-label'])
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from itertools import combinations
from pathlib import Path
from typing import Any, Mapping, Sequence

from trainer.corpus.convert.columns import tokenise
from trainer.corpus.provenance import training_records
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import DEFAULT_ROLES, Offsets, Record
from trainer.errors import ConfigError, CorpusError
from trainer.evaluation.scoring import (
    MICRO, TRIGGER, Scores, check_roles, count_corpus, match_instances, role_instances, span_overlap,
    trigger_instances,
)

OUTSIDE = "O"
LAYERS = ("trigger", "roles")
MODES = ("exact", "overlap")
MAX_NAMED = 5
DIGITS = 6

# Disagreement kinds, in report order, with what each means.
KINDS: dict[str, str] = {
    "trigger-boundary": "both marked a trigger here, over different words",
    "trigger-only-one": "a trigger only one annotator marked",
    "role-label": "the same words under the same trigger, given different roles",
    "role-boundary": "the same role of the same trigger, over different words",
    "role-only-one": "a role only one annotator gave",
}


# ---------------------------------------------------------------- kappa


def cohen_kappa(first: Sequence[str], second: Sequence[str]) -> float | None:
    """Cohen's kappa of two raters' labels for the same items; ``None`` when undefined.

    ``(p_o - p_e) / (1 - p_e)``: ``p_o`` the share of items with equal labels,
    ``p_e`` the agreement expected by chance from each rater's own label
    shares. Undefined (``None``) with no items, or when chance agreement is
    certain (both raters used one and the same label throughout).

    >>> cohen_kappa(["B", "O", "O", "O"], ["B", "O", "B", "O"])
    0.5
    """
    if len(first) != len(second):
        raise CorpusError(f"{len(first)} labels from the first rater but {len(second)} from the second",
                          "give both raters' labels for the same items, in the same order")
    n = len(first)
    if n == 0:
        return None
    observed = sum(a == b for a, b in zip(first, second)) / n
    shares_a, shares_b = Counter(first), Counter(second)
    expected = sum(shares_a[label] * shares_b[label] for label in shares_a) / (n * n)
    if expected == 1.0:
        return None
    return (observed - expected) / (1.0 - expected)


def fleiss_kappa(table: Sequence[Sequence[int]]) -> float | None:
    """Fleiss' kappa from a table of counts: one row per item, one column per category, each row summing to the raters.

    ``(P - P_e) / (1 - P_e)`` with ``P`` the mean over items of the share of
    agreeing rater pairs and ``P_e`` the sum of squared category shares.
    Every item needs the same number of raters, at least two; ``None`` when
    undefined (no items, or one category only).

    >>> round(fleiss_kappa([[2, 0], [0, 2], [1, 1]]), 6)
    0.333333
    """
    rows = [list(row) for row in table]
    if not rows:
        return None
    raters = sum(rows[0])
    if raters < 2 or any(sum(row) != raters for row in rows) or any(c < 0 for row in rows for c in row):
        raise CorpusError("every item needs the same number of raters (at least 2), counted once per category",
                          "build one row per item whose non-negative counts sum to the number of raters")
    items = len(rows)
    agreement = sum((sum(c * c for c in row) - raters) / (raters * (raters - 1)) for row in rows) / items
    shares = [sum(row[j] for row in rows) / (items * raters) for j in range(len(rows[0]))]
    expected = sum(p * p for p in shares)
    if expected == 1.0:
        return None
    return (agreement - expected) / (1.0 - expected)


def fleiss_kappa_of_labels(labels: Sequence[Sequence[str]]) -> float | None:
    """Fleiss' kappa of several raters' labels (one sequence per rater, the same items in the same order)."""
    lengths = {len(seq) for seq in labels}
    if len(labels) < 2 or len(lengths) != 1:
        raise CorpusError(f"{len(labels)} rater(s) with label counts {sorted(lengths)}",
                          "give at least two raters' labels for the same items")
    categories = sorted({label for seq in labels for label in seq})
    column = {label: j for j, label in enumerate(categories)}
    table = []
    for item in zip(*labels):
        row = [0] * len(categories)
        for label in item:
            row[column[label]] += 1
        table.append(row)
    return fleiss_kappa(table)


# ---------------------------------------------------------------- token labels


def span_edges(records: Sequence[Record]) -> set[int]:
    """Every offset where a trigger or role span of these versions of one sentence starts or ends."""
    edges: set[int] = set()
    for record in records:
        for event in record.events or ():
            edges.update(event.trigger)
            for role in event.roles:
                edges.update(role.span)
    return edges


def bio_labels(tokens: Sequence[Offsets], spans: Sequence[tuple[str, Offsets]]) -> list[str]:
    """One label per token from labelled character spans: ``B-x`` on a span's first token, ``I-x`` on the rest, else ``O``.

    A token is in a span when it lies wholly inside it. Spans are applied
    in the order given; a token already labelled keeps its label.
    """
    labels = [OUTSIDE] * len(tokens)
    for label, (start, end) in spans:
        inside = [i for i, (s, e) in enumerate(tokens) if start <= s and e <= end and labels[i] == OUTSIDE]
        for position, i in enumerate(inside):
            labels[i] = f"{'B' if position == 0 and tokens[i][0] == start else 'I'}-{label}"
    return labels


def layer_spans(record: Record, layer: str, roles: Sequence[str]) -> list[tuple[str, Offsets]]:
    """The labelled spans of one layer of a record, in the order :func:`bio_labels` applies them."""
    order = {role: i for i, role in enumerate(roles)}
    if layer == "trigger":
        found = {(TRIGGER, event.trigger) for event in record.events or ()}
    else:
        found = {(r.role, r.span) for event in record.events or () for r in event.roles if r.role in order}
    return sorted(found, key=lambda item: (item[1][0], -item[1][1], order.get(item[0], -1)))


def token_layers(versions: Sequence[Record], roles: Sequence[str]) -> dict[str, list[list[str]]]:
    """Per layer, one label sequence per version of the same sentence, over shared tokens."""
    tokens = tokenise(versions[0].text, span_edges(versions))
    return {layer: [bio_labels(tokens, layer_spans(v, layer, roles)) for v in versions] for layer in LAYERS}


# ---------------------------------------------------------------- disagreements


@dataclass(frozen=True)
class Disagreement:
    """One point two annotators differ on: the record, the kind (a key of :data:`KINDS`), and what each gave."""

    record_id: str
    doc: str
    kind: str
    first: str
    second: str
    first_gave: str
    second_gave: str
    text: str = field(repr=False, compare=False, default="")
    first_spans: tuple[tuple[str, Offsets], ...] = field(repr=False, compare=False, default=())
    second_spans: tuple[tuple[str, Offsets], ...] = field(repr=False, compare=False, default=())

    def to_dict(self) -> dict[str, Any]:
        return {"id": self.record_id, "doc": self.doc, "kind": self.kind, "first": self.first, "second": self.second,
                "first_gave": self.first_gave, "second_gave": self.second_gave}


RoleInstance = tuple[Offsets, str, Offsets]  # trigger, role, argument


def _show(text: str, span: Offsets) -> str:
    return f"{text[span[0]:span[1]]!r} {list(span)}"


def _show_role(text: str, item: RoleInstance | None) -> str:
    if item is None:
        return ""
    trigger, role, argument = item
    return f"{role} {_show(text, argument)} of {text[trigger[0]:trigger[1]]!r}"


def _role_spans(item: RoleInstance | None) -> tuple[tuple[str, Offsets], ...]:
    return () if item is None else ((TRIGGER, item[0]), (item[1], item[2]))


def _trigger_disagreements(a: Record, b: Record) -> list[tuple[str, Offsets | None, Offsets | None]]:
    rest_a, rest_b = trigger_instances(a) - trigger_instances(b), trigger_instances(b) - trigger_instances(a)
    found: list[tuple[str, Offsets | None, Offsets | None]] = []
    for ga, gb in match_instances(rest_a, rest_b, "overlap"):
        found.append(("trigger-boundary", ga[0], gb[0]))
        rest_a.discard(ga)
        rest_b.discard(gb)
    found += [("trigger-only-one", t[0], None) for t in sorted(rest_a)]
    found += [("trigger-only-one", None, t[0]) for t in sorted(rest_b)]
    return found


def _role_set(record: Record, roles: Sequence[str]) -> set[RoleInstance]:
    return {(trigger, role, argument) for role in roles for trigger, argument in role_instances(record, role)}


def _role_disagreements(a: Record, b: Record, roles: Sequence[str]) -> list[tuple[str, RoleInstance | None, RoleInstance | None]]:
    set_a, set_b = _role_set(a, roles), _role_set(b, roles)
    rest_a, rest_b = sorted(set_a - set_b), sorted(set_b - set_a)
    found: list[tuple[str, RoleInstance | None, RoleInstance | None]] = []
    # Same argument, overlapping trigger, another role: greedy by trigger overlap, then position.
    relabelled = sorted((-span_overlap(x[0], y[0]), x, y) for x in rest_a for y in rest_b
                        if x[2] == y[2] and x[1] != y[1] and span_overlap(x[0], y[0]) > 0)
    for _, x, y in relabelled:
        if x in rest_a and y in rest_b:
            found.append(("role-label", x, y))
            rest_a.remove(x)
            rest_b.remove(y)
    for role in roles:
        mine = {(x[0], x[2]) for x in rest_a if x[1] == role}
        theirs = {(y[0], y[2]) for y in rest_b if y[1] == role}
        for ga, gb in match_instances(mine, theirs, "overlap"):
            x, y = (ga[0], role, ga[1]), (gb[0], role, gb[1])
            found.append(("role-boundary", x, y))
            rest_a.remove(x)
            rest_b.remove(y)
    found += [("role-only-one", x, None) for x in rest_a]
    found += [("role-only-one", None, y) for y in rest_b]
    return found


def record_disagreements(a: Record, b: Record, first: str, second: str, roles: Sequence[str] = DEFAULT_ROLES) -> list[Disagreement]:
    """What two annotated versions of one sentence disagree on, in :data:`KINDS` order, then by position."""
    text = a.text
    out = [Disagreement(a.id, a.doc, kind, first, second,
                        "" if x is None else f"trigger {_show(text, x)}", "" if y is None else f"trigger {_show(text, y)}",
                        text, () if x is None else ((TRIGGER, x),), () if y is None else ((TRIGGER, y),))
           for kind, x, y in _trigger_disagreements(a, b)]
    out += [Disagreement(a.id, a.doc, kind, first, second, _show_role(text, x), _show_role(text, y), text,
                         _role_spans(x), _role_spans(y))
            for kind, x, y in _role_disagreements(a, b, roles)]
    rank = {kind: i for i, kind in enumerate(KINDS)}
    return sorted(out, key=lambda d: rank[d.kind])


# ---------------------------------------------------------------- the comparison


@dataclass
class PairAgreement:
    """Two annotators compared: F1 (exact and overlap) of the second against the first, Cohen's kappa per layer."""

    first: str
    second: str
    scores: dict[str, Scores]
    kappa: dict[str, float | None]
    disagreements: dict[str, int]

    @property
    def exact(self) -> Scores:
        return self.scores["exact"]

    @property
    def overlap(self) -> Scores:
        return self.scores["overlap"]

    def to_dict(self) -> dict[str, Any]:
        return {"first": self.first, "second": self.second,
                "f1": {mode: f1_table(scores) for mode, scores in self.scores.items()},
                "kappa": {layer: _round(value) for layer, value in self.kappa.items()},
                "disagreements": dict(self.disagreements)}


def _round(value: float | None) -> float | None:
    return None if value is None else round(value, DIGITS)


def f1_table(scores: Scores) -> dict[str, dict[str, Any]]:
    """F1 per role, ``micro`` and ``trigger`` with the counts: ``both`` gave it, ``only_first``, ``only_second``.

    F1 is ``None`` where neither annotator gave any instance: they agree, but
    there is nothing to measure (the scorer's 0.0 would read as disagreement).
    """
    named = {**{role: scores.per_role[role] for role in scores.roles}, MICRO: scores.micro, TRIGGER: scores.trigger}
    return {name: {"f1": None if s.tp + s.fp + s.fn == 0 else round(s.f1, DIGITS),
                   "both": s.tp, "only_first": s.fn, "only_second": s.fp} for name, s in named.items()}


@dataclass
class Agreement:
    """The whole comparison; see the module docstring. ``annotated`` counts each annotator's annotated records."""

    annotators: tuple[str, ...]
    roles: tuple[str, ...]
    annotated: dict[str, int]
    unreviewed: dict[str, int]
    compared: list[str]
    tokens: int
    pairs: list[PairAgreement]
    fleiss: dict[str, float | None] | None
    disagreements: list[Disagreement]
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-able data (floats rounded to 6 places; ``null`` where a measure is undefined)."""
        return {
            "annotators": list(self.annotators),
            "roles": list(self.roles),
            "annotated": dict(self.annotated),
            "unreviewed_left_out": dict(self.unreviewed),
            "compared_records": len(self.compared),
            "tokens": self.tokens,
            "pairs": [pair.to_dict() for pair in self.pairs],
            "fleiss_kappa": None if self.fleiss is None else {k: _round(v) for k, v in self.fleiss.items()},
            "disagreement_kinds": dict(KINDS),
            "disagreements": [d.to_dict() for d in self.disagreements],
            "notes": list(self.notes),
        }


def _name_some(ids: Sequence[str]) -> str:
    return ", ".join(ids[:MAX_NAMED]) + (f" and {len(ids) - MAX_NAMED} more" if len(ids) > MAX_NAMED else "")


def _annotated_by(name: str, records: Sequence[Record]) -> tuple[dict[str, Record], list[str]]:
    usable, unreviewed = training_records(records)
    by_id: dict[str, Record] = {}
    for record in usable:
        if record.id in by_id:
            raise CorpusError(f"annotator {name!r} has id {record.id!r} twice", "give every record a unique id")
        by_id[record.id] = record
    return by_id, unreviewed


def agreement(annotations: Mapping[str, Sequence[Record]], *, roles: Sequence[str] = DEFAULT_ROLES) -> Agreement:
    """Compare two or more annotators' records (``name -> records``) on the ids all of them annotated.

    Refused (:class:`~trainer.errors.CorpusError`): fewer than two
    annotators, an id repeated within one annotator, an id whose text
    differs between annotators, and no id annotated by all of them.
    Compared records keep the first annotator's order.
    """
    roles = check_roles(roles)
    names = tuple(annotations)
    if len(names) < 2:
        raise ConfigError(f"agreement needs at least two annotators, got {len(names)}",
                          "pass two or more annotation files of the same sentences")
    annotated: dict[str, dict[str, Record]] = {}
    unreviewed: dict[str, int] = {}
    for name in names:
        annotated[name], left_out = _annotated_by(name, annotations[name])
        unreviewed[name] = len(left_out)
    shared = [i for i in annotated[names[0]] if all(i in annotated[n] for n in names[1:])]
    differing = [i for i in shared if len({annotated[n][i].text for n in names}) > 1]
    if differing:
        raise CorpusError(f"{len(differing)} record(s) have a different text from one annotator to another: "
                          f"{_name_some(differing)}",
                          "compare annotations of the same sentences; offsets only compare on identical text")
    if not shared:
        counts = ", ".join(f"{name} {len(annotated[name])}" for name in names)
        raise CorpusError(f"no record is annotated by every annotator, so there is nothing to compare "
                          f"(annotated records: {counts})",
                          "compare files that annotate the same sentences, under the same record ids")
    notes = []
    for name in names:
        if unreviewed[name]:
            notes.append(f"{name}: {unreviewed[name]} record(s) still marked 'predicted' were left out "
                         "(a pre-annotation nobody reviewed is not an annotation)")
    layers = {layer: [[] for _ in names] for layer in LAYERS}
    for record_id in shared:
        for layer, sequences in token_layers([annotated[n][record_id] for n in names], roles).items():
            for k, seq in enumerate(sequences):
                layers[layer][k].extend(seq)
    pairs, disagreements = [], []
    for (i, a), (j, b) in combinations(enumerate(names), 2):
        first = [annotated[a][r] for r in shared]
        second = [annotated[b][r] for r in shared]
        found = [d for x, y in zip(first, second) for d in record_disagreements(x, y, a, b, roles)]
        disagreements += found
        counted = Counter(d.kind for d in found)
        pairs.append(PairAgreement(
            a, b,
            {mode: count_corpus(first, second, roles=roles, mode=mode).scores() for mode in MODES},
            {layer: cohen_kappa(layers[layer][i], layers[layer][j]) for layer in LAYERS},
            {kind: counted[kind] for kind in KINDS}))
    for pair in pairs:
        for layer, value in pair.kappa.items():
            if value is None and shared:
                notes.append(f"{pair.first} / {pair.second}: kappa of the {layer} layer is undefined "
                             "(every token has the same label for both)")
    fleiss = {layer: fleiss_kappa_of_labels(layers[layer]) for layer in LAYERS} if len(names) > 2 and shared else None
    return Agreement(names, roles, {n: len(annotated[n]) for n in names}, unreviewed, shared,
                     len(layers["trigger"][0]), pairs, fleiss, disagreements, notes)


def annotator_names(paths: Sequence[Path | str]) -> list[str]:
    """Short, distinct names for annotation files: the file names, the paths as given when two different files
    share a name, and a number after a path named more than once (a file compared with itself)."""
    paths = [Path(p) for p in paths]
    names = [p.name for p in paths]
    if len({(p.name, str(p)) for p in paths}) != len({p.name for p in paths}):
        names = [str(p) for p in paths]
    seen: Counter[str] = Counter()
    out = []
    for name in names:
        seen[name] += 1
        out.append(name if seen[name] == 1 else f"{name} ({seen[name]})")
    return out


def agreement_files(paths: Sequence[Path | str], *, roles: Sequence[str] = DEFAULT_ROLES) -> Agreement:
    """Read each annotator's JSONL file (or folder) and compare them with :func:`agreement`."""
    if len(paths) < 2:
        raise ConfigError(f"agreement needs at least two annotation files, got {len(paths)}",
                          "name one file (or folder) per annotator, e.g. `itinerant agree ann.jsonl bea.jsonl`")
    names = annotator_names(paths)
    roles = check_roles(roles)
    read = {name: read_corpus([path], roles=roles, skippable=False).records for name, path in zip(names, paths)}
    return agreement(read, roles=roles)
