"""The command line, driven through typer's CliRunner: exit codes, messages, files written."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from trainer.cli import app

runner = CliRunner()


def write(path, *objs):
    path.write_text("".join(json.dumps(o) + "\n" for o in objs), encoding="utf-8")
    return path


GOOD = {"id": "a", "doc": "d", "text": "We left Caddow.", "events": [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}]}]}


def test_check_clean_file_exits_0_and_prints_statistics(tmp_path):
    result = runner.invoke(app, ["check", str(write(tmp_path / "a.jsonl", GOOD)), "--no-lemmas"])
    assert result.exit_code == 0, result.output
    assert "records: 1 in 1 doc(s)" in result.output
    assert "0 error(s) in 0 record(s), 0 warning(s)" in result.output


def test_check_errors_exit_1_with_file_and_line(tmp_path):
    path = write(tmp_path / "b.jsonl", GOOD, {**GOOD, "id": "b", "doc": 3})
    result = runner.invoke(app, ["check", str(path), "--no-lemmas"])
    assert result.exit_code == 1
    assert f"{path}:2: doc: must be a string, got int" in result.output
    assert "1 error(s) in 1 record(s)" in result.output


def test_check_unreadable_exits_2_without_traceback(tmp_path):
    result = runner.invoke(app, ["check", str(tmp_path / "missing.jsonl")])
    assert result.exit_code == 2
    assert "no such file" in result.output
    assert "Traceback" not in result.output


def test_check_strict_turns_warnings_into_exit_1(tmp_path):
    warned = {**GOOD, "events": [{"trigger": [2, 7], "roles": []}]}  # ' left' starts with a space
    path = write(tmp_path / "w.jsonl", warned)
    assert runner.invoke(app, ["check", str(path), "--no-lemmas"]).exit_code == 0
    assert runner.invoke(app, ["check", str(path), "--no-lemmas", "--strict"]).exit_code == 1


def test_convert_round_trip_through_columns(tmp_path):
    source = write(tmp_path / "a.jsonl", GOOD)
    columns = tmp_path / "a.cols"
    assert runner.invoke(app, ["convert", str(source), "-o", str(columns)]).exit_code == 0  # formats from the extensions
    back = tmp_path / "back.txt"
    assert runner.invoke(app, ["convert", str(columns), "-o", str(back), "--input-format", "columns",
                               "--output-format", "jsonl"]).exit_code == 0
    assert json.loads(back.read_text()) == GOOD


def test_convert_unknown_format_is_a_clear_error(tmp_path):
    result = runner.invoke(app, ["convert", str(write(tmp_path / "a.jsonl", GOOD)), "-o", str(tmp_path / "x"), "--output-format", "brat"])
    assert result.exit_code == 2
    assert "'brat' is not an output format" in result.output
    assert "--output-format takes one of: jsonl, columns, table" in result.output
    result = runner.invoke(app, ["convert", str(tmp_path / "a.jsonl"), "-o", str(tmp_path / "x.docx")])
    assert result.exit_code == 2
    assert "cannot tell the output format from the extension '.docx'" in result.output
    assert not (tmp_path / "x.docx").exists()


def test_convert_infers_a_table_from_tsv_and_exits_0_with_listed_losses(tmp_path):
    scored = {**GOOD, "events": [{**GOOD["events"][0], "confidence": 0.9}]}
    source = write(tmp_path / "a.jsonl", scored)
    result = runner.invoke(app, ["convert", str(source), "-o", str(tmp_path / "a.tsv")])
    assert result.exit_code == 0, result.output
    assert "not carried over: a: confidence scores cannot be written in this format; left out" in result.output
    assert (tmp_path / "a.tsv").read_text(encoding="utf-8").startswith("id\t")  # a table, not JSONL
    failing = runner.invoke(app, ["convert", str(source), "-o", str(tmp_path / "b.tsv"), "--fail-on-loss"])
    assert failing.exit_code == 1
    assert (tmp_path / "b.tsv").exists()


def test_fit_refuses_a_corpus_with_errors_unless_skipping(tmp_path):
    path = write(tmp_path / "bad.jsonl", GOOD, {"id": "x", "text": "no doc"})
    refused = runner.invoke(app, ["fit", str(path), "-o", str(tmp_path / "m.itin")])
    assert refused.exit_code == 1
    assert "--skip-bad" in refused.output


@pytest.mark.slow
def test_fit_then_extract_on_a_small_corpus(tmp_path, demo_train):
    config = tmp_path / "quick.toml"
    config.write_text(f'[parser]\ncache_dir = "{tmp_path / "cache"}"\n[trigger_model]\niterations = 20\n'
                      '[role_model]\nkind = "logistic"\n', encoding="utf-8")
    model = tmp_path / "m.itin"
    fitted = runner.invoke(app, ["fit", str(demo_train / "quarne-salt-1.jsonl"), "-c", str(config), "-o", str(model)])
    assert fitted.exit_code == 0, fitted.output
    assert (tmp_path / "m.itin.sha256").exists()
    text = tmp_path / "book.txt"
    text.write_text("We left Quillon at dawn.\n\nThe road runs north.\n", encoding="utf-8")
    out, table = tmp_path / "out.jsonl", tmp_path / "events.tsv"
    extracted = runner.invoke(app, ["extract", str(model), str(text), "-o", str(out), "--table", str(table)])
    assert extracted.exit_code == 0, extracted.output
    records = [json.loads(line) for line in out.read_text().splitlines()]
    assert [r["text"] for r in records] == ["We left Quillon at dawn.", "The road runs north."]
    assert table.read_text().splitlines()[0].startswith("id\tdoc\tstatus")
    gold = demo_train / "quarne-salt-2.jsonl"
    compared = runner.invoke(app, ["extract", str(model), str(gold), "-o", str(tmp_path / "q2.jsonl"), "--compare"])
    assert compared.exit_code == 0, compared.output
    assert "| mover |" in compared.output and "against" in compared.output
    refused = runner.invoke(app, ["extract", str(model), str(text), "-o", str(tmp_path / "x.jsonl"), "--compare"])
    assert refused.exit_code == 2 and "--compare needs JSONL input" in refused.output


def test_extract_of_an_input_without_sentences_warns_and_writes_an_empty_output(rules_model_file, tmp_path):
    source, out = tmp_path / "blank.txt", tmp_path / "out.jsonl"
    source.write_text("\n   \n\n", encoding="utf-8")
    result = runner.invoke(app, ["extract", str(rules_model_file), str(source), "-o", str(out)])
    assert result.exit_code == 0, result.output
    assert f"warning: {source} holds no sentences (empty or blank lines only), so {out} is empty" in result.output
    assert out.read_bytes() == b""


def test_extract_refuses_a_tampered_model(tmp_path):
    from trainer.models.persist import save_model

    model = tmp_path / "m.itin"
    save_model({"not": "an extractor"}, model, {"kind": "x"})
    model.write_bytes(model.read_bytes() + b"x")
    (tmp_path / "in.txt").write_text("We left Caddow.\n", encoding="utf-8")
    result = runner.invoke(app, ["extract", str(model), str(tmp_path / "in.txt"), "-o", str(tmp_path / "o.jsonl")])
    assert result.exit_code == 2
    assert "SHA-256 digest mismatch" in result.output


@pytest.mark.slow
def test_crossval_with_two_configs_writes_the_three_report_forms(tmp_path, demo_train):
    quick = tmp_path / "quick.toml"
    quick.write_text(f'name = "quick-crf"\n[parser]\ncache_dir = "{tmp_path / "cache"}"\n'
                     '[trigger_model]\niterations = 25\n[role_model]\niterations = 25\n', encoding="utf-8")
    rules = tmp_path / "rules.toml"
    rules.write_text(f'[parser]\ncache_dir = "{tmp_path / "cache"}"\n[trigger_model]\nkind = "rules"\n'
                     '[role_model]\nkind = "rules"\n', encoding="utf-8")
    out = tmp_path / "run"
    files = [str(demo_train / f) for f in ("amsel-pilgrim-1.jsonl", "quarne-salt-1.jsonl", "varrow-uplands-1.jsonl",
                                           "brannick-log-1.jsonl")]
    result = runner.invoke(app, ["crossval", *files, "-c", str(quick), "-c", str(rules), "-k", "2",
                                 "--bootstrap", "200", "-o", str(out)])
    assert result.exit_code == 0, result.output
    report = json.loads((out / "report.json").read_text())
    assert [s["name"] for s in report["systems"]] == ["quick-crf", "rules"]
    assert report["comparisons"][0]["a"] == "quick-crf" and "micro" in report["comparisons"][0]["tests"]
    assert all(len(p["folds"]) == 2 for p in report["folds"])
    assert "| mover |" in (out / "summary.md").read_text()
    assert (out / "report.html").read_text().startswith("<!DOCTYPE html>")
    held_out = [json.loads(line) for line in (out / "predictions" / "quick-crf.jsonl").read_text().splitlines()]
    assert len(held_out) == report["corpus"]["records"]
    # Rescoring the saved predictions with `score` gives the report's numbers.
    gold = tmp_path / "gold.jsonl"
    gold.write_text("".join(open(f, encoding="utf-8").read() for f in files), encoding="utf-8")
    rescored = runner.invoke(app, ["score", str(gold), str(out / "predictions" / "rules.jsonl"), "-o", str(tmp_path / "s")])
    assert rescored.exit_code == 0, rescored.output
    score = json.loads((tmp_path / "s" / "score.json").read_text())
    assert score["scores"]["micro"] == report["systems"][1]["scores"]["micro"]
    contrasted = runner.invoke(app, ["contrast", str(out), str(out), "--system-b", "rules", "--trials", "199"])
    assert contrasted.exit_code == 0, contrasted.output
    assert "| micro |" in contrasted.output


@pytest.mark.slow
def test_crossval_fixed_split_from_test_files(tmp_path, demo_train, demo_test):
    rules = tmp_path / "rules.toml"
    rules.write_text('[trigger_model]\nkind = "rules"\n[role_model]\nkind = "rules"\n', encoding="utf-8")
    out = tmp_path / "run"
    result = runner.invoke(app, ["crossval", str(demo_train / "quarne-salt-1.jsonl"), "--test", str(demo_test),
                                 "-c", str(rules), "--bootstrap", "100", "-o", str(out)])
    assert result.exit_code == 0, result.output
    folds = json.loads((out / "report.json").read_text())["folds"]
    assert folds[0]["kind"] == "fixed_split"
    assert folds[0]["folds"][0]["train_docs"] == ["quarne-salt-1"]
    assert folds[0]["folds"][0]["test_docs"] == ["lisle-letters-1", "ruddock-drove-1"]
    # Only held-out records are scored: the gold counted is the test journals' own role instances.
    from trainer.corpus.reader import read_corpus

    test_roles = sum(len(e.roles) for r in read_corpus([demo_test]).records for e in r.events)
    scores = json.loads((out / "report.json").read_text())["systems"][0]["scores"]
    assert scores["micro"]["gold"] == test_roles
    assert scores["records"] == 106
    clash = runner.invoke(app, ["crossval", str(demo_test), "--test", str(demo_test / "lisle-letters-1.jsonl"),
                                "-c", str(rules), "-o", str(out)])
    assert clash.exit_code == 1 and "both in the corpus and in the test files" in clash.output


def test_agree_prints_the_tables_and_writes_the_views(tmp_path):
    other = {**GOOD, "events": [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}, {"role": "source", "span": [8, 14]}]}]}
    first, second = write(tmp_path / "ann.jsonl", GOOD), write(tmp_path / "bea.jsonl", other)
    result = runner.invoke(app, ["agree", str(first), str(second), "-o", str(tmp_path / "agreement")])
    assert result.exit_code == 0, result.output
    assert "Agreement of ann.jsonl, bea.jsonl on 1 record(s) annotated by all (4 tokens)" in result.output
    assert "| source | 0.000 | 0.000 | 0 | 0 | 1 |" in result.output
    assert "- a: ann.jsonl: (nothing); bea.jsonl: source 'Caddow' [8, 14] of 'left'" in result.output
    assert sorted(p.name for p in (tmp_path / "agreement").iterdir()) == ["agreement.html", "agreement.json", "disagreements.tsv"]


def test_agree_refuses_one_file_and_different_texts_without_traceback(tmp_path):
    first = write(tmp_path / "ann.jsonl", GOOD)
    alone = runner.invoke(app, ["agree", str(first)])
    assert alone.exit_code == 2 and "agreement needs at least two annotation files, got 1" in alone.output
    second = write(tmp_path / "bea.jsonl", {**GOOD, "text": "We left Caddow!"})
    differ = runner.invoke(app, ["agree", str(first), str(second)])
    assert differ.exit_code == 1 and "1 record(s) have a different text from one annotator to another: a" in differ.output
    assert "Traceback" not in alone.output + differ.output


def test_review_refuses_a_file_with_errors_before_serving(tmp_path):
    path = write(tmp_path / "bad.jsonl", {**GOOD, "events": [{"trigger": [3, 99]}]})
    result = runner.invoke(app, ["review", str(path), "--no-open", "--port", "0"])
    assert result.exit_code == 1
    assert "cannot be reviewed safely" in result.output and f"itinerant check {path}" in result.output
    assert "Traceback" not in result.output


def test_convert_of_a_bad_jsonl_file_names_no_option_convert_lacks(tmp_path):
    source = write(tmp_path / "a.jsonl", GOOD, {**GOOD, "id": "b", "doc": 3})
    result = runner.invoke(app, ["convert", str(source), "-o", str(tmp_path / "a.tsv")])
    assert result.exit_code == 1
    assert f"{source}:2: doc: must be a string, got int" in result.output
    assert "--skip-bad" not in result.output and "itinerant check" in result.output
    assert not (tmp_path / "a.tsv").exists()


def test_a_missing_auxiliary_corpus_is_refused_before_any_work(tmp_path):
    corpus = write(tmp_path / "a.jsonl", GOOD)
    result = runner.invoke(app, ["fit", str(corpus), "--aux", str(tmp_path / "nope"), "-o", str(tmp_path / "m.itin")])
    assert result.exit_code == 2
    assert "no such auxiliary corpus" in result.output and "Traceback" not in result.output
    assert "training" not in result.output and not (tmp_path / "m.itin").exists()
    result = runner.invoke(app, ["crossval", str(corpus), "--aux", "packaged:atlas", "-o", str(tmp_path / "run")])
    assert result.exit_code == 2 and "no packaged corpus named 'atlas'" in result.output


def test_the_auxiliary_line_of_fit_says_whether_features_were_augmented():
    from trainer.cli import _auxiliary_line

    used = {"name": "demo", "source": "packaged:demo", "records": 792, "left_out_shared_with_target": 656,
            "role_spans_left_out": {"vehicle": 3}}
    plain = _auxiliary_line(used, augmented=[])
    assert plain.startswith("auxiliary corpus 'demo' (packaged:demo): 792 record(s) joined training, 656 left out")
    assert "role spans outside the inventory left out: vehicle 3" in plain
    assert "not augmented" in plain and "--augment" in plain and "docs/real-prose.md" in plain
    augmented = _auxiliary_line(used, augmented=["triggers", "roles"])
    assert augmented.endswith("; features augmented by corpus for the trigger and role stages")
    assert "not augmented" not in augmented
    assert _auxiliary_line(used, augmented=["roles"]).endswith("; features augmented by corpus for the role stage")


def test_fit_says_where_the_conventions_differ_when_that_switched_augmentation_on(tmp_path):
    from trainer.cli import _training_notes
    from trainer.experiment.fitting import FitOutcome

    departure = "the rules' mover precision 0.30 against 0.90, z -22.9"
    outcome = FitOutcome(tmp_path / "m.itin", "default", 400, 5, {}, augmented=["roles"], departures=[departure])
    (note,) = _training_notes(outcome)
    assert note.startswith(f"annotation conventions differ from the auxiliary corpora's ({departure}), so the "
                           "features of the role stage were augmented by corpus")
    assert "augment_if_conventions_differ" in note and "docs/real-prose.md" in note
    assert "--no-augment" not in note  # which spans are roles differs: augmenting helps by overlap too
    boundaries = "the rules' path spans on the gold boundaries 0.10 against 0.94, z -16.5"
    (note,) = _training_notes(FitOutcome(tmp_path / "m.itin", "default", 400, 5, {}, augmented=["roles"],
                                         departures=[boundaries], boundaries_only=True))
    assert note.endswith("they differ only in where spans start and end: if you score by overlap alone, "
                         "--no-augment may score higher by overlap")
    # A team that marks the verb group (`had crossed`): the trigger stage's features are augmented.
    verb_group = "the rules' trigger spans on the gold boundaries 0.80 against 0.91, z -5.3"
    (note,) = _training_notes(FitOutcome(tmp_path / "m.itin", "default", 400, 5, {}, augmented=["triggers"],
                                         departures=[verb_group], boundaries_only=True))
    assert f"({verb_group}), so the features of the trigger stage were augmented by corpus" in note
    (note,) = _training_notes(FitOutcome(tmp_path / "m.itin", "default", 400, 5, {}, augmented=["triggers", "roles"],
                                         departures=[verb_group, departure]))
    assert "so the features of the trigger and role stages were augmented by corpus" in note
    assert "--no-augment" not in note
    assert _training_notes(FitOutcome(tmp_path / "m.itin", "default", 400, 5, {})) == []


def test_a_wrong_mode_or_conflicting_configs_stop_crossval_before_any_work(tmp_path, demo_train, monkeypatch):
    from trainer.experiment import crossval as crossval_module

    monkeypatch.setattr(crossval_module, "run_crossval", lambda *a, **k: pytest.fail("training started"))
    out = tmp_path / "run"
    result = runner.invoke(app, ["crossval", str(demo_train), "--mode", "fuzzy", "-o", str(out)])
    assert result.exit_code == 2
    assert "--mode" in result.output and "exact, overlap" in result.output and "Traceback" not in result.output
    first, second = tmp_path / "a.toml", tmp_path / "b.toml"
    first.write_text("[evaluation]\nfolds = 3\n", encoding="utf-8")
    second.write_text("[evaluation]\nfolds = 4\n", encoding="utf-8")
    result = runner.invoke(app, ["crossval", str(demo_train), "-c", str(first), "-c", str(second), "-o", str(out)])
    assert result.exit_code == 2
    assert "evaluation.folds = 3" in result.output and str(second) in result.output
    assert not out.exists()


@pytest.mark.parametrize("option, value, named", [("--calibration", "beta", "none, isotonic, platt"),
                                                 ("--thresholds", "maybe", "none, f1, precision"),
                                                 ("--target-precision", "1.5", "must lie in [0, 1]")])
def test_fit_refuses_a_bad_confidence_option_before_training(tmp_path, demo_train, option, value, named):
    model = tmp_path / "m.itin"
    result = runner.invoke(app, ["fit", str(demo_train), "-o", str(model), option, value])
    assert result.exit_code == 2
    assert option in result.output and named in result.output and "Traceback" not in result.output
    assert not model.exists()


def test_itinerary_with_a_confidence_floor_says_what_it_left_out(tmp_path):
    extracted = tmp_path / "extracted.jsonl"
    extracted.write_text(json.dumps({
        "id": "log-s001", "doc": "log", "text": "We left Caddow and rode to Kell Ferry.",
        "events": [{"trigger": [3, 7], "confidence": 0.9, "roles": [{"role": "mover", "span": [0, 2], "confidence": 0.8},
                                                                    {"role": "source", "span": [8, 14], "confidence": 0.45}]},
                   {"trigger": [19, 23], "confidence": 0.4, "roles": [{"role": "destination", "span": [27, 37], "confidence": 0.3}]}],
    }) + "\n", encoding="utf-8")
    result = runner.invoke(app, ["itinerary", str(extracted), "-o", str(tmp_path / "it.csv"), "--min-confidence", "0.5"])
    assert result.exit_code == 0, result.output
    assert "1 event(s) in 1 doc(s)" in result.output
    assert "confidence floor 0.5: 1 event(s) and 1 role span(s) of kept events left out" in result.output
    lines = (tmp_path / "it.csv").read_text(encoding="utf-8").splitlines()
    assert lines[1] == "log,log-s001,1,1,We,left,,,,0.9,False,"
    gold = tmp_path / "gold.jsonl"
    gold.write_text(json.dumps({"id": "g-s001", "doc": "g", "text": "We left Caddow.",
                                "events": [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}]}]}) + "\n",
                    encoding="utf-8")
    result = runner.invoke(app, ["itinerary", str(gold), "-o", str(tmp_path / "g.csv"), "--min-confidence", "0.5"])
    assert result.exit_code == 0 and "no event carries a confidence (gold annotations?)" in result.output


def test_fit_reports_the_tuned_trigger_threshold_and_keeps_it_in_the_metadata(tmp_path, demo_train):
    config = tmp_path / "tuned.toml"
    config.write_text(f'[parser]\ncache_dir = "{tmp_path / "cache"}"\n'
                      '[trigger_model]\nkind = "logistic"\ntune_threshold = true\n'
                      '[role_model]\nkind = "logistic"\n', encoding="utf-8")
    model = tmp_path / "m.itin"
    files = [str(demo_train / f"quarne-salt-{n}.jsonl") for n in (1, 2)]
    fitted = runner.invoke(app, ["fit", *files, "-c", str(config), "-o", str(model)])
    assert fitted.exit_code == 0, fitted.output
    from trainer.models.training import load_extractor

    _, meta = load_extractor(model)
    tuned = meta["trigger_threshold"]
    assert tuned["threshold"] in {round(0.05 * k, 2) for k in range(2, 13)} and 0 < tuned["inner_fold_f1"] <= 1
    assert (f"trigger threshold {tuned['threshold']:.2f}, chosen on inner folds of the training docs; "
            f"trigger F1 on their held-out docs {tuned['inner_fold_f1']:.3f}") in fitted.output


def test_sigterm_stops_a_command_as_ctrl_c_does_only_while_it_runs_and_an_ignored_one_stays_ignored():
    """Inside sigterm_as_interrupt SIGTERM raises KeyboardInterrupt (so Ctrl+C's clean-up runs); the handler before
    it comes back after; a SIGTERM that was ignored stays ignored (as Python keeps an ignored SIGINT)."""
    import os
    import signal

    from trainer.cli import SIGTERM_RECEIVED, sigterm_as_interrupt

    previous = signal.signal(signal.SIGTERM, signal.SIG_DFL)
    try:
        with pytest.raises(KeyboardInterrupt) as stopped, sigterm_as_interrupt():
            os.kill(os.getpid(), signal.SIGTERM)
            for _ in range(100):  # the handler runs at the next bytecode boundary
                pass
        assert stopped.value.args == (SIGTERM_RECEIVED,)
        assert signal.getsignal(signal.SIGTERM) == signal.SIG_DFL
        signal.signal(signal.SIGTERM, signal.SIG_IGN)
        with sigterm_as_interrupt():
            assert signal.getsignal(signal.SIGTERM) == signal.SIG_IGN
            os.kill(os.getpid(), signal.SIGTERM)  # ignored: nothing happens
    finally:
        signal.signal(signal.SIGTERM, previous)


def test_a_command_stopped_by_sigterm_says_so_and_exits_with_143(tmp_path, monkeypatch):
    """A SIGTERM sent while `score` runs: Ctrl+C's message and 143, i.e. 128 + 15, the shell's exit status for a
    process ended by SIGTERM (common practice)."""
    import os
    import signal

    import trainer.experiment.score as score

    gold = tmp_path / "gold.jsonl"
    gold.write_text(json.dumps(GOOD) + "\n", encoding="utf-8")

    def killed(*args, **kwargs):
        os.kill(os.getpid(), signal.SIGTERM)
        for _ in range(100):
            pass
        raise AssertionError("the signal did not stop the command")

    monkeypatch.setattr(score, "score_report", killed)
    previous = signal.signal(signal.SIGTERM, signal.SIG_DFL)  # as a shell starts a command (this run may ignore it)
    try:
        result = CliRunner().invoke(app, ["score", str(gold), str(gold)])
    finally:
        signal.signal(signal.SIGTERM, previous)
    assert result.exit_code == 143, result.output
    assert "terminated (SIGTERM): outputs are written whole or not at all, so no file is torn" in result.output
