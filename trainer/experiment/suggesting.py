"""Suggesting the next batch to annotate: the sentences a model is least sure of, pre-annotated."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from trainer.errors import CorpusError, UnreadableInputError
from trainer.outputs import check_output


@dataclass
class SuggestOutcome:
    """How many records were suggested out of how many unannotated ones, and where the batch went."""

    output: Path
    suggested: int
    candidates: int
    asked: int = 0  # the count asked for; fewer come back when the candidates, near duplicates left out, run out


def suggest_to_file(model: Path | str, unlabeled: Path | str, output: Path | str, *, count: int = 50,
                    measure: str = "least_confidence", diversity: float = 0.5) -> SuggestOutcome:
    """Read unannotated sentences (JSONL records without events, or plain text), pick ``count`` of them by the
    model's uncertainty spread over docs and trigger lemmas, and write them pre-annotated as canonical JSONL."""
    from trainer.annotation.suggest import suggest_batch
    from trainer.corpus.jsonl import not_utf8, write_jsonl
    from trainer.corpus.reader import read_corpus
    from trainer.models.persist import digest_path
    from trainer.models.training import load_extractor, parser_for
    from trainer.parsing.text import iter_paragraphs, sentence_records

    model, unlabeled, output = Path(model), Path(unlabeled), Path(output)
    check_output(output, inputs=[model, digest_path(model), unlabeled], what="batch file")
    if not unlabeled.is_file():
        raise UnreadableInputError(f"{unlabeled}: {'is a folder, not a file' if unlabeled.is_dir() else 'no such file'}",
                                   "name a .jsonl or .txt file of unannotated sentences")
    trained, _ = load_extractor(model)
    nlp = parser_for(trained.config)
    if unlabeled.suffix.lower() == ".jsonl":
        read = read_corpus([unlabeled], roles=trained.roles, skippable=False).records
        records = [r for r in read if not r.is_annotated]
        docs = None
        if read and not records:
            raise CorpusError(f"{unlabeled}: all its {len(read)} record(s) are annotated (each has an `events` list, "
                              "an empty one too), so there is nothing to suggest",
                              "give records without `events` (or a plain-text file); a suggested batch is already "
                              "pre-annotated")
    else:
        try:
            pairs = list(sentence_records(nlp, iter_paragraphs(unlabeled), doc_name=unlabeled.stem,
                                          source=str(unlabeled)))
        except UnicodeDecodeError:
            raise not_utf8(unlabeled) from None
        records, docs = [r for r, _ in pairs], [d for _, d in pairs]
    if not records:
        raise CorpusError(f"{unlabeled}: holds no sentences (empty or blank lines only)",
                          "name a file of unannotated sentences")
    digest = digest_path(model).read_text(encoding="ascii").split()[0][:12]
    batch = suggest_batch(trained, records, count, measure=measure, diversity=diversity, nlp=nlp, docs=docs,
                          model_name=f"{model.name} sha256:{digest}")
    write_jsonl(batch, output)
    return SuggestOutcome(output, len(batch), len(records), count)
