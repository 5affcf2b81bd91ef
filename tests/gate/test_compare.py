"""The CI gate: pass on equal reports, exit 1 naming the role that dropped, exit 2 on mismatched runs."""

from __future__ import annotations

import copy
import json
import xml.etree.ElementTree as ET

import pytest
from typer.testing import CliRunner

from trainer.cli import app
from trainer.config import GateConfig
from trainer.gate.compare import GateInputError, baseline_from_report, compare
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
