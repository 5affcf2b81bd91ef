"""Shared fixtures for the evaluation tests: a hand-checked corpus and random record strategies."""

from __future__ import annotations

import random

from hypothesis import strategies as st

from trainer.corpus.records import Event, Record, RoleSpan

ROLES = ("mover", "source", "path", "destination")


def event(trigger: tuple[int, int], *roles: tuple[str, tuple[int, int]]) -> Event:
    return Event(trigger, tuple(RoleSpan(role, span) for role, span in roles))


def hand_corpus() -> tuple[list[Record], list[Record]]:
    """Gold and predicted records; every figure derived from them is worked out in test_scoring.py.

    r1 "We left Harrowgate and rode to the lake."   We 0-2, left 3-7, Harrowgate 8-18,
        "Harrowgate and" 8-22, rode 23-27, "the lake" 31-39, "the" 31-34, "lake" 35-39
    r2 "The mules crossed the ford."                The mules 0-9, crossed 10-17, the ford 18-26
    r3 "The road runs north."                       The road 0-8, runs 9-13
    r4 "We hoped to cross the Greyhorn."            unannotated
    r5 "We sailed to Pell and landed."              We 0-2, sailed 3-9, Pell 13-17, landed 22-28
    r6 "We crossed to Arlo."                        We 0-2, crossed 3-10, Arlo 14-18
    """
    t1 = "We left Harrowgate and rode to the lake."
    t2 = "The mules crossed the ford."
    t3 = "The road runs north."
    t4 = "We hoped to cross the Greyhorn."
    t5 = "We sailed to Pell and landed."
    t6 = "We crossed to Arlo."
    gold = [
        Record("r1", "log-a", t1, (event((3, 7), ("mover", (0, 2)), ("source", (8, 18))),
                                   event((23, 27), ("mover", (0, 2)), ("destination", (31, 39))))),
        Record("r2", "log-a", t2, (event((10, 17), ("mover", (0, 9)), ("path", (18, 26))),)),
        Record("r3", "log-a", t3, ()),
        Record("r4", "log-a", t4, None),
        Record("r5", "log-b", t5, (event((3, 9), ("mover", (0, 2)), ("destination", (13, 17))),
                                   event((22, 28), ("mover", (0, 2))))),
        Record("r6", "log-b", t6, (event((3, 10), ("mover", (0, 2)), ("destination", (14, 18))),)),
    ]
    pred = [
        # r1: source too long (boundary); two destinations inside "the lake" (only "lake" may match).
        Record("r1", "log-a", t1, (event((3, 7), ("mover", (0, 2)), ("source", (8, 22))),
                                   event((23, 27), ("mover", (0, 2)), ("destination", (35, 39)),
                                         ("destination", (31, 34))))),
        # r2: no prediction record at all (an empty prediction).
        # r3: a spurious event on fictive motion.
        Record("r3", "log-a", t3, (event((9, 13), ("mover", (0, 8))),)),
        # r5: "Pell" attached to the wrong trigger.
        Record("r5", "log-b", t5, (event((3, 9), ("mover", (0, 2))),
                                   event((22, 28), ("mover", (0, 2)), ("destination", (13, 17))))),
        # r6: the right span under the wrong role.
        Record("r6", "log-b", t6, (event((3, 10), ("mover", (0, 2)), ("path", (14, 18))),)),
    ]
    return gold, pred


TEXT_LENGTH = 30


def _span(rng: random.Random) -> tuple[int, int]:
    start = rng.randrange(TEXT_LENGTH)
    return start, min(TEXT_LENGTH, start + rng.randint(1, 6))


def _shift(span: tuple[int, int], by: int) -> tuple[int, int]:
    return span[0], min(TEXT_LENGTH, max(span[0] + 1, span[1] + by))


def _random_event(rng: random.Random) -> Event:
    return event(_span(rng), *((rng.choice(ROLES), _span(rng)) for _ in range(rng.randint(0, 4))))


def _variant(rng: random.Random, gold: Event) -> Event:
    """A gold event as is, with argument or trigger ends moved by up to 2, or with roles renamed or dropped."""
    how = rng.randrange(4)
    if how == 1:
        return Event(gold.trigger, tuple(RoleSpan(r.role, _shift(r.span, rng.randint(-2, 2))) for r in gold.roles))
    if how == 2:
        return Event(gold.trigger, tuple(RoleSpan(rng.choice(ROLES), r.span) for r in gold.roles if rng.random() < 0.8))
    if how == 3:
        return Event(_shift(gold.trigger, rng.randint(-2, 2)), gold.roles)
    return gold


def random_corpus(rng: random.Random, max_records: int = 4) -> tuple[list[Record], list[Record]]:
    """Gold and predicted corpora over the same texts (ids r0, r1, ...; docs a-c); some records have no prediction."""
    gold, pred = [], []
    for i in range(rng.randint(1, max_records)):
        doc, text = rng.choice("abc"), "x" * TEXT_LENGTH
        gold_events = [_random_event(rng) for _ in range(rng.randint(0, 3))]
        gold.append(Record(f"r{i}", doc, text, tuple(gold_events)))
        if rng.random() < 0.8:
            pred_events = [_variant(rng, rng.choice(gold_events)) if gold_events and rng.random() < 0.7
                           else _random_event(rng) for _ in range(rng.randint(0, 3))]
            pred.append(Record(f"r{i}", doc, text, tuple(pred_events)))
    return gold, pred


def record_pairs() -> st.SearchStrategy[tuple[list[Record], list[Record]]]:
    """Hypothesis strategy of :func:`random_corpus` outputs (seeded by hypothesis, so failures replay)."""
    return st.randoms(use_true_random=False).map(random_corpus)
