"""Agreement between annotators: hand-counted examples, published worked examples, scikit-learn, and the demo corpus."""

from __future__ import annotations

import random
from dataclasses import replace
from fractions import Fraction

import pytest
from sklearn.metrics import cohen_kappa_score

from trainer.annotation.agreement import (
    KINDS, agreement, agreement_files, annotator_names, bio_labels, cohen_kappa, fleiss_kappa, fleiss_kappa_of_labels,
    record_disagreements, token_layers,
)
from trainer.corpus.convert.columns import tokenise
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import DEFAULT_ROLES, Event, Record, RoleSpan
from trainer.errors import ConfigError, CorpusError

TEXT = "We left Caddow for the lake."
ANN = Record("s1", "d", TEXT, (Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14)),
                                              RoleSpan("destination", (19, 27)))),))
BEA = Record("s1", "d", TEXT, (Event((3, 7), (RoleSpan("path", (8, 14)), RoleSpan("destination", (23, 27)))),))


# ---------------------------------------------------------------- kappa against published examples and scikit-learn


def test_cohen_kappa_of_the_worked_example_in_wikipedias_cohens_kappa_article() -> None:
    # Wikipedia, "Cohen's kappa", simple example (from memory): 50 proposals, both yes 20, A yes / B no 5,
    # A no / B yes 10, both no 15: p_o = 0.7, p_e = 0.5, kappa = 0.4.
    a = ["yes"] * 20 + ["yes"] * 5 + ["no"] * 10 + ["no"] * 15
    b = ["yes"] * 20 + ["no"] * 5 + ["yes"] * 10 + ["no"] * 15
    assert cohen_kappa(a, b) == pytest.approx(0.4, abs=1e-12)


def test_fleiss_kappa_of_the_worked_example_in_wikipedias_fleiss_kappa_article() -> None:
    # Wikipedia, "Fleiss' kappa", worked example (from memory): 10 subjects, 14 raters, 5 categories;
    # P-bar = 0.378, P-bar_e = 0.213, kappa = 0.210 (three decimals as published).
    table = [[0, 0, 0, 0, 14], [0, 2, 6, 4, 2], [0, 0, 3, 5, 6], [0, 3, 9, 2, 0], [2, 2, 8, 1, 1],
             [7, 7, 0, 0, 0], [3, 2, 6, 3, 0], [2, 5, 3, 2, 2], [6, 5, 2, 1, 0], [0, 2, 2, 3, 7]]
    assert round(fleiss_kappa(table), 3) == 0.210


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_cohen_kappa_matches_scikit_learn_on_random_bio_labels(seed: int) -> None:
    rng = random.Random(seed)
    labels = ["O", "O", "O", "B-mover", "I-mover", "B-path", "I-path", "B-source"]
    a = [rng.choice(labels) for _ in range(500)]
    b = [x if rng.random() < 0.7 else rng.choice(labels) for x in a]
    assert cohen_kappa(a, b) == pytest.approx(cohen_kappa_score(a, b), abs=1e-12)


def test_kappa_hand_counted_and_undefined_cases() -> None:
    # 4 items, p_o = 3/4; shares A: B 1/4, O 3/4; B: B 1/2, O 1/2; p_e = 1/8 + 3/8 = 1/2; kappa = (3/4 - 1/2) / (1/2) = 1/2.
    assert cohen_kappa(["B", "O", "O", "O"], ["B", "O", "B", "O"]) == 0.5
    assert cohen_kappa([], []) is None
    assert cohen_kappa(["O", "O"], ["O", "O"]) is None  # chance agreement is certain
    with pytest.raises(CorpusError, match="3 labels from the first rater but 2 from the second"):
        cohen_kappa(["O"] * 3, ["O"] * 2)
    # Fleiss, 3 items x 2 raters: P = (1 + 1 + 0) / 3 = 2/3, shares 1/2, 1/2, P_e = 1/2, kappa = 1/3.
    assert fleiss_kappa([[2, 0], [0, 2], [1, 1]]) == pytest.approx(1 / 3, abs=1e-12)
    assert fleiss_kappa_of_labels([["a", "b", "a"], ["a", "b", "b"]]) == pytest.approx(1 / 3, abs=1e-12)
    with pytest.raises(CorpusError, match="same number of raters"):
        fleiss_kappa([[2, 0], [1, 0]])


# ---------------------------------------------------------------- token labels


def test_bio_labels_snap_to_tokens_and_the_earlier_span_wins() -> None:
    tokens = tokenise(TEXT)
    assert bio_labels(tokens, [("destination", (19, 27)), ("path", (23, 27)), ("mover", (0, 2))]) == [
        "B-mover", "O", "O", "O", "B-destination", "I-destination", "O"]


def test_token_layers_cut_at_every_edge_either_annotator_used() -> None:
    layers = token_layers([ANN, BEA], DEFAULT_ROLES)
    assert layers["trigger"] == [["O", "B-trigger", "O", "O", "O", "O", "O"]] * 2
    assert layers["roles"] == [["B-mover", "O", "B-source", "O", "B-destination", "I-destination", "O"],
                               ["O", "O", "B-path", "O", "O", "B-destination", "O"]]


# ---------------------------------------------------------------- a hand-built pair


def test_a_hand_built_pair_gives_hand_counted_scores_kappa_and_disagreements() -> None:
    result = agreement({"ann": [ANN], "bea": [BEA]})
    pair = result.pairs[0]
    exact, overlap = pair.to_dict()["f1"]["exact"], pair.to_dict()["f1"]["overlap"]
    assert exact["trigger"] == {"f1": 1.0, "both": 1, "only_first": 0, "only_second": 0}
    assert exact["micro"] == {"f1": 0.0, "both": 0, "only_first": 3, "only_second": 2}
    # Overlap: the destinations 'the lake' / 'lake' match; micro tp 1, fp 1, fn 2: F1 = 2 / (2 + 1 + 2).
    assert overlap["destination"] == {"f1": 1.0, "both": 1, "only_first": 0, "only_second": 0}
    assert overlap["micro"]["f1"] == 0.4
    # Roles layer, 7 tokens: p_o = 3/7; A uses O 3, B-mover, B-source, B-destination, I-destination once each;
    # B uses O 5, B-path, B-destination once: p_e = (3*5 + 1*1) / 49 = 16/49; kappa = (21/49 - 16/49) / (33/49) = 5/33.
    assert pair.kappa["roles"] == pytest.approx(float(Fraction(5, 33)), abs=1e-12)
    assert pair.kappa["trigger"] == 1.0
    assert pair.disagreements == {"trigger-boundary": 0, "trigger-only-one": 0, "role-label": 1, "role-boundary": 1,
                                  "role-only-one": 1}
    assert [(d.kind, d.first_gave, d.second_gave) for d in result.disagreements] == [
        ("role-label", "source 'Caddow' [8, 14] of 'left'", "path 'Caddow' [8, 14] of 'left'"),
        ("role-boundary", "destination 'the lake' [19, 27] of 'left'", "destination 'lake' [23, 27] of 'left'"),
        ("role-only-one", "mover 'We' [0, 2] of 'left'", ""),
    ]
    assert (result.tokens, result.compared, result.fleiss) == (7, ["s1"], None)


def test_trigger_disagreements_boundary_and_only_one() -> None:
    a = Record("s", "d", "We set out and rode on.", (Event((3, 6)), Event((15, 19))))
    b = Record("s", "d", "We set out and rode on.", (Event((3, 10)),))
    found = record_disagreements(a, b, "a", "b")
    assert [(d.kind, d.first_gave, d.second_gave) for d in found] == [
        ("trigger-boundary", "trigger 'set' [3, 6]", "trigger 'set out' [3, 10]"),
        ("trigger-only-one", "trigger 'rode' [15, 19]", ""),
    ]


def test_only_records_every_annotator_annotated_and_reviewed_are_compared() -> None:
    unreviewed = Record("s2", "d", "We rode.", (), {"itinerant": {"provenance": "predicted"}})
    text_only = Record("s3", "d", "We rested.")
    only_ann = Record("s4", "d", "We rested.", ())
    result = agreement({"ann": [ANN, unreviewed, only_ann], "bea": [BEA, unreviewed, text_only]})
    assert (result.annotated, result.unreviewed, result.compared) == ({"ann": 2, "bea": 1}, {"ann": 1, "bea": 1}, ["s1"])
    assert "ann: 1 record(s) still marked 'predicted' were left out" in result.notes[0]


def test_three_annotators_get_every_pair_and_fleiss_kappa() -> None:
    cleo = replace(ANN, events=(Event((3, 7), (RoleSpan("mover", (0, 2)),)),))
    result = agreement({"ann": [ANN], "bea": [BEA], "cleo": [cleo]})
    assert [(p.first, p.second) for p in result.pairs] == [("ann", "bea"), ("ann", "cleo"), ("bea", "cleo")]
    layers = token_layers([ANN, BEA, cleo], DEFAULT_ROLES)
    assert result.fleiss["roles"] == pytest.approx(fleiss_kappa_of_labels(layers["roles"]), abs=1e-12)
    assert result.fleiss["trigger"] == 1.0


def test_refusals_name_the_problem() -> None:
    with pytest.raises(ConfigError, match="at least two annotators, got 1"):
        agreement({"ann": [ANN]})
    with pytest.raises(CorpusError, match="1 record\\(s\\) have a different text from one annotator to another: s1"):
        agreement({"ann": [ANN], "bea": [replace(BEA, text="We left Caddow for the lakes")]})
    with pytest.raises(CorpusError, match="annotator 'ann' has id 's1' twice"):
        agreement({"ann": [ANN, ANN], "bea": [BEA]})
    with pytest.raises(CorpusError, match=r"no record is annotated by every annotator, so there is nothing to compare "
                                          r"\(annotated records: ann 1, bea 1\)"):
        agreement({"ann": [ANN], "bea": [replace(BEA, id="other")]})


def test_annotator_names_are_file_names_unless_they_clash() -> None:
    assert annotator_names(["x/ann.jsonl", "y/bea.jsonl"]) == ["ann.jsonl", "bea.jsonl"]
    assert annotator_names(["x/batch.jsonl", "y/batch.jsonl"]) == ["x/batch.jsonl", "y/batch.jsonl"]
    assert annotator_names(["ann.jsonl", "ann.jsonl", "ann.jsonl"]) == ["ann.jsonl", "ann.jsonl (2)", "ann.jsonl (3)"]


# ---------------------------------------------------------------- the demo corpus


def test_a_corpus_against_itself_agrees_fully(demo_train) -> None:
    result = agreement_files([demo_train, demo_train])
    assert result.annotators == ("train", "train (2)")
    assert (result.annotated, len(result.compared)) == ({"train": 656, "train (2)": 656}, 656)
    pair = result.pairs[0].to_dict()
    for mode in ("exact", "overlap"):
        assert {name: row["f1"] for name, row in pair["f1"][mode].items()} == {
            "mover": 1.0, "source": 1.0, "path": 1.0, "destination": 1.0, "micro": 1.0, "trigger": 1.0}
    assert pair["kappa"] == {"trigger": 1.0, "roles": 1.0}
    assert result.disagreements == [] and result.notes == []


def _single_event_records(records: list[Record]) -> list[Record]:
    """Records with one event whose role spans are pairwise disjoint, each at least two tokens long."""
    out = []
    for record in records:
        if len(record.events or ()) != 1:
            continue
        spans = sorted(r.span for r in record.events[0].roles)
        disjoint = all(a[1] <= b[0] for a, b in zip(spans, spans[1:]))
        long_enough = all(len(tokenise(record.span_text(s))) >= 2 for s in spans)
        if spans and disjoint and long_enough and not any(_overlap(s, record.events[0].trigger) for s in spans):
            out.append(record)
    return out


def _overlap(a: tuple[int, int], b: tuple[int, int]) -> bool:
    return min(a[1], b[1]) > max(a[0], b[0])


def test_the_demo_corpus_against_a_copy_with_counted_changes(demo_train, tmp_path) -> None:
    original = read_corpus([demo_train]).records
    candidates = _single_event_records(original)
    # Changes, each on its own record: 3 roles deleted, 2 roles cut short by their first token, 2 roles relabelled
    # (to a role the event does not have), 1 event deleted, 1 event added on a word no trigger covers.
    deleted, shortened, relabelled, event_gone, event_added = (candidates[0:3], candidates[3:5], candidates[5:7],
                                                               candidates[7], candidates[8])
    changed: dict[str, Record] = {}
    token_changes = {"trigger": 0, "roles": 0}
    role_changes = {"deleted": [], "shortened": [], "relabelled": []}
    for record in deleted:
        event = record.events[0]
        gone = event.roles[0]
        changed[record.id] = record.with_events([Event(event.trigger, event.roles[1:])])
        role_changes["deleted"].append(gone.role)
        token_changes["roles"] += len(tokenise(record.span_text(gone.span)))
    for record in shortened:
        event = record.events[0]
        role = event.roles[0]
        tokens = tokenise(record.text)
        second = next(s for s, e in tokens if s > role.span[0])
        changed[record.id] = record.with_events([Event(event.trigger, (RoleSpan(role.role, (second, role.span[1])), *event.roles[1:]))])
        role_changes["shortened"].append(role.role)
        token_changes["roles"] += 2  # the first token leaves the span, the second becomes its start
    for record in relabelled:
        event = record.events[0]
        role = event.roles[0]
        other = next(r for r in DEFAULT_ROLES if r not in {x.role for x in event.roles})
        changed[record.id] = record.with_events([Event(event.trigger, (RoleSpan(other, role.span), *event.roles[1:]))])
        role_changes["relabelled"].append((role.role, other))
        token_changes["roles"] += len(tokenise(record.span_text(role.span)))
    changed[event_gone.id] = event_gone.with_events(())
    gone_roles = [r.role for r in event_gone.events[0].roles]
    token_changes["trigger"] += len(tokenise(event_gone.span_text(event_gone.events[0].trigger)))
    token_changes["roles"] += sum(len(tokenise(event_gone.span_text(r.span))) for r in event_gone.events[0].roles)
    free = next((s, e) for s, e in tokenise(event_added.text)
                if not any(_overlap((s, e), x) for ev in event_added.events for x in (ev.trigger, *(r.span for r in ev.roles))))
    changed[event_added.id] = event_added.with_events([*event_added.events, Event(free)])
    token_changes["trigger"] += 1
    copy = [changed.get(r.id, r) for r in original]
    write_jsonl(original, tmp_path / "first.jsonl")
    write_jsonl(copy, tmp_path / "second.jsonl")

    result = agreement_files([tmp_path / "first.jsonl", tmp_path / "second.jsonl"])
    pair = result.pairs[0]
    assert (result.annotated, len(result.compared)) == ({"first.jsonl": 656, "second.jsonl": 656}, 656)
    assert pair.disagreements == {"trigger-boundary": 0, "trigger-only-one": 2, "role-label": 2, "role-boundary": 2,
                                  "role-only-one": 3 + len(gone_roles)}

    # Expected counts per role, from the corpus totals and the changes alone.
    totals = {role: sum(r.role == role for rec in original for e in rec.events for r in e.roles) for role in DEFAULT_ROLES}
    lost = {role: role_changes["deleted"].count(role) + role_changes["shortened"].count(role)
            + sum(a == role for a, _ in role_changes["relabelled"]) + gone_roles.count(role) for role in DEFAULT_ROLES}
    gained = {role: role_changes["shortened"].count(role) + sum(b == role for _, b in role_changes["relabelled"])
              for role in DEFAULT_ROLES}
    exact = pair.to_dict()["f1"]["exact"]
    overlap = pair.to_dict()["f1"]["overlap"]
    for role in DEFAULT_ROLES:
        both = totals[role] - lost[role]
        assert (exact[role]["both"], exact[role]["only_first"], exact[role]["only_second"]) == (both, lost[role], gained[role])
        assert exact[role]["f1"] == round(2 * both / (2 * both + lost[role] + gained[role]), 6)
        cut = role_changes["shortened"].count(role)
        assert (overlap[role]["both"], overlap[role]["only_first"]) == (both + cut, lost[role] - cut)
    triggers = sum(len(r.events) for r in original)
    assert exact["trigger"] == {"f1": round(2 * (triggers - 1) / (2 * (triggers - 1) + 2), 6), "both": triggers - 1,
                                "only_first": 1, "only_second": 1}
    assert exact["micro"]["both"] == sum(totals.values()) - sum(lost.values())

    # Kappa: the labels that differ are exactly the tokens the changes touched; the value agrees with scikit-learn.
    layers = {"trigger": [[], []], "roles": [[], []]}
    for record in original:
        for layer, (a, b) in token_layers([record, changed.get(record.id, record)], DEFAULT_ROLES).items():
            layers[layer][0] += a
            layers[layer][1] += b
    for layer in ("trigger", "roles"):
        a, b = layers[layer]
        assert sum(x != y for x, y in zip(a, b)) == token_changes[layer]
        assert pair.kappa[layer] == pytest.approx(cohen_kappa_score(a, b), abs=1e-12)
        assert 0.99 < pair.kappa[layer] < 1.0
    assert result.tokens == len(layers["trigger"][0])
    assert set(KINDS) == set(pair.disagreements)
