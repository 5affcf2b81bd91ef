"""Whether a training corpus follows other annotation conventions than its auxiliary corpora, with the rules as
yardstick (trainer.models.conventions)."""

from __future__ import annotations

from collections import Counter

import pytest
from scipy.stats import chi2_contingency

from trainer.features.lexicons import load_lexicons
from trainer.models.conventions import MIN_GAP, MIN_Z, TRIGGER, _z, departures, rule_agreement

ROLES = ("mover", "source", "path", "destination")


def _counts(role: str, measure: str, hits: int, n: int) -> Counter:
    return Counter({(role, measure): hits, (role, f"{measure}_n"): n})


def test_the_z_statistic_is_the_signed_root_of_pearsons_chi_square_on_the_two_by_two_table():
    # Reference: scipy.stats.chi2_contingency without Yates's correction; for a 2x2 table Pearson's chi-square
    # equals the square of the pooled two-proportion z statistic (common practice).
    for hits_a, n_a, hits_b, n_b in ((30, 100, 90, 100), (77, 366, 1140, 1267), (3, 5, 90, 100)):
        table = [[hits_a, n_a - hits_a], [hits_b, n_b - hits_b]]
        chi2 = chi2_contingency(table, correction=False)[0]
        z = _z(hits_a, n_a, hits_b, n_b)
        assert z < 0 and z * z == pytest.approx(chi2)
    assert _z(0, 0, 5, 10) == 0.0 and _z(10, 10, 10, 10) == 0.0  # an empty side, no spread


def test_a_clear_fall_in_the_rules_agreement_is_a_departure_and_nothing_else_is():
    aux = _counts("mover", "precision", 900, 1000) + _counts("mover", "recall", 800, 1000)
    # Pronoun movers left out: the rules' movers match the gold far less often (0.30 against 0.90).
    (found,) = departures(_counts("mover", "precision", 90, 300) + _counts("mover", "recall", 240, 300), aux, ROLES)
    assert (found.role, found.measure, found.target, found.auxiliary) == ("mover", "precision", 0.3, 0.9)
    assert found.z < -MIN_Z
    assert found.describe() == f"the rules' mover precision 0.30 against 0.90, z {found.z:.1f}"
    assert not found.of_boundaries
    # A gap under MIN_GAP is no departure, however many examples back it.
    assert departures(_counts("mover", "precision", 8500, 10000), aux, ROLES) == []
    # Nor is a large gap on a handful of examples (0.60 against 0.90 on 5 movers: z is about -2.1).
    assert departures(_counts("mover", "precision", 3, 5), aux, ROLES) == []
    # Nor is a rise: plainer text under the same guide agrees with the rules more.
    assert departures(_counts("mover", "precision", 290, 300), aux, ROLES) == []
    # A role only one side has is not compared; a role outside the inventory is not looked at.
    assert departures(_counts("path", "precision", 0, 50), aux, ROLES) == []
    assert departures(_counts("mover", "precision", 10, 100), aux, ("source",)) == []
    assert MIN_GAP == 0.10 and MIN_Z == 3.0


def test_rule_agreement_counts_the_rules_roles_against_the_gold_ones(nlp):
    doc = nlp("We rode from Caddow to Saltcote.")  # the rules give mover We, source Caddow, destination Saltcote
    lexicons = load_lexicons()
    full = rule_agreement([doc], [[(1, 2)]], [[[(0, 1, "mover"), (3, 4, "source"), (5, 6, "destination")]]], lexicons)
    for role in ("mover", "source", "destination"):
        assert [full[role, m] for m in ("precision", "precision_n", "recall", "recall_n")] == [1, 1, 1, 1]
    # The same sentence annotated without the pronoun mover, and with the destination as a path.
    other = rule_agreement([doc], [[(1, 2)]], [[[(3, 4, "source"), (5, 6, "path")]]], lexicons)
    assert (other["mover", "precision"], other["mover", "precision_n"], other["mover", "recall_n"]) == (0, 1, 0)
    assert (other["destination", "precision"], other["path", "recall"], other["path", "recall_n"]) == (0, 0, 1)
    assert (other["source", "precision"], other["source", "recall"]) == (1, 1)


def test_rule_agreement_counts_the_rules_boundaries_on_the_gold_roles_they_meet(nlp):
    doc = nlp("We crossed the Sallow Gap to the lake.")  # the rules: mover We, path the Sallow Gap, destination the lake
    lexicons = load_lexicons()
    gold_as_ours = [(0, 1, "mover"), (2, 5, "path"), (6, 8, "destination")]
    same = rule_agreement([doc], [[(1, 2)]], [[gold_as_ours]], lexicons)
    assert [same[role, "boundaries"] for role in ("mover", "path", "destination")] == [1, 1, 1]
    assert [same[role, "boundaries_n"] for role in ("mover", "path", "destination")] == [1, 1, 1]
    # Another convention: places marked by their head word only, or with their preposition.
    heads = rule_agreement([doc], [[(1, 2)]], [[[(0, 1, "mover"), (4, 5, "path"), (7, 8, "destination")]]], lexicons)
    assert [(heads[r, "boundaries"], heads[r, "boundaries_n"]) for r in ("mover", "path", "destination")] == [
        (1, 1), (0, 1), (0, 1)]
    assert heads["path", "precision"] == 1  # still the same roles by overlap: only the boundaries differ
    wide = rule_agreement([doc], [[(1, 2)]], [[[(0, 1, "mover"), (2, 5, "path"), (5, 8, "destination")]]], lexicons)
    assert (wide["destination", "boundaries"], wide["destination", "boundaries_n"]) == (0, 1)
    # A rule role that meets no gold role has no boundaries to compare.
    none = rule_agreement([doc], [[(1, 2)]], [[[(0, 1, "mover")]]], lexicons)
    assert none["path", "boundaries_n"] == 0 and none["path", "precision_n"] == 1


def test_a_fall_in_matching_boundaries_is_a_departure():
    aux = _counts("path", "boundaries", 390, 420)  # about the packaged corpus's share (0.93)
    (found,) = departures(_counts("path", "boundaries", 7, 68), aux, ROLES)  # head words only (about 0.10)
    assert (found.role, found.measure, found.target, found.auxiliary) == ("path", "boundaries", 0.103, 0.929)
    assert found.describe() == f"the rules' path spans on the gold boundaries 0.10 against 0.93, z {found.z:.1f}"
    assert found.of_boundaries
    assert departures(_counts("path", "boundaries", 64, 69), aux, ROLES) == []  # the real-prose corpus as annotated


def test_rule_agreement_counts_the_boundaries_of_the_triggers_the_rules_keep(nlp):
    doc = nlp("We had crossed the Sallow Gap and we set out for Caddow.")  # the rules keep crossed and set out
    lexicons = load_lexicons()
    ours = rule_agreement([doc], [[(2, 3), (8, 10)]], [[[], []]], lexicons)
    assert (ours[TRIGGER, "boundaries"], ours[TRIGGER, "boundaries_n"]) == (2, 2)
    # A team that marks the verb group (`had crossed`) and leaves particles out (`set`): neither trigger matches.
    verb_groups = rule_agreement([doc], [[(1, 3), (8, 9)]], [[[], []]], lexicons)
    assert (verb_groups[TRIGGER, "boundaries"], verb_groups[TRIGGER, "boundaries_n"]) == (0, 2)
    # A rule trigger no gold trigger meets has no boundaries to compare; the triggers have no other measure.
    missed = rule_agreement([doc], [[(2, 3)]], [[[]]], lexicons)
    assert (missed[TRIGGER, "boundaries"], missed[TRIGGER, "boundaries_n"]) == (1, 1)
    assert all(missed[TRIGGER, m] == 0 for m in ("precision", "precision_n", "recall", "recall_n"))


def test_a_fall_in_matching_trigger_boundaries_is_a_departure_of_the_trigger_stage():
    aux = _counts(TRIGGER, "boundaries", 1015, 1115)  # about the packaged corpus's share (0.91)
    (found,) = departures(_counts(TRIGGER, "boundaries", 200, 250), aux, ROLES)  # verb groups marked (0.80)
    assert (found.role, found.measure, found.stage, found.of_boundaries) == (TRIGGER, "boundaries", "triggers", True)
    assert found.describe() == f"the rules' trigger spans on the gold boundaries 0.80 against 0.91, z {found.z:.1f}"
    assert departures(_counts(TRIGGER, "boundaries", 240, 250), aux, ROLES) == []  # a rise: no departure
    (role,) = departures(_counts("path", "boundaries", 7, 68), _counts("path", "boundaries", 390, 420), ROLES)
    assert role.stage == "roles"
