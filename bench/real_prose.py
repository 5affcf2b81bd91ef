"""Real-prose benchmark: do trained extractors beat the rules on real travel writing?

Runs, in one process, on the real-prose evaluation corpus in
``tests/external/real-prose/corpus/`` (six public-domain travel narratives,
see its ``SOURCES.md``):

1. leave one book out (each book held out in turn, the other five trained on):
   role micro F1 in overlap and exact mode with 95% bootstrap intervals (by
   doc), trigger F1, and role F1 given the gold triggers, for the rules,
   the CRF and logistic configs, and the default config with and without the
   packaged demo corpus as auxiliary corpus, with feature augmentation, and
   without each of its new feature groups (rule decisions, WordNet classes);
   then the rules and the default book by book (overlap mode); then, on the
   two books a second annotator labelled blind
   (``tests/external/real-prose/second-annotator.jsonl``), that annotator
   against the corpus and the default's held-out predictions against each;
2. every config trained on the whole invented demo corpus
   (``demo_annotations/train``) and applied to all real-prose sentences;
3. with ``--passages N``, leave one book out again for the rules and the
   default, the same sentences joined into records of N consecutive
   sentences of a doc (the spec lets a record hold a short passage);
4. with ``--curve``, a learning curve on the same folds: the default with and
   without its auxiliary corpus and the CRF config trained on growing shares
   of the five training books' chapters (the held-out book unchanged), against
   the rules, which need no training; the whole share is the run of step 1,
   not trained again.
5. with ``--conventions``, leave one book out again for the default (which
   augments features only where the conventions differ) and for it always
   and never augmenting, on copies of the corpus whose labels were
   changed the way a team following other conventions might annotate (pronoun
   movers left out; halting, mounting, anchoring and landing verbs made
   triggers; role spans cut to their head word or widened to their
   preposition; triggers marked as verb chunks): does the target's own
   annotation win over the packaged corpus's conventions?

All figures come from this one run; nothing is asserted here
(``tests/external/test_real_prose.py`` asserts the headline comparison).

    python bench/real_prose.py [--corpus PATH...] [--second FILE] [--jobs 2] [--bootstrap 1000] [--passages 3] [--curve] [--conventions]

``--corpus`` runs the same tables on another annotated corpus (docs named
``<book>-<chapter number>``, at least two books), for example one's own;
the second-annotator section then needs ``--second``.
"""

from __future__ import annotations

import argparse
import re
import time
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Sequence

from spacy.language import Language

from trainer.config import AuxiliaryConfig, ExperimentConfig, load_config
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import ItinerantError
from trainer.evaluation.bootstrap import bootstrap_f1s
from trainer.evaluation.breakdown import by_group
from trainer.experiment.crossval import run_crossval
from trainer.evaluation.folds import book_of, leave_one_book_out
from trainer.evaluation.runs import CrossvalRun
from trainer.evaluation.scoring import CorpusCounts, count_corpus, span_overlap
from trainer.evaluation.summary import EvaluationSettings, fold_counts, pool_folds
from trainer.experiment.curve import learning_curve
from trainer.models.training import fit_extractor, parser_for
from trainer.parsing.parse import parse_records

ROOT = Path(__file__).resolve().parents[1]
REAL_PROSE = ROOT / "tests" / "external" / "real-prose" / "corpus"
DEMO_TRAIN = ROOT / "demo_annotations" / "train"
# Two of the books annotated a second time, blind, from the spec and the annotation guide only (see SOURCES.md).
SECOND_ANNOTATOR = ROOT / "tests" / "external" / "real-prose" / "second-annotator.jsonl"
MODES = ("overlap", "exact")


@dataclass
class Row:
    """One extractor's scores on the real-prose corpus in one setting."""

    name: str
    role_f1: dict[str, float]  # by mode
    interval: dict[str, tuple[float, float]]  # by mode, role micro F1
    trigger_f1: dict[str, float]
    given_triggers_f1: dict[str, float]

    def line(self) -> str:
        parts = [f"{self.name:28}"]
        for mode in MODES:
            low, high = self.interval[mode]
            parts.append(f"{self.role_f1[mode]:.3f} [{low:.3f}, {high:.3f}]")
        parts.append(f"{self.trigger_f1['overlap']:.3f}")
        parts.append(f"{self.given_triggers_f1['overlap']:.3f}" if self.given_triggers_f1 else "  -  ")
        return " | ".join(parts)


NEW_GROUPS = ("rules", "wordnet")


def configs(names: Sequence[str] = ("rules", "crf", "logistic", "default"), *,
            ablations: bool = True) -> list[ExperimentConfig]:
    """The packaged configs and, with ``ablations``, the default without its auxiliary corpus, with feature
    augmentation, and without each of the rules and WordNet feature groups."""
    loaded = {name: load_config(ROOT / "configs" / f"{name}.toml") for name in names}
    out = [loaded[name] for name in names]
    default = loaded.get("default")
    if default is None or not ablations:
        return out
    if default.auxiliary.corpora:
        out.append(replace(default, name="default, no auxiliary", auxiliary=AuxiliaryConfig()))
        out.append(replace(default, name="default, augmented",
                           auxiliary=replace(default.auxiliary, augment=not default.auxiliary.augment)))
    for group in NEW_GROUPS:
        if group in default.features.groups:
            groups = [g for g in default.features.groups if g != group]
            out.append(replace(default, name=f"default, no {group} group", features=replace(default.features, groups=groups)))
    return out


def real_prose_records(paths: Sequence[Path] = (REAL_PROSE,)) -> list[Record]:
    """The annotated records of the real-prose corpus, or of the corpus files or folders given."""
    return [r for r in read_corpus(list(paths)).records if r.is_annotated]


def passage_records(records: Sequence[Record], size: int) -> list[Record]:
    """The records joined, in corpus order, into passages of up to ``size`` consecutive sentences of one doc.

    The spec lets a record hold a short passage; a team may annotate that
    way. Sentences are joined with one space, and the events' offsets move
    with their sentence, so the annotation is the same, record by record.
    """
    groups: list[list[Record]] = []
    for record in records:
        if groups and groups[-1][-1].doc == record.doc and len(groups[-1]) < size:
            groups[-1].append(record)
        else:
            groups.append([record])
    out = []
    for group in groups:
        text, events = "", []
        for record in group:
            shift = len(text) + (1 if text else 0)
            text = f"{text} {record.text}" if text else record.text
            events += [Event((e.trigger[0] + shift, e.trigger[1] + shift),
                             tuple(RoleSpan(r.role, (r.span[0] + shift, r.span[1] + shift)) for r in e.roles))
                       for e in record.events or ()]
        out.append(Record(f"{group[0].id}-p{len(group)}", group[0].doc, text, tuple(events)))
    return out


def _row(name: str, counts: dict[str, CorpusCounts], roles: Sequence[str], *, bootstrap: int, seed: int,
         given: dict[str, float] | None = None) -> Row:
    """One table row from the pooled counts of each scoring mode (intervals by doc)."""
    scores = {mode: counts[mode].scores() for mode in MODES}
    return Row(name, {mode: scores[mode].micro.f1 for mode in MODES},
               {mode: bootstrap_f1s(counts[mode].units(by="doc"), roles, samples=bootstrap, seed=seed)["micro"]
                for mode in MODES},
               {mode: scores[mode].trigger.f1 for mode in MODES}, given or {})


def leave_one_book_out_run(records: Sequence[Record], systems: Sequence[ExperimentConfig], *,
                           jobs: int = 1) -> CrossvalRun:
    """Each config cross-validated on the real-prose records, one book held out per fold."""
    return run_crossval(records, systems, [leave_one_book_out([r.doc for r in records])], jobs=jobs)


def run_rows(run: CrossvalRun, *, bootstrap: int = 1000, seed: int = 13) -> list[Row]:
    """One table row per config of a run: pooled scores in both modes, and with gold triggers."""
    rows = []
    for system in run.systems:
        roles = system.config.roles
        counts = {mode: pool_folds(system, fold_counts(run, system, roles=roles, mode=mode)) for mode in MODES}
        given = {mode: pool_folds(system, fold_counts(run, system, roles=roles, mode=mode, gold_triggers=True)
                                  ).scores().micro.f1 for mode in MODES}
        rows.append(_row(system.name, counts, roles, bootstrap=bootstrap, seed=seed, given=given))
    return rows


def leave_one_book_out_rows(records: Sequence[Record], systems: Sequence[ExperimentConfig], *, jobs: int = 1,
                            bootstrap: int = 1000, seed: int = 13) -> list[Row]:
    """Leave-one-book-out scores of each config on the real-prose records."""
    return run_rows(leave_one_book_out_run(records, systems, jobs=jobs), bootstrap=bootstrap, seed=seed)


def demo_trained_rows(records: Sequence[Record], systems: Sequence[ExperimentConfig], *,
                      bootstrap: int = 1000, seed: int = 13) -> list[Row]:
    """Each config trained on the whole demo corpus, applied to every real-prose record."""
    demo = [r for r in read_corpus([DEMO_TRAIN]).records if r.is_annotated]
    nlp = parser_for(systems[0])
    demo_docs, _ = parse_records(nlp, demo, systems[0].parser)
    docs, _ = parse_records(nlp, records, systems[0].parser)
    rows = []
    for config in systems:
        predicted = fit_extractor(demo, config, nlp=nlp, docs=demo_docs).extractor.predict(records, docs)
        counts = {mode: count_corpus(records, predicted, roles=config.roles, mode=mode) for mode in MODES}
        rows.append(_row(config.name, counts, config.roles, bootstrap=bootstrap, seed=seed))
    return rows


# Label changes another team might make (lower-cased mover spans left out; verb forms made triggers; role spans
# cut to their head word or widened to their preposition; triggers marked as verb chunks). Each a (description,
# pronouns, trigger forms, boundaries: None or one of BOUNDARIES); the changed copies are made in memory, the corpus
# is not touched.
THIRD_PERSON = frozenset({"he", "she", "it", "they", "him", "them", "who", "which", "that"})
CONVENTIONS = (
    ("third-person and relative pronoun movers left out", THIRD_PERSON, frozenset(), None),
    ("every pronoun mover left out", THIRD_PERSON | {"i", "we", "you", "me", "us"}, frozenset(), None),
    ("halting, mounting, anchoring and landing verbs made triggers (no roles)", frozenset(),
     frozenset({"mounted", "remounted", "dismounted", "anchored", "halted", "encamped", "camped", "stopped",
                "alighted", "landed", "embarked", "disembarked"}), None),
    ("every role span cut to its head word (`the Sallow Gap` -> `Gap`)", frozenset(), frozenset(), "head"),
    ("role spans widened to the preposition that governs them (`through the Sallow Gap`)", frozenset(), frozenset(),
     "preposition"),
    ("triggers marked as verb chunks (`had crossed` for `crossed`, `set` for `set out`)", frozenset(), frozenset(),
     "verb chunk"),
)
BOUNDARIES = ("head", "preposition", "verb chunk")


def relabelled(records: Sequence[Record], pronouns: frozenset[str], forms: frozenset[str]) -> tuple[list[Record], int]:
    """Copies of ``records`` with movers that are one of ``pronouns`` left out and every word of ``forms`` no gold
    trigger overlaps made a trigger without roles; also how many labels changed."""
    out, changed = [], 0
    for record in records:
        events = []
        for event in record.events or ():
            roles = tuple(r for r in event.roles
                          if not (r.role == "mover" and record.text[r.span[0]:r.span[1]].lower() in pronouns))
            changed += len(event.roles) - len(roles)
            events.append(Event(event.trigger, roles))
        for match in re.finditer(r"[A-Za-z]+", record.text):
            start, end = match.span()
            if match.group().lower() in forms and not any(span_overlap(e.trigger, (start, end)) for e in events):
                events.append(Event((start, end)))
                changed += 1
        out.append(Record(record.id, record.doc, record.text, tuple(sorted(events, key=lambda e: e.trigger))))
    return out, changed


def rebounded(records: Sequence[Record], nlp: Language, how: str) -> tuple[list[Record], int]:
    """Copies of ``records`` with every role span cut to the parser's head word of its tokens (``how="head"``) or
    widened to the preposition the parser hangs it from (``"preposition"``), or every trigger marked as a verb
    chunk, CoNLL-2000's VP (``"verb chunk"``: from its first auxiliary to its head word, so `had crossed` for
    `crossed` and `set` for `set out`); also how many spans changed."""
    if how not in BOUNDARIES:
        raise ValueError(f"how={how!r}: use one of {BOUNDARIES}")
    out, changed = [], 0
    for record, doc in zip(records, nlp.pipe(r.text for r in records)):
        events = []
        for event in record.events or ():
            if how == "verb chunk":
                verb = doc.char_span(*event.trigger, alignment_mode="expand")
                auxiliaries = [t.idx for t in verb.root.children if t.dep_ in ("aux", "auxpass") and t.i < verb.start]
                span = (min(auxiliaries, default=event.trigger[0]), verb.root.idx + len(verb.root.text))
                changed += span != tuple(event.trigger)
                events.append(Event(span, event.roles))
                continue
            roles = []
            for role in event.roles:
                start, end = role.span
                span = doc.char_span(start, end, alignment_mode="expand")
                if span is not None and how == "head":
                    start, end = span.root.idx, span.root.idx + len(span.root.text)
                elif span is not None and how == "preposition" and span.start > 0:
                    before = doc[span.start - 1]
                    if before.pos_ == "ADP" and span.root.head.i == before.i:
                        start = before.idx
                changed += (start, end) != tuple(role.span)
                roles.append(RoleSpan(role.role, (start, end)))
            events.append(Event(event.trigger, tuple(roles)))
        out.append(Record(record.id, record.doc, record.text, tuple(events)))
    return out, changed


def convention_lines(records: Sequence[Record], *, jobs: int = 1) -> list[str]:
    """Role micro F1 (exact and overlap), mover F1 (overlap) and trigger F1 (exact and overlap) of the default, and
    of it always and never augmenting features, leave one book out, on the corpus as annotated and on each of
    :data:`CONVENTIONS`."""
    # The default (which augments where the conventions differ), and the same always and never augmented.
    systems = [c for c in configs(("default",)) if c.name in ("default", "default, augmented")]
    systems.append(replace(systems[0], name="default, never augmented", auxiliary=replace(
        systems[0].auxiliary, augment=False, augment_if_conventions_differ=False)))
    nlp = parser_for(systems[0])
    lines = ["labels | changed | " + " | ".join(
        f"{c.name}: role F1 exact / overlap, mover F1, trigger F1 exact / overlap" for c in systems)]
    for description, pronouns, forms, boundaries in (("as annotated", frozenset(), frozenset(), None), *CONVENTIONS):
        changed_records, changed = relabelled(records, pronouns, forms)
        if boundaries is not None:
            changed_records, moved = rebounded(changed_records, nlp, boundaries)
            changed += moved
        run = leave_one_book_out_run(changed_records, systems, jobs=jobs)
        cells = []
        for system in run.systems:
            exact, overlap = (pool_folds(system, fold_counts(run, system, roles=system.config.roles, mode=mode)
                                         ).scores() for mode in ("exact", "overlap"))
            cell = (f"{exact.micro.f1:.3f} / {overlap.micro.f1:.3f}, {overlap.per_role['mover'].f1:.3f}, "
                    f"{exact.trigger.f1:.3f} / {overlap.trigger.f1:.3f}")
            auxiliary = system.config.auxiliary
            if auxiliary.augment_if_conventions_differ and not auxiliary.augment:  # the folds it chose to augment
                cell += f" ({sum(bool(f.departures) for f in system.folds)} of {len(system.folds)} folds departed)"
            cells.append(cell)
        lines.append(f"{description} | {changed} | " + " | ".join(cells))
    return lines


def book_lines(run: CrossvalRun, names: Sequence[str] = ("rules", "default")) -> list[str]:
    """Overlap role micro F1 and trigger F1 of some configs of ``run`` on each held-out book, one line per book."""
    per_book = {}
    for name in names:
        system = next(s for s in run.systems if s.name == name)
        counts = pool_folds(system, fold_counts(run, system, roles=system.config.roles, mode="overlap"))
        per_book[name] = by_group({"overlap": counts}, by="book")
    books = next(iter(per_book.values()))
    lines = [f"{'book':20} | sentences | gold triggers | " + " | ".join(f"{name} role F1 / trigger F1" for name in names)]
    for book, scores in books.items():
        overlap = scores["overlap"]
        held_out = [per_book[name][book]["overlap"] for name in names]
        cells = [f"{score['micro']['f1']:.3f} / {score['trigger']['f1']:.3f}" for score in held_out]
        lines.append(f"{book:20} | {overlap['records']:9} | {overlap['trigger']['gold']:13} | " + " | ".join(cells))
    return lines


def agreement_lines(run: CrossvalRun, name: str = "default", second_path: Path = SECOND_ANNOTATOR) -> list[str]:
    """Overlap trigger and role F1 on the sentences the second annotator labelled: that annotator against the
    corpus, and one config's held-out predictions from ``run`` against each annotator."""
    second = {r.id: r for r in read_corpus([second_path]).records if r.is_annotated}
    gold = [r for r in run.records if r.id in second]
    system = next(s for s in run.systems if s.name == name)
    predicted = {r.id: r for r in system.predictions()}
    again, held_out = [second[r.id] for r in gold], [predicted[r.id] for r in gold]
    lines = [f"{len(gold)} sentences ({', '.join(sorted({book_of(r.doc) for r in gold}))}), overlap mode",
             f"{'reference':18} | {'compared':18} | trigger P / R / F1    | role F1"]
    for reference, compared, ref, hyp in (("corpus", "second annotator", gold, again), ("corpus", name, gold, held_out),
                                          ("second annotator", name, again, held_out)):
        scores = count_corpus(ref, hyp, roles=system.config.roles, mode="overlap").scores()
        trigger = scores.trigger
        lines.append(f"{reference:18} | {compared:18} | {trigger.precision:.3f} / {trigger.recall:.3f} / "
                     f"{trigger.f1:.3f} | {scores.micro.f1:.3f}")
    return lines


CURVE_SHARES = (0.1, 0.25, 0.5, 1.0)
CURVE_SYSTEMS = ("rules", "crf", "default", "default, no auxiliary")


def curve_lines(records: Sequence[Record], *, jobs: int = 1, bootstrap: int = 1000, seed: int = 13,
                full_run: CrossvalRun | None = None) -> list[str]:
    """Leave-one-book-out overlap role and trigger F1 against the share of the training chapters, one line per point.

    ``full_run``, a :func:`leave_one_book_out_run` holding at least the curve's configs, is their
    share-1.0 point, so those folds are not trained twice.
    """
    systems = [s for s in configs(("rules", "crf", "default")) if s.name in CURVE_SYSTEMS]
    plan = leave_one_book_out([r.doc for r in records])
    settings = EvaluationSettings(mode="overlap", bootstrap_samples=bootstrap, seed=seed)
    docs = None
    if full_run is not None:
        kept = [s for s in full_run.systems if s.name in CURVE_SYSTEMS]
        full_run, docs = replace(full_run, systems=kept), full_run.docs
    curve = learning_curve(records, systems, [plan], shares=CURVE_SHARES, settings=settings, jobs=jobs,
                           docs=docs, full_run=full_run)
    lines = [f"{'extractor':24} | {'share':>5} | target sentences | role F1 overlap [95% CI] | trigger F1"]
    for name, points in curve["systems"].items():
        untrained = name == "rules"  # the same at every share: one line
        for point in points[-1:] if untrained else points:
            low, high = point["intervals"]["micro"]
            share = "-" if untrained else f"{point['share']:g}"
            lines.append(f"{name:24} | {share:>5} | {point['train_records']:16.1f} | "
                         f"{point['f1']['micro']:.3f} [{low:.3f}, {high:.3f}]   | {point['f1']['trigger']:.3f}")
    return lines


HEADER = (f"{'extractor':28} | role F1 overlap [95% CI] | role F1 exact [95% CI]  | trigger F1 | "
          "roles | gold triggers")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--corpus", type=Path, nargs="+", default=[REAL_PROSE], metavar="PATH",
                        help="annotated JSONL files or folders to evaluate on instead of the real-prose corpus; "
                             "docs named <book>-<chapter number> (at least two books)")
    parser.add_argument("--second", type=Path, metavar="FILE",
                        help="a second annotation of some of the corpus's records, same ids and texts (default: the "
                             "real-prose corpus's, when that corpus is used)")
    parser.add_argument("--jobs", type=int, default=2, help="worker processes for the folds")
    parser.add_argument("--bootstrap", type=int, default=1000, help="bootstrap samples per interval")
    parser.add_argument("--passages", type=int, default=0, metavar="N",
                        help="also leave one book out for the rules and the default with the sentences joined into "
                             "records of N consecutive sentences of a doc (about 3 more minutes on 2 cores)")
    parser.add_argument("--curve", action="store_true",
                        help="also the learning curve over shares of the training chapters (about 11 more minutes on 2 cores)")
    parser.add_argument("--conventions", action="store_true",
                        help="also the default, and it always and never augmenting features, on copies of the "
                             "corpus relabelled under other conventions (seven copies, about 14 minutes each on 2 cores)")
    args = parser.parse_args()
    if args.passages == 1 or args.passages < 0:
        parser.error(f"--passages must be 2 or more (0 for none), got {args.passages}")
    try:
        report(args)
    except ItinerantError as error:  # an unreadable corpus, fewer than two books, ...
        parser.exit(2, f"error: {error}\n")


def report(args: argparse.Namespace) -> None:
    """Print every table the options ask for."""
    records = real_prose_records(args.corpus)
    second = args.second or (SECOND_ANNOTATOR if args.corpus == [REAL_PROSE] else None)
    books = sorted({book_of(r.doc) for r in records})
    print(f"corpus {', '.join(map(str, args.corpus))}: {len(records)} records, "
          f"{sum(1 for r in records if r.events)} with events, {len(books)} books ({', '.join(books)})")
    systems = configs()
    started = time.perf_counter()
    print("\nLeave one book out (trained on the other books, plus any auxiliary corpus of the config):")
    print(HEADER)
    run = leave_one_book_out_run(records, systems, jobs=args.jobs)
    for row in run_rows(run, bootstrap=args.bootstrap):
        print(row.line())
    print("\nBook by book (each held out in turn; overlap mode):")
    print(*book_lines(run), sep="\n")
    if second is not None:
        print("\nTwo annotators and the default (held out) on the same sentences:")
        print(*agreement_lines(run, second_path=second), sep="\n")
    print("\nTrained on the whole demo corpus, applied to every record of the corpus:")
    print(HEADER)
    for row in demo_trained_rows(records, configs(ablations=False), bootstrap=args.bootstrap):
        print(row.line())
    if args.passages > 1:
        passages = passage_records(records, args.passages)
        print(f"\nLeave one book out, the same sentences in {len(passages)} records of up to {args.passages} "
              "consecutive sentences of a doc:")
        print(HEADER)
        for row in leave_one_book_out_rows(passages, configs(("rules", "default"), ablations=False), jobs=args.jobs,
                                           bootstrap=args.bootstrap):
            print(row.line())
    if args.curve:
        print("\nLearning curve, leave one book out (shares of the training books' chapters, averaged over the folds):")
        print(*curve_lines(records, jobs=args.jobs, bootstrap=args.bootstrap, full_run=run), sep="\n")
    if args.conventions:
        print("\nOther annotation conventions, leave one book out, the default (augmenting the features of the stage "
              "whose conventions differ) and it always (both stages) and never augmenting features:")
        print(*convention_lines(records, jobs=args.jobs), sep="\n")
    print(f"\n{time.perf_counter() - started:.0f} s in all")


if __name__ == "__main__":
    main()
