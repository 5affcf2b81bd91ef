"""Hand-built parses for tests: exact values that do not depend on the statistical parser."""

from __future__ import annotations

import spacy
from spacy.tokens import Doc

VOCAB = spacy.blank("en").vocab

# 'We reached the island of Tarn.' as spaCy's English pipeline parses it.
REACHED_TARN = """
We       we       PRON   PRP  nsubj  1
reached  reach    VERB   VBD  ROOT   1
the      the      DET    DT   det    3
island   island   NOUN   NN   dobj   1
of       of       ADP    IN   prep   3
Tarn     Tarn     PROPN  NNP  pobj   4
.        .        PUNCT  .    punct  1
"""


def make_doc(table: str, ents: list[str] | None = None) -> Doc:
    """A Doc from rows 'word lemma UPOS tag dep head', a space after every word but the last.

    Head '-' and dep '-' in the first row mean: no dependency tree.
    """
    rows = [line.split() for line in table.strip().splitlines()]
    tree = rows[0][5] != "-"
    return Doc(
        VOCAB,
        words=[r[0] for r in rows],
        spaces=[True] * (len(rows) - 1) + [False],
        lemmas=[r[1] for r in rows],
        pos=[r[2] for r in rows],
        tags=[r[3] for r in rows],
        deps=[r[4] for r in rows] if tree else None,
        heads=[int(r[5]) for r in rows] if tree else None,
        ents=ents,
    )
