"""JUnit XML: one test suite per reported path, one test case per step.

Written to validate against the Jenkins/surefire ``junit-10.xsd``: a test case carries only
``name`` and ``classname`` (the schema allows no ``file``/``line`` there, so the position is
in the name and in the failure text).  A step that counts as a failure is a ``failure``; a
step that was not checked (skipped, and — unless strict — parse-error, unsupported,
timeout) is ``skipped``; holds and defines pass, with the method or definition as output.
The report holds no timings, so no ``time`` attribute is written rather than a made-up one.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from ..results import FileReport, Report, StepResult
from ..verdicts import Verdict
from ._base import Reporter, counterexample_text, message_of, step_math, xml_safe


class JunitReporter(Reporter):
    """Test-result XML for CI dashboards."""

    name = "junit"

    def write(self, report: Report) -> None:
        steps = report.steps()
        root = ET.Element("testsuites", {
            "name": "stepcheck",
            "tests": str(len(steps)),
            "failures": str(sum(s.verdict.is_failure(report.strict) for s in steps)),
            "errors": "0",
        })
        for file in report.files:
            root.append(self.suite(file, report))
        ET.indent(root)
        self.out.write('<?xml version="1.0" encoding="utf-8"?>\n')
        self.out.write(ET.tostring(root, encoding="unicode"))
        self.out.write("\n")

    def suite(self, file: FileReport, report: Report) -> ET.Element:
        """The test suite of one reported path."""
        failures = sum(s.verdict.is_failure(report.strict) for s in file.steps)
        skipped = sum(_is_skipped(s, report.strict) for s in file.steps)
        suite = ET.Element("testsuite", {
            "name": xml_safe(file.path),
            "tests": str(len(file.steps)),
            "failures": str(failures),
            "errors": "0",
            "skipped": str(skipped),
            "file": xml_safe(file.path),
        })
        properties = ET.SubElement(suite, "properties")
        ET.SubElement(properties, "property", {"name": "seed", "value": str(report.seed)})
        ET.SubElement(properties, "property", {"name": "stepcheck-version", "value": report.version})
        for step in file.steps:
            suite.append(self.case(step, report.strict))
        if file.notes:
            notes = "\n".join(f"{file.path}:{n.line}:{n.column}: note: {n.message}" for n in file.notes)
            ET.SubElement(suite, "system-out").text = xml_safe(notes)
        return suite

    def case(self, step: StepResult, strict: bool) -> ET.Element:
        """The test case of one step."""
        name = f"{step.path}:{step.line}:{step.column} chain {step.chain} step {step.step}"
        case = ET.Element("testcase", {"name": xml_safe(name), "classname": xml_safe(step.path)})
        text = _details(step)
        attrs = {"type": step.verdict.value, "message": xml_safe(message_of(step) or step.verdict.value)}
        if step.verdict.is_failure(strict):
            ET.SubElement(case, "failure", attrs).text = xml_safe(text)
        elif _is_skipped(step, strict):
            ET.SubElement(case, "skipped", attrs).text = xml_safe(text)
        else:
            ET.SubElement(case, "system-out").text = xml_safe(text)
        return case


def _is_skipped(step: StepResult, strict: bool) -> bool:
    return not step.verdict.is_failure(strict) and step.verdict not in (Verdict.HOLDS, Verdict.DEFINES)


def _details(step: StepResult) -> str:
    """The full text of a step: position and verdict, its math, hint, counterexample."""
    message = message_of(step)
    lines = [f"{step.path}:{step.line}:{step.column}: {step.verdict.value}{': ' + message if message else ''}"]
    math = step_math(step)
    if math:
        lines.append(f"step: {math}")
    if step.outcome.hint:
        lines.append(f"hint: {step.outcome.hint}")
    counterexample = counterexample_text(step.outcome.counterexample, limit=None)
    if counterexample:
        lines.append(f"counterexample: {counterexample}")
    return "\n".join(lines)
