"""Every command on bad paths, and commands killed mid-run: a message and exit 2, the inputs untouched,
never a traceback, never a torn or emptied output."""

from __future__ import annotations

import hashlib
import json
import shutil
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from tests.conftest import DEMO, REPO
from trainer.cli import app

runner = CliRunner()
UNWRITABLE = "/proc/itinerant-fault-test"  # Linux refuses new files in /proc, even to root
GOOD = {"id": "a", "doc": "d", "text": "We left Caddow.",
        "events": [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]}]}]}
ITINERANT = [sys.executable, "-m", "trainer.cli"]


@pytest.fixture
def place(tmp_path):
    """A corpus file, a (fake, never loaded) model file with its digest, an empty folder and a gate baseline."""
    (tmp_path / "c.jsonl").write_text(json.dumps(GOOD) + "\n", encoding="utf-8")
    (tmp_path / "m.itin").write_bytes(b"ITINERANT-MODEL 1\n{}\n")
    (tmp_path / "m.itin.sha256").write_text(hashlib.sha256(b"ITINERANT-MODEL 1\n{}\n").hexdigest() + "  m.itin\n")
    (tmp_path / "empty").mkdir()
    (tmp_path / "b.json").write_text("{}\n")
    (tmp_path / "o.jsonl").write_text('{"an": "earlier result"}\n')  # every refused run must leave it as it is
    return tmp_path


def snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


# (command line with {d} for the folder, words the message must hold); every case must exit 2.
CASES = {
    "missing path": [
        ("check {d}/no.jsonl", "no such file"),
        ("convert {d}/no.jsonl -o {d}/o.tsv", "no such file"),
        ("convert {d}/no.txt -o {d}/o.jsonl", "no such file"),
        ("convert {d}/no.tsv -o {d}/o.jsonl", "no such file"),
        ("convert {d}/no.cols -o {d}/o.jsonl", "no such file"),
        ("convert {d}/no.xml -o {d}/o.jsonl", "no such file"),
        ("fit {d}/no.jsonl -o {d}/o.itin", "no such file"),
        ("extract {d}/no.itin {d}/c.jsonl -o {d}/o.jsonl", "no such model file"),
        ("extract {d}/m.itin {d}/no.txt -o {d}/o.jsonl", "no such file"),
        ("crossval {d}/no.jsonl -o {d}/run", "no such file"),
        ("curve {d}/no.jsonl -o {d}/run", "no such file"),
        ("score {d}/no.jsonl {d}/c.jsonl", "no such file"),
        ("contrast {d}/no {d}/no2", "no report.json here"),
        ("gate {d}/no --baseline {d}/b.json", "no such evaluation report"),
        ("gate {d}/c.jsonl --baseline {d}/no.json", "no such baseline"),
        ("itinerary {d}/no.jsonl -o {d}/o.tsv", "no such file"),
        ("suggest {d}/m.itin {d}/no.txt -o {d}/o.jsonl", "no such file"),
        ("merge {d}/c.jsonl -b {d}/no.jsonl -o {d}/o.jsonl", "no such file"),
        ("demo --data {d}/no -o {d}/run", "no such file"),
        ("review {d}/no.jsonl --no-open", "no such file"),
        ("agree {d}/no.jsonl {d}/c.jsonl", "no such file"),
    ],
    "folder for a file": [
        ("check {d}/empty", "folder holds no *.jsonl files"),
        ("convert {d}/empty -o {d}/o.jsonl", "is a folder, not a file"),
        ("fit {d}/empty -o {d}/o.itin", "folder holds no *.jsonl files"),
        ("extract {d}/empty {d}/c.jsonl -o {d}/o.jsonl", "is a folder, not a model file"),
        ("extract {d}/m.itin {d}/empty -o {d}/o.jsonl", "a library is written to a folder"),
        ("extract {d}/m.itin {d}/empty -o {d}/out", "no .txt or .jsonl books"),
        ("extract {d}/m.itin {d}/c.jsonl {d}/empty -o {d}/out", "not an extractor"),
        ("extract {d}/m.itin {d}/c.jsonl {d}/empty -o {d}/out --jobs 0", "at least one worker"),
        ("extract {d}/m.itin {d}/c.jsonl {d}/empty -o {d}/out --doc x", "work on one input file"),
        ("crossval {d}/empty -o {d}/run", "folder holds no *.jsonl files"),
        ("score {d}/c.jsonl {d}/empty", "folder holds no *.jsonl files"),
        ("contrast {d}/empty {d}/empty", "no report.json here"),
        ("gate {d}/empty --baseline {d}/b.json", "no such evaluation report"),
        ("gate {d}/c.jsonl --baseline {d}/empty", "is a folder"),
        ("itinerary {d}/empty -o {d}/o.tsv", "folder holds no *.jsonl files"),
        ("suggest {d}/empty {d}/c.jsonl -o {d}/o.jsonl", "is a folder, not a model file"),
        ("suggest {d}/m.itin {d}/empty -o {d}/o.jsonl", "is a folder, not a file"),
        ("merge {d}/c.jsonl -b {d}/empty -o {d}/o.jsonl", "folder holds no *.jsonl files"),
        ("review {d}/empty --no-open", "is a folder, not a file"),
        ("agree {d}/empty {d}/c.jsonl", "folder holds no *.jsonl files"),
    ],
    "unwritable output": [
        ("convert {d}/c.jsonl -o {u}/o.tsv", "cannot write in /proc"),
        ("convert {d}/c.jsonl -o {d}/empty", "is a folder, but the converted file is a file"),
        ("fit {d}/c.jsonl -o {u}/o.itin", "cannot write in /proc"),
        ("fit {d}/c.jsonl -o {d}/empty", "is a folder, but the model file is a file"),
        ("fit {d}/c.jsonl -o {d}/c.jsonl/o.itin", "is a file, not a folder"),
        ("extract {d}/m.itin {d}/c.jsonl -o {u}/o.jsonl", "cannot write in /proc"),
        ("extract {d}/m.itin {d}/c.jsonl -o {d}/o.jsonl --table {u}/o.tsv", "cannot write in /proc"),
        ("crossval {d}/c.jsonl -o {u}", "cannot write in /proc"),
        ("crossval {d}/c.jsonl -o {d}/m.itin", "is a file, but the report folder is a folder"),
        ("curve {d}/c.jsonl -o {u}", "cannot write in /proc"),
        ("score {d}/c.jsonl {d}/c.jsonl -o {u}", "cannot write in /proc"),
        ("gate {d}/c.jsonl --baseline {d}/b.json --junit {u}/g.xml", "cannot write in /proc"),
        ("itinerary {d}/c.jsonl -o {u}/o.tsv", "cannot write in /proc"),
        ("suggest {d}/m.itin {d}/c.jsonl -o {u}/o.jsonl", "cannot write in /proc"),
        ("merge {d}/c.jsonl -b {d}/c.jsonl -o {u}/o.jsonl", "cannot write in /proc"),
        ("agree {d}/c.jsonl {d}/c.jsonl -o {u}", "cannot write in /proc"),
    ],
    "output equal to an input": [
        ("convert {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("fit {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("extract {d}/m.itin {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("extract {d}/m.itin {d}/c.jsonl -o {d}/m.itin", "also an input"),
        ("extract {d}/m.itin {d}/c.jsonl -o {d}/o.jsonl --table {d}/c.jsonl", "a table must end in .csv or .tsv"),
        ("crossval {d} -o {d}", "also an input"),
        ("curve {d} -o {d}", "also an input"),
        ("score {d}/c.jsonl {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("gate {d}/c.jsonl --baseline {d}/b.json --junit {d}/b.json", "also an input"),
        ("gate {d}/c.jsonl --baseline {d}/c.jsonl --accept", "also an input"),
        ("itinerary {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("suggest {d}/m.itin {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("merge {d}/c.jsonl -b {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("agree {d}/c.jsonl {d}/c.jsonl -o {d}/c.jsonl", "also an input"),
        ("explain {d}/no.itin", "no such model file"),
    ],
    "option out of range": [
        ("fit {d}/c.jsonl -o {d}/o.itin --jobs 0", "--jobs 0: at least one worker is needed"),
        ("crossval {d}/c.jsonl -o {d}/run --jobs 0", "--jobs 0: at least one worker is needed"),
        ("curve {d}/c.jsonl -o {d}/run --jobs -1", "--jobs -1: at least one worker is needed"),
        ("crossval {d}/c.jsonl -o {d}/run --folds 1", "'evaluation.folds' must be at least 2, got 1"),
        ("extract {d}/m.itin {d}/c.jsonl -o {d}/o.jsonl --batch-size 0", "a batch needs at least 1 sentence"),
        ("extract {d}/m.itin {d}/c.jsonl -o {d}/o.jsonl --input-format xml", "'xml' is not an input format"),
        ("check {d}/c.jsonl --roles ,", "--roles ',': roles must not be empty"),
        ("score {d}/c.jsonl {d}/c.jsonl --roles mover,mover", "roles must not repeat"),
        ("agree {d}/c.jsonl {d}/c.jsonl --roles mover,trigger", "['trigger'] are reserved for score names"),
        ("itinerary {d}/c.jsonl -o {d}/o.tsv --min-confidence 1.5", "must be a number from 0 to 1, got 1.5"),
        ("fit {d}/c.jsonl -o {d}/o.itin --calibration isotonic", "so it needs at least two annotated docs; this corpus has 1"),
        ("fit {d}/c.jsonl -o {d}/o.itin --target-precision 0.9", "--target-precision is read only when"),
        ("crossval {d}/c.jsonl -o {d}/run --folds 3 --leave-one-doc-out", "--folds and --repeats set K shuffled folds"),
        ("crossval {d}/c.jsonl -o {d}/run --shares 0,2", "shares must lie in (0, 1], got [0.0, 2.0]"),
        ("curve {d}/c.jsonl -o {d}/run --shares 0.5,1.5", "shares must lie in (0, 1], got [0.5, 1.5]"),
        ("gate {d}/c.jsonl --baseline {d}/b.json --tolerance 5", "--tolerance 5: an allowed F1 drop must lie in [0, 1]"),
        ("gate {d}/c.jsonl --baseline {d}/b.json --tolerance -1", "--tolerance -1: an allowed F1 drop must lie in [0, 1]"),
    ],
    "table or gazetteer unusable (checked before anything is written)": [
        ("extract {d}/m.itin {d}/c.jsonl -o {d}/o.jsonl --table {d}/t.xlsx", "a table must end in .csv or .tsv"),
        ("itinerary {d}/c.jsonl -o {d}/o.xlsx", "a table must end in .csv or .tsv"),
        ("itinerary {d}/c.jsonl -o {d}/o.tsv --gazetteer {d}/no.tsv --geojson {d}/g.json", "no such file"),
    ],
}


@pytest.mark.parametrize("case, line, words", [(case, line, words) for case, items in CASES.items() for line, words in items],
                         ids=[f"{case}: {line.split()[0]} {n}" for case, items in CASES.items() for n, (line, _) in enumerate(items)])
def test_every_command_refuses_bad_paths_with_exit_2_and_touches_nothing(place, case, line, words):
    before = snapshot(place)
    result = runner.invoke(app, line.format(d=place, u=UNWRITABLE).split())
    assert result.exit_code == 2, result.output
    assert words in result.output
    assert "error: " in result.output and "fix: " in result.output
    assert not isinstance(result.exception, Exception) or isinstance(result.exception, SystemExit)
    assert "Traceback" not in result.output
    assert snapshot(place) == before  # nothing written, nothing changed


def test_crossval_refuses_an_input_inside_its_report_folder(place):
    (place / "run").mkdir()
    (place / "run" / "c.jsonl").write_text((place / "c.jsonl").read_text(encoding="utf-8"), encoding="utf-8")
    before = snapshot(place)
    result = runner.invoke(app, ["crossval", str(place / "run" / "c.jsonl"), "-o", str(place / "run"),
                                 "-c", str(REPO / "configs" / "rules.toml")])
    assert result.exit_code == 2, result.output
    assert "this input lies inside the report folder" in result.output and "fix: " in result.output
    assert snapshot(place) == before


def test_every_command_is_covered():
    covered = {line.split()[0] for items in CASES.values() for line, _ in items}
    from typer.main import get_command

    mine = {"check", "convert", "fit", "extract", "crossval", "curve", "score", "contrast", "gate", "itinerary",
            "suggest", "merge", "demo", "explain", "review", "agree"}
    assert mine <= set(get_command(app).commands)
    assert covered == mine


def test_one_option_name_has_one_short_form_in_every_command():
    from typer.main import get_command

    shorts: dict[str, set[str]] = {}
    for command in get_command(app).commands.values():
        for param in command.params:
            if param.param_type_name == "option":
                long = next(o for o in param.opts if o.startswith("--"))
                shorts.setdefault(long, set()).add(next((o for o in param.opts if not o.startswith("--")), ""))
    assert all(len(forms) == 1 for forms in shorts.values()), {k: v for k, v in shorts.items() if len(v) > 1}
    used = [next(iter(forms)) for forms in shorts.values() if next(iter(forms))]
    assert len(used) == len(set(used))  # and a short form stands for one long name only
    assert shorts["--output"] == {"-o"} and shorts["--config"] == {"-c"} and shorts["--count"] == {"-n"}


def test_version_prints_the_installed_version():
    from importlib.metadata import version

    result = runner.invoke(app, ["--version"])
    assert result.exit_code == 0
    assert result.output == f"itinerant {version('itinerant')}\n"


def test_help_shows_readable_placeholders_and_keeps_bracketed_words():
    for command in ("fit", "crossval", "gate", "suggest", "extract"):
        text = runner.invoke(app, [command, "--help"], terminal_width=200).output
        assert "<bool>" not in text and "<list[" not in text and "<path>" not in text
    assert "PATH" in runner.invoke(app, ["fit", "--help"], terminal_width=200).output
    gate_help = " ".join(w for w in runner.invoke(app, ["gate", "--help"]).output.split() if w != "│")
    assert "Take the gate settings (its gate table) from this config." in gate_help


def test_suggest_needs_an_output_and_n_has_a_long_form():
    text = runner.invoke(app, ["suggest", "--help"], terminal_width=200).output
    assert "--count" in text and "-n" in text
    result = runner.invoke(app, ["suggest", "m.itin", "u.txt"])
    assert result.exit_code == 2
    assert "--output" in result.output  # click: missing option


# ---------------------------------------------------------------- killed mid-run


def run(*args, cwd):
    return subprocess.run([*ITINERANT, *map(str, args)], cwd=cwd, capture_output=True, text=True, check=True)


def kill_when(process: subprocess.Popen, ready) -> None:
    """SIGKILL ``process`` as soon as ``ready()`` holds (or let it finish if it ends first)."""
    while process.poll() is None and not ready():
        time.sleep(0.02)
    if process.poll() is None:
        process.send_signal(signal.SIGKILL)
    process.wait()


@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("killed")
    (folder / "rules.toml").write_text('name = "rules"\n[trigger_model]\nkind = "rules"\n[role_model]\nkind = "rules"\n')
    shutil.copy(DEMO / "train" / "quarne-salt-1.jsonl", folder / "small.jsonl")
    return folder


@pytest.mark.slow
def test_a_killed_extract_leaves_the_previous_output_and_resumes_to_the_full_result(workdir):
    run("fit", "small.jsonl", "-c", "rules.toml", "-o", "rules.itin", cwd=workdir)
    chapter = DEMO / "unannotated" / "delacott-survey-3.txt"
    run("extract", "rules.itin", chapter, "-o", "whole.jsonl", cwd=workdir)
    previous = (DEMO / "test" / "lisle-letters-1.jsonl").read_bytes()
    target = workdir / "out.jsonl"
    target.write_bytes(previous)
    partial = workdir / "out.jsonl.partial"
    process = subprocess.Popen([*ITINERANT, "extract", "rules.itin", str(chapter), "-o", "out.jsonl", "--batch-size", "1"],
                               cwd=workdir, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    kill_when(process, lambda: partial.exists() and partial.read_bytes().count(b"\n") >= 60)
    whole = (workdir / "whole.jsonl").read_bytes()
    assert target.read_bytes() in (previous, whole)  # intact, or the complete new output if it won the race
    if process.returncode == -signal.SIGKILL:
        assert target.read_bytes() == previous
        assert partial.read_bytes().count(b"\n") >= 60
        assert (workdir / "out.jsonl.lock").exists()  # left by the killed process; the next run takes it over
    resumed = run("extract", "rules.itin", chapter, "-o", "out.jsonl", "--resume", cwd=workdir)
    assert target.read_bytes() == whole
    assert not partial.exists() and not (workdir / "out.jsonl.lock").exists()
    if process.returncode == -signal.SIGKILL:  # whole paragraphs of the partial file were kept
        assert "kept from the earlier run" in resumed.stderr
    other = DEMO / "test" / "ruddock-drove-1.jsonl"
    refused = subprocess.run([*ITINERANT, "extract", "rules.itin", str(other), "-o", "out.jsonl", "--resume"],
                             cwd=workdir, capture_output=True, text=True)
    assert refused.returncode == 1
    assert "was not made from this input" in refused.stderr and "Traceback" not in refused.stderr
    assert target.read_bytes() == whole


@pytest.mark.slow
def test_a_killed_fit_leaves_the_previous_model_loadable(workdir):
    from trainer.models.training import load_extractor

    run("fit", "small.jsonl", "-c", "rules.toml", "-o", "model.itin", cwd=workdir)
    before = {name: (workdir / name).read_bytes() for name in ("model.itin", "model.itin.sha256")}
    process = subprocess.Popen([*ITINERANT, "fit", str(DEMO / "train"), "-c", str(REPO / "configs" / "quick.toml"),
                                "-o", "model.itin"], cwd=workdir, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                               text=True)
    said: list[str] = []
    reader = threading.Thread(target=lambda: said.extend(process.stderr), daemon=True)
    reader.start()
    kill_when(process, lambda: any(line.startswith("training 'quick'") for line in list(said)))  # training has begun
    reader.join()
    after = {name: (workdir / name).read_bytes() for name in before}
    if process.returncode == -signal.SIGKILL:
        assert after == before
        assert load_extractor(workdir / "model.itin")[0].config.name == "rules"
    else:  # it finished before the kill: a complete new model
        assert load_extractor(workdir / "model.itin")[0].config.name == "quick"
    run("fit", "small.jsonl", "-c", "rules.toml", "-o", "model.itin", cwd=workdir)  # a stale lock is taken over
    assert not (workdir / "model.itin.lock").exists()


@pytest.mark.parametrize("bad", [
    '{"id": "b", "doc": "d", "text": "We left \\udc80 Caddow.", "events": []}',
    '{"id": "b", "doc": "d", "doc": "e", "text": "We left.", "events": []}',
    "[" * 5000 + "]" * 5000,
    '{"id": "b", "doc": "", "text": "We left.", "events": []}',
])
def test_check_refuses_exactly_what_fit_refuses(tmp_path, bad):
    corpus = tmp_path / "c.jsonl"
    corpus.write_text(json.dumps(GOOD) + "\n" + bad + "\n", encoding="utf-8")
    checked = runner.invoke(app, ["check", str(corpus), "--no-lemmas"])
    fitted = runner.invoke(app, ["fit", str(corpus), "-o", str(tmp_path / "m.itin")])
    assert checked.exit_code == 1 and fitted.exit_code == 1
    located = next(line for line in checked.output.splitlines() if line.startswith(f"{corpus}:2: "))
    assert located in fitted.output
    assert not (tmp_path / "m.itin").exists()
    assert "Traceback" not in checked.output + fitted.output


def test_what_check_accepts_fit_trains_on(tmp_path, place):
    rules = tmp_path / "rules.toml"
    rules.write_text('[trigger_model]\nkind = "rules"\n[role_model]\nkind = "rules"\n')
    corpus = place / "c.jsonl"
    assert runner.invoke(app, ["check", str(corpus), "--no-lemmas"]).exit_code == 0
    fitted = runner.invoke(app, ["fit", str(corpus), "-c", str(rules), "-o", str(tmp_path / "m.itin")])
    assert fitted.exit_code == 0, fitted.output
    assert (tmp_path / "m.itin").exists() and (tmp_path / "m.itin.sha256").exists()


def test_contrast_and_gate_on_malformed_reports_exit_2(tmp_path):
    for name, content in (("junk", "{not json"), ("deep", "[" * 100000 + "]" * 100000), ("list", "[1]")):
        (tmp_path / name).mkdir()
        (tmp_path / name / "report.json").write_text(content)
        contrasted = runner.invoke(app, ["contrast", str(tmp_path / name), str(tmp_path / name)])
        gated = runner.invoke(app, ["gate", str(tmp_path / name), "--baseline", str(tmp_path / "b.json")])
        for result in (contrasted, gated):
            assert result.exit_code == 2, result.output
            assert "error: " in result.output and "Traceback" not in result.output
            assert result.exception is None or isinstance(result.exception, SystemExit)


def test_a_second_run_to_a_report_folder_is_refused_before_any_work(place):
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])  # stands for a running crossval
    try:
        (place / "run.lock").write_text(f"{sleeper.pid}\n")
        for command in ("crossval", "curve"):
            result = runner.invoke(app, [command, str(place / "c.jsonl"), "-o", str(place / "run")])
            assert result.exit_code == 2
            assert f"another itinerant process (pid {sleeper.pid}) is writing it" in result.output
        assert not (place / "run").exists()
    finally:
        sleeper.kill()
        sleeper.wait()


def test_contrast_refuses_runs_that_held_out_different_folds(tmp_path):
    for name, plan in (("five-fold", "aaaa"), ("one-doc-out", "bbbb")):
        (tmp_path / name).mkdir()
        (tmp_path / name / "report.json").write_text(json.dumps(
            {"corpus": {"fingerprint": "same"}, "settings": {"mode": "exact"}, "fold_plan_fingerprint": plan}))
    result = runner.invoke(app, ["contrast", str(tmp_path / "five-fold"), str(tmp_path / "one-doc-out")])
    assert result.exit_code == 1, result.output
    assert "held out different folds (fold plans aaaa and bbbb)" in result.output and "fix: rerun one of them" in result.output
