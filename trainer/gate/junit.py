"""JUnit XML for the gate: one test case per gated score, so CI systems list per-role results."""

from __future__ import annotations

import xml.etree.ElementTree as ET

from trainer.gate.compare import REGRESSION, GateResult


def junit_xml(result: GateResult) -> str:
    """A ``testsuites`` document with one ``testsuite`` and a ``testcase`` per score."""
    failures = sum(v.verdict == REGRESSION for v in result.verdicts)
    suites = ET.Element("testsuites", name="itinerant-gate", tests=str(len(result.verdicts)), failures=str(failures))
    suite = ET.SubElement(suites, "testsuite", name=f"itinerant-gate.{result.system}", tests=str(len(result.verdicts)),
                          failures=str(failures), errors="0", skipped="0")
    for v in result.verdicts:
        case = ET.SubElement(suite, "testcase", classname=f"itinerant.gate.{result.system}", name=v.score, time="0")
        message = f"F1 {v.score}: baseline {v.baseline:.4f}, now {v.now:.4f}, change {v.change:+.4f}, lowest allowed {v.floor:.4f}"
        if v.verdict == REGRESSION:
            ET.SubElement(case, "failure", message=message, type="regression").text = message
        else:
            ET.SubElement(case, "system-out").text = f"{v.verdict}: {message}"
    ET.indent(suites)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(suites, encoding="unicode") + "\n"
