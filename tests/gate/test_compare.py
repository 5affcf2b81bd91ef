"""The CI gate: pass on equal reports, exit 1 naming the role that dropped, exit 2 on mismatched runs."""

from __future__ import annotations

import copy
import json
import xml.etree.ElementTree as ET

import pytest
from typer.testing import CliRunner

from trainer.cli import app
from trainer.config import GateConfig
from trainer.errors import GateInputError
from trainer.gate.compare import baseline_from_report, compare
from trainer.gate.junit import junit_xml

runner = CliRunner()
ROLES = ["mover", "source", "path", "destination"]


def score(f1):
    return {"precision": f1, "recall": f1, "f1": f1, "tp": 1, "fp": 0, "fn": 0, "gold": 1, "predicted": 1}


def make_report(**f1s):
    values = {"mover": 0.75, "source": 0.8, "path": 0.78, "destination": 0.7, "micro": 0.76, "macro": 0.75, "trigger": 0.85}
    values.update(f1s)
    return {
        "corpus": {"fingerprint": "abc", "files": [], "records": 10, "docs": 3},
        "roles": ROLES,
        "settings": {"mode": "exact"},
        "fold_plan_fingerprint": "f1",
        "systems": [{
            "name": "quick",
            "config": {"gate": {"tolerance": 0.02, "role_tolerances": {"source": 0.05}}},
            "scores": {"roles": {r: score(values[r]) for r in ROLES}, "micro": score(values["micro"]),
                       "macro": {"precision": 0, "recall": 0, "f1": values["macro"]}, "trigger": score(values["trigger"])},
            "intervals": {k: [v - 0.04, v + 0.04] for k, v in values.items()},
        }],
    }


@pytest.fixture
def files(tmp_path):
    report = tmp_path / "report.json"
    report.write_text(json.dumps(make_report()))
    baseline = tmp_path / "baseline.json"
    assert runner.invoke(app, ["gate", str(report), "--baseline", str(baseline), "--accept"]).exit_code == 0
    return tmp_path, report, baseline


def test_a_report_equal_to_its_baseline_passes(files):
    _, report, baseline = files
    result = runner.invoke(app, ["gate", str(report), "--baseline", str(baseline)])
    assert result.exit_code == 0, result.output
    assert "| mover | 0.750 | 0.750 | +0.000 | 0.730 | pass |" in result.output
    assert "PASSED" in result.output


def test_one_role_below_its_tolerance_fails_with_exit_1_and_names_it(files):
    tmp, _, baseline = files
    worse = tmp / "worse.json"
    worse.write_text(json.dumps(make_report(destination=0.67, source=0.76)))  # -0.03 > 0.02; source -0.04 < 0.05
    result = runner.invoke(app, ["gate", str(worse), "--baseline", str(baseline)])
    assert result.exit_code == 1
    assert "| destination | 0.700 | 0.670 | -0.030 | 0.680 | **REGRESSION** |" in result.output
    assert "| source | 0.800 | 0.760 | -0.040 | 0.750 | pass |" in result.output
    assert "FAILED: destination below the allowed drop" in result.output
    loose = runner.invoke(app, ["gate", str(worse), "--baseline", str(baseline), "--role-tolerance", "destination=0.05"])
    assert loose.exit_code == 0


def test_interval_rule_uses_the_baseline_interval(files):
    tmp, _, baseline = files
    worse = tmp / "worse.json"
    worse.write_text(json.dumps(make_report(mover=0.715)))  # baseline CI low 0.71: inside the interval
    assert runner.invoke(app, ["gate", str(worse), "--baseline", str(baseline), "--rule", "interval",
                               "--tolerance", "0"]).exit_code == 0
    worse.write_text(json.dumps(make_report(mover=0.705)))
    assert runner.invoke(app, ["gate", str(worse), "--baseline", str(baseline), "--rule", "interval",
                               "--tolerance", "0"]).exit_code == 1


def test_mismatched_fingerprints_give_exit_2_and_say_what_differs(files):
    tmp, _, baseline = files
    other = make_report()
    other["corpus"]["fingerprint"] = "xyz"
    other["settings"]["mode"] = "overlap"
    path = tmp / "other.json"
    path.write_text(json.dumps(other))
    result = runner.invoke(app, ["gate", str(path), "--baseline", str(baseline)])
    assert result.exit_code == 2
    assert "corpus: baseline 'abc', report 'xyz'" in result.output
    assert "mode: baseline 'exact', report 'overlap'" in result.output
    forced = runner.invoke(app, ["gate", str(path), "--baseline", str(baseline), "--allow-mismatch"])
    assert forced.exit_code == 0 and "compared despite different corpus" in forced.output


def test_unusable_inputs_give_exit_2(tmp_path, files):
    _, report, baseline = files
    (tmp_path / "junk.json").write_text("{not json")
    assert runner.invoke(app, ["gate", str(tmp_path / "junk.json"), "--baseline", str(baseline)]).exit_code == 2
    assert runner.invoke(app, ["gate", str(report), "--baseline", str(tmp_path / "none.json")]).exit_code == 2
    (tmp_path / "wrong.json").write_text(json.dumps({"schema": "something else"}))
    assert runner.invoke(app, ["gate", str(report), "--baseline", str(tmp_path / "wrong.json")]).exit_code == 2


def test_junit_xml_has_the_element_structure_ci_systems_read():
    report = make_report()
    baseline = baseline_from_report(report, system=None, scores=["micro", *ROLES, "trigger"])
    result = compare(make_report(path=0.7), baseline, GateConfig(tolerance=0.02))
    root = ET.fromstring(junit_xml(result))
    # Structure of the JUnit XML format as CI systems read it (common practice, e.g. the Jenkins/Ant schema):
    # testsuites > testsuite[name, tests, failures, errors, skipped] > testcase[classname, name] > failure[message].
    assert root.tag == "testsuites"
    suites = root.findall("testsuite")
    assert len(suites) == 1
    suite = suites[0]
    assert {"name", "tests", "failures", "errors", "skipped"} <= set(suite.attrib)
    cases = suite.findall("testcase")
    assert [c.get("name") for c in cases] == ["micro", *ROLES, "trigger"]
    assert all(c.get("classname") == "itinerant.gate.quick" for c in cases)
    failed = [c.get("name") for c in cases if c.find("failure") is not None]
    assert failed == ["path"]
    assert int(suite.get("tests")) == len(cases) and int(suite.get("failures")) == len(failed)
    assert "baseline 0.7800, now 0.7000" in cases[3].find("failure").get("message")
    for case in cases:
        assert set(child.tag for child in case) <= {"failure", "system-out"}


def test_baseline_refuses_unknown_scores():
    with pytest.raises(GateInputError, match="no score"):
        baseline_from_report(make_report(), system=None, scores=["vehicle"])


def _gate(*args):
    result = runner.invoke(app, ["gate", *map(str, args)])
    assert "Traceback" not in result.output and (result.exception is None or isinstance(result.exception, SystemExit))
    return result


@pytest.mark.parametrize("where, value, message", [
    (("f1", "mover"), None, "the baseline has no value for 'f1.mover'"),
    (("f1", "mover"), float("nan"), "the baseline's 'f1.mover' is nan, not a finite number"),
    (("f1", "mover"), "0.75", "the baseline's 'f1.mover' is not a number: \"0.75\""),
    (("f1", "mover"), True, "the baseline's 'f1.mover' is not a number: true"),
    (("intervals", "path"), [0.1], "the baseline's 'intervals.path' is not a [low, high] pair"),
    (("intervals", "path"), [0.1, float("inf")], "the baseline's 'intervals.path[1]' is inf, not a finite number"),
])
def test_a_bad_baseline_score_is_exit_2_naming_the_field(files, where, value, message):
    tmp, report, baseline = files
    data = json.loads(baseline.read_text())
    data[where[0]][where[1]] = value
    baseline.write_text(json.dumps(data))  # json writes NaN and Infinity, which json.loads reads back
    result = _gate(report, "--baseline", baseline)
    assert result.exit_code == 2, result.output
    assert message in result.output


def test_an_empty_or_partial_baseline_is_exit_2_not_a_pass(files):
    tmp, report, baseline = files
    data = json.loads(baseline.read_text())
    data["f1"] = {}
    baseline.write_text(json.dumps(data))
    result = _gate(report, "--baseline", baseline)
    assert result.exit_code == 2 and "PASSED" not in result.output
    assert "the baseline has no F1 for required score(s) ['micro', 'mover', 'source', 'path', 'destination', 'trigger']" \
        in result.output
    data["f1"] = {"micro": 0.76}
    baseline.write_text(json.dumps(data))
    result = _gate(report, "--baseline", baseline)
    assert result.exit_code == 2
    assert "no F1 for required score(s) ['mover', 'source', 'path', 'destination', 'trigger']" in result.output


@pytest.mark.parametrize("damage, message", [
    (lambda r: r["systems"][0]["scores"]["roles"]["mover"].update(f1=float("nan")),
     "'systems['quick'].scores.roles.mover.f1' is nan, not a finite number"),
    (lambda r: r["systems"][0]["scores"]["roles"]["path"].pop("f1"),
     "the evaluation report has no value for 'systems['quick'].scores.roles.path.f1'"),
    (lambda r: r["systems"][0]["scores"].update(micro={}), "no value for 'systems['quick'].scores.micro.f1'"),
    (lambda r: r["systems"][0]["scores"].update(roles=[]), "no 'systems['quick'].scores.roles' object"),
    (lambda r: r.update(systems={}), "the report has no list of configs ('systems')"),
    (lambda r: r["systems"][0]["scores"]["trigger"].update(f1="high"), "scores.trigger.f1' is not a number: \"high\""),
])
def test_a_bad_report_score_is_exit_2_naming_the_field(files, damage, message):
    tmp, _, baseline = files
    report = make_report()
    damage(report)
    path = tmp / "bad.json"
    path.write_text(json.dumps(report))
    result = _gate(path, "--baseline", baseline)
    assert result.exit_code == 2, result.output
    assert message in result.output


def test_malformed_files_are_exit_2(files, tmp_path):
    _, report, baseline = files
    (tmp_path / "deep.json").write_text("[" * 100000 + "]" * 100000)
    (tmp_path / "list.json").write_text("[1, 2]")
    for bad in ("deep.json", "list.json"):
        assert _gate(tmp_path / bad, "--baseline", baseline).exit_code == 2
        assert _gate(report, "--baseline", tmp_path / bad).exit_code == 2
    broken = json.loads(baseline.read_text())
    broken.pop("fingerprints")
    (tmp_path / "nofp.json").write_text(json.dumps(broken))
    result = _gate(report, "--baseline", tmp_path / "nofp.json")
    assert result.exit_code == 2 and "lacks its 'system' name or its 'fingerprints'" in result.output


def test_system_selects_the_config_that_is_gated(files):
    tmp, _, baseline = files
    report = make_report()
    weaker = copy.deepcopy(report["systems"][0])
    weaker["name"] = "weaker"
    weaker["scores"]["roles"]["mover"]["f1"] = 0.5
    report["systems"].append(weaker)
    path = tmp / "two.json"
    path.write_text(json.dumps(report))
    assert _gate(path, "--baseline", baseline).exit_code == 0  # default: the baseline's config, 'quick'
    chosen = _gate(path, "--baseline", baseline, "--system", "weaker")
    assert chosen.exit_code == 1
    assert "Gate on config `weaker`" in chosen.output and "| mover | 0.750 | 0.500 |" in chosen.output
    missing = _gate(path, "--baseline", baseline, "--system", "absent")
    assert missing.exit_code == 2 and "no config named 'absent'" in missing.output


def test_accepting_a_report_with_a_non_finite_score_is_refused(tmp_path):
    report = make_report(micro=float("nan"))
    path = tmp_path / "r.json"
    path.write_text(json.dumps(report))
    result = _gate(path, "--baseline", tmp_path / "b.json", "--accept")
    assert result.exit_code == 2 and "scores.micro.f1' is nan" in result.output
    assert not (tmp_path / "b.json").exists()


def test_tolerances_are_checked_and_the_command_line_tolerance_sets_every_score(files):
    tmp, _, baseline = files
    worse = tmp / "worse.json"
    worse.write_text(json.dumps(make_report(source=0.76)))  # -0.04: within the config's source tolerance of 0.05
    assert _gate(worse, "--baseline", baseline).exit_code == 0
    strict = _gate(worse, "--baseline", baseline, "--tolerance", "0.02")
    assert strict.exit_code == 1 and "| source | 0.800 | 0.760 | -0.040 | 0.780 | **REGRESSION** |" in strict.output
    assert _gate(worse, "--baseline", baseline, "--tolerance", "0.02", "--role-tolerance", "source=0.05").exit_code == 0
    for bad in ("-1", "5"):
        result = _gate(worse, "--baseline", baseline, "--tolerance", bad)
        assert result.exit_code == 2 and "must lie in [0, 1]" in result.output
    unknown = _gate(worse, "--baseline", baseline, "--role-tolerance", "captain=0.1")
    assert unknown.exit_code == 2 and "names no score of the baseline: captain" in unknown.output
    assert "choose from: destination, micro, mover, path, source, trigger" in unknown.output


def test_junit_output_may_not_replace_the_report_read_from_its_folder(tmp_path, files):
    _, report, baseline = files
    folder = tmp_path / "run"
    folder.mkdir()
    (folder / "report.json").write_text(report.read_text())
    before = (folder / "report.json").read_text()
    result = _gate(folder, "--baseline", baseline, "--junit", folder / "report.json")
    assert result.exit_code == 2 and "also an input" in result.output
    assert (folder / "report.json").read_text() == before
