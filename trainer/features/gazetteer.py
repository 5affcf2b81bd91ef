"""A user's gazetteer of place names, matched in parsed sentences.

The gazetteer is a TSV with a ``name`` column and optional ``alternatives``
(``;``-separated) and coordinates; names of any length are matched with
spaCy's PhraseMatcher, on exact text or ignoring case.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
from spacy.matcher import PhraseMatcher
from spacy.language import Language
from spacy.tokens import Doc

from trainer.errors import ConfigError


def read_place_names(path: Path | str) -> list[str]:
    """All names and alternative names in a gazetteer TSV, sorted and unique."""
    try:
        table = pd.read_csv(path, sep="\t", dtype=str, keep_default_na=False, comment=None)
    except FileNotFoundError:
        raise ConfigError(f"{path}: gazetteer file not found", "fix [features] gazetteer or leave it empty") from None
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: not a readable TSV ({exc})", "one row per place, tab-separated, header 'name'") from None
    if "name" not in table.columns:
        raise ConfigError(f"{path}: no 'name' column (found {list(table.columns)})", "add a header row with 'name'")
    names = set(table["name"].str.strip())
    if "alternatives" in table.columns:
        for cell in table["alternatives"]:
            names.update(part.strip() for part in cell.split(";"))
    return sorted(n for n in names if n)


class Gazetteer:
    """Place names as token sequences; marks matched tokens, longest match first.

    Names are tokenised once with the pipeline's tokenizer; the PhraseMatcher is
    rebuilt on first use for each vocabulary, so a gazetteer pickles with a model.
    """

    def __init__(self, name_tokens: list[list[str]], *, ignore_case: bool = True) -> None:
        self.name_tokens = name_tokens
        self.ignore_case = ignore_case
        self._matcher: PhraseMatcher | None = None

    @classmethod
    def from_names(cls, names: list[str], nlp: Language, *, ignore_case: bool = True) -> "Gazetteer":
        return cls([[t.text for t in nlp.make_doc(n)] for n in names], ignore_case=ignore_case)

    def __getstate__(self) -> dict:
        return {"name_tokens": self.name_tokens, "ignore_case": self.ignore_case, "_matcher": None}

    def _matcher_for(self, doc: Doc) -> PhraseMatcher:
        if self._matcher is None or self._matcher.vocab is not doc.vocab:
            self._matcher = PhraseMatcher(doc.vocab, attr="LOWER" if self.ignore_case else "ORTH")
            self._matcher.add("PLACE", [Doc(doc.vocab, words=words) for words in self.name_tokens])
        return self._matcher

    def spans(self, doc: Doc) -> list[tuple[int, int]]:
        """Token ranges ``[first, end)`` of matched names, non-overlapping, longest first."""
        found = sorted(((s, e) for _, s, e in self._matcher_for(doc)(doc)), key=lambda r: (r[0] - r[1], r[0]))
        taken: set[int] = set()
        chosen = []
        for first, end in found:
            if taken.isdisjoint(range(first, end)):
                chosen.append((first, end))
                taken.update(range(first, end))
        return sorted(chosen)

    def tags(self, doc: Doc) -> list[str]:
        """``B``/``I``/``O`` per token for gazetteer matches."""
        tags = ["O"] * len(doc)
        for first, end in self.spans(doc):
            tags[first] = "B"
            tags[first + 1 : end] = ["I"] * (end - first - 1)
        return tags
