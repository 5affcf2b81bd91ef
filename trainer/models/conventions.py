"""Does the target corpus follow other annotation conventions than its auxiliary corpora? The rules as yardstick.

The rule baseline reads every corpus the same way, so it can measure them all:
given each corpus's gold triggers, how many of the roles the rules find are
gold roles (precision) and how many gold roles they find (recall), role by
role, spans matched by overlap; and of the rules' roles that meet a gold one,
how many have its very boundaries. The rules follow this project's annotation
guide, as the packaged corpus does, so a corpus annotated under another guide
agrees with them less: one that leaves out pronoun movers agrees far less on
movers (the rules' mover precision falls from about 0.9 to 0.3 on the
real-prose corpus relabelled so, ``docs/real-prose.md``), and one that marks
only the head word of a place (``gap`` for ``the Sallow Gap``) or takes in
its preposition agrees far less on boundaries (paths: from about 0.93 to 0.10
and 0.44). A role departs when the rules' precision, recall or share of
matching boundaries on the target is at least :data:`MIN_GAP` below that on
the auxiliary corpora together and the gap is clear of sampling noise: a
two-proportion z statistic (pooled standard error; common practice) of at
most ``-MIN_Z``. Only a fall counts: the rules agree *more* with plainer text
under the same guide (the demo's short training journals against its
printed-narrative journals: mover precision 0.96 against 0.85), which is no
departure from the guide. Both limits were set by hand on the real-prose
corpus's relabelled copies and the demo corpus, not learned.

Every departure so far measured is of the roles, so a departure augments the
role stage's features only (``MotionExtractor``); the trigger stage, whose
conventions this yardstick does not read, keeps the pooled features.
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from typing import Sequence

from spacy.tokens import Doc

from trainer.features.lexicons import Lexicons
from trainer.features.rule_cues import rule_roles

MIN_GAP = 0.10  # smallest fall in one of MEASURES on one role that counts as a departure
MIN_Z = 3.0  # and how far it must stand clear of sampling noise (two-proportion z statistic)
MEASURES = ("precision", "recall", "boundaries")  # what is compared, per role; see rule_agreement

TokenRoles = Sequence[Sequence[Sequence[tuple[int, int, str]]]]  # per sentence, per gold trigger: (first, end, role)


@dataclass(frozen=True)
class Departure:
    """One role on which the rules agree with the target corpus's annotation less than with the others'."""

    role: str
    measure: str  # one of MEASURES: the rules' precision or recall against the gold roles, or their boundaries
    target: float
    auxiliary: float
    z: float

    @property
    def of_boundaries(self) -> bool:
        """Whether this departure is of where spans start and end, not of which spans are roles."""
        return self.measure == "boundaries"

    def describe(self) -> str:
        what = "spans on the gold boundaries" if self.of_boundaries else self.measure
        return f"the rules' {self.role} {what} {self.target:.2f} against {self.auxiliary:.2f}, z {self.z:.1f}"


def rule_agreement(docs: Sequence[Doc], triggers: Sequence[Sequence[tuple[int, int]]], roles: TokenRoles,
                   lexicons: Lexicons) -> Counter:
    """Counts of the rules' roles against the gold roles of the gold triggers, keyed ``(role, measure)``.

    For each of :data:`MEASURES`, ``(role, measure)`` counts the hits and ``(role, measure + "_n")`` the
    trials: ``precision``, the rules' roles overlapping a gold one of the same role; ``recall``, the gold
    roles overlapping one of the rules'; ``boundaries``, of the rules' roles overlapping a gold one, those
    with the same first and last token as one of them.
    """
    counts: Counter = Counter()
    for doc, sentence_triggers, sentence_roles in zip(docs, triggers, roles):
        for trigger, gold in zip(sentence_triggers, sentence_roles):
            found = [(r.first, r.end, r.role) for r in rule_roles(doc, tuple(trigger), lexicons)]
            for measure, mine, other in (("precision", found, gold), ("recall", gold, found)):
                for first, end, role in mine:
                    met = [o for o in other if o[2] == role and first < o[1] and o[0] < end]
                    counts[role, f"{measure}_n"] += 1
                    counts[role, measure] += bool(met)
                    if met and measure == "precision":
                        counts[role, "boundaries_n"] += 1
                        counts[role, "boundaries"] += any(o[0] == first and o[1] == end for o in met)
    return counts


def _z(hits_a: int, n_a: int, hits_b: int, n_b: int) -> float:
    """Two-proportion z statistic with the pooled standard error (0 when either side is empty or there is no spread)."""
    if not n_a or not n_b:
        return 0.0
    pooled = (hits_a + hits_b) / (n_a + n_b)
    spread = math.sqrt(pooled * (1 - pooled) * (1 / n_a + 1 / n_b))
    return 0.0 if spread == 0 else (hits_a / n_a - hits_b / n_b) / spread


def departures(target: Counter, auxiliary: Counter, roles: Sequence[str]) -> list[Departure]:
    """The roles and measures on which ``target``'s agreement with the rules falls below ``auxiliary``'s
    (both :func:`rule_agreement` counts) by at least :data:`MIN_GAP`, with z at most ``-MIN_Z``."""
    out = []
    for role in roles:
        for measure in MEASURES:
            n_t, n_a = target[role, f"{measure}_n"], auxiliary[role, f"{measure}_n"]
            if not n_t or not n_a:
                continue
            here, there = target[role, measure] / n_t, auxiliary[role, measure] / n_a
            z = _z(target[role, measure], n_t, auxiliary[role, measure], n_a)
            if round(there - here, 9) >= MIN_GAP and z <= -MIN_Z:
                out.append(Departure(role, measure, round(here, 3), round(there, 3), round(z, 2)))
    return out
