"""JUnit XML read back by an independent reader (the junitparser package) with the same counts."""

from dataclasses import replace

from junitparser import Error, Failure, JUnitXml

from drc.report.junit import render_junit
from tests.gate.builders import board_report, finding, run_report, sample_findings


def read(tmp_path, text):
    path = tmp_path / "junit.xml"
    path.write_text(text, encoding="utf-8")
    return JUnitXml.fromfile(str(path))


def test_counts_agree_with_an_independent_reader(tmp_path):
    findings = sample_findings() + [replace(finding("slow-edge"), suppression="waiver", justification="ok")]
    run = run_report([board_report("a.cir", findings=[replace(f, board="a.cir") for f in findings]),
                      board_report("b.cir", findings=[], stages=[], error="b.cir:1:1: bad")])
    text = render_junit(run, "warning")
    xml = read(tmp_path, text)
    suites = {s.name: s for s in xml}
    a, b = suites["a.cir"], suites["b.cir"]
    declared = (a.tests, a.failures, a.errors)
    a.update_statistics()  # recount from the test cases, as the reader sees them
    assert (a.tests, a.failures, a.errors) == declared
    # warning level: bounce-window (error), pullup-waste, ambiguous-value, contact-wetting fail;
    # the note and the waived finding do not
    assert a.failures == 4
    names = [case.name for case in a]
    assert len(names) == len(set(names))  # keyed by classname + name: unique
    assert {"SW1 → U1:1", "SW2 → U1:3", "C4 (part)", "SW3 (contact)"} == set(names)
    assert all(case.classname == "a.cir" for case in a)
    b.update_statistics()
    assert (b.tests, b.errors) == (1, 1)
    assert isinstance(next(iter(b)).result[0], Error)
    assert int(xml._elem.get("failures")) == 4 and int(xml._elem.get("tests")) == a.tests + b.tests


def test_failure_message_and_fail_level(tmp_path):
    run = run_report()
    xml = read(tmp_path, render_junit(run, "error"))
    (suite,) = list(xml)
    failing = [(case.name, r) for case in suite for r in case.result if isinstance(r, Failure)]
    assert [(name, r.message) for name, r in failing] == [
        ("SW1 → U1:1", "bounce-window: bounce-window message for SW1 at U1:1")]
    assert "fix: Raise R1" in failing[0][1].text


def test_stage_without_findings_is_a_passing_case(tmp_path):
    xml = read(tmp_path, render_junit(run_report([board_report(findings=[])]), "note"))
    (suite,) = list(xml)
    assert suite.tests == 2 and suite.failures == 0
    assert all(case.is_passed for case in suite)


def test_deterministic(tmp_path):
    one = render_junit(run_report([board_report(findings=sample_findings())]), "note")
    two = render_junit(run_report([board_report(findings=sample_findings()[::-1])]), "note")
    assert one == two
