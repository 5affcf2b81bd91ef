"""Where extraction spends its time after the parse: each step's CPU seconds as a share of the parse, in one run.

Fits the config on the demo training corpus (or loads ``--model``), makes a
book from the demo chapter, then on that book, in one process and in the order
an extraction does them: bare ``nlp.pipe`` over the paragraphs; the same parse
cut into sentence docs; token features; the trigger stage; the role stage; and,
for a logistic trigger tagger, its vectorisation by scikit-learn's
``DictVectorizer.transform`` against the tagger's own path (same matrix). Each
step runs once on fresh docs, so remembered rule roles count as in a real run.
CPU time (``time.process_time``) moves less than wall time on a shared machine.
With ``--repeats N`` the whole sequence runs N times, each time on a new
parse, and each step's least CPU time is reported (the least is the run other
load disturbed least; the tagger's remembered feature columns carry over from
one run to the next, as from one batch to the next in an extraction). Usage:

    python bench/extract_stages.py [--words 20000] [--repeats 1] [--config configs/default.toml] [--model MODEL.itin]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path
from typing import Callable

from _common import REPO, machine, make_book

from trainer.config import load_config
from trainer.corpus.reader import read_corpus
from trainer.models.sequence import LogisticTagger, vectorize
from trainer.models.training import fit_extractor, load_extractor, parser_for
from trainer.parsing.text import iter_paragraphs, sentence_records


def cpu(step: Callable[[], object]) -> tuple[float, object]:
    started = time.process_time()
    result = step()
    return time.process_time() - started, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--words", type=int, default=20_000)
    parser.add_argument("--config", type=Path, default=REPO / "configs" / "default.toml")
    parser.add_argument("--model", type=Path, help="a model file written by `itinerant fit` (default: fit --config)")
    parser.add_argument("--repeats", type=int, default=1,
                        help="run everything this many times on new parses and report each step's least CPU time")
    args = parser.parse_args()
    if args.repeats < 1:
        parser.error(f"--repeats must be at least 1, got {args.repeats}")
    if args.model:
        trained, _ = load_extractor(args.model)
        nlp = parser_for(trained.config)
    else:
        config = load_config(args.config)
        nlp = parser_for(config)
        trained = fit_extractor(read_corpus([REPO / "demo_annotations" / "train"]).annotated(), config, nlp=nlp)
    extractor = trained.extractor
    list(nlp.pipe(["We left Caddow at dawn."]))
    runs = []
    with tempfile.TemporaryDirectory() as tmp:
        book = Path(tmp) / "book.txt"
        words = make_book(book, args.words)
        for _ in range(args.repeats):
            parse, _ = cpu(lambda: [None for _ in nlp.pipe((p for _, p in iter_paragraphs(book)), batch_size=32)])
            sentences, pairs = cpu(lambda: list(sentence_records(nlp, iter_paragraphs(book), doc_name="b", source="b")))
            docs = [doc for _, doc in pairs]
            run = {"bare parse": parse, "parse cut into sentence docs": sentences}
            run["token features"], features = cpu(lambda: extractor.prediction_features(docs))
            run["trigger stage"], triggers = cpu(lambda: extractor.trigger_finder.predict(docs, features.triggers))
            run["role stage (role features and tagging)"], _ = cpu(
                lambda: extractor.role_labeller.predict(docs, triggers, features.roles))
            runs.append(run)
    steps = {name: min(run[name] for run in runs) for name in runs[0]}
    parse = steps.pop("bare parse")
    cut = steps.pop("parse cut into sentence docs") - parse
    steps = {"parse cut into sentence docs (minus the bare parse)": cut, **steps}
    print(f"machine: {machine()}; model config: {trained.config.name}")
    print(f"book: {words} words, {len(docs)} sentences, {sum(map(len, triggers))} triggers predicted")
    least = f"; least CPU time of {args.repeats} runs for each figure" if args.repeats > 1 else ""
    print(f"bare parse: {parse:.2f} s CPU ({', '.join(nlp.pipe_names)}){least}")
    for name, seconds in steps.items():
        print(f"  {name:<52} {seconds:6.2f} s  {seconds / parse:5.2f} of the parse")
    after = sum(steps.values())
    print(f"work after the parse: {after:.2f} s, {after / parse:.2f} of the parse; "
          f"extraction/parse words per second at most {parse / (parse + after):.2f} (before reading and writing)")
    tagger = extractor.trigger_finder.tagger if hasattr(extractor.trigger_finder, "tagger") else None
    if isinstance(tagger, LogisticTagger):
        flat = [f for sentence in features.triggers for f in sentence]
        reference, expected = cpu(lambda: tagger.vectorizer_.transform(flat))
        fast, got = cpu(lambda: vectorize(tagger.vectorizer_, flat))
        same = (expected != got).nnz == 0 and expected.indices.tolist() == got.indices.tolist()
        print(f"trigger vectorisation of {len(flat)} tokens: DictVectorizer.transform {reference:.2f} s, "
              f"the tagger's path {fast:.2f} s ({reference / fast:.1f}x); same matrix: {same}")


if __name__ == "__main__":
    main()
