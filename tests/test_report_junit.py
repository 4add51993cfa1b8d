"""JUnit XML: one test case per rule and bus segment, parsed with the standard library's XML
parser, with counts that agree with the JSON report's summary.

Invented data: the demo design (fixtures/demo) and small hand-made designs.
"""

from __future__ import annotations

import dataclasses
import json
import xml.etree.ElementTree as ET
from datetime import datetime, timezone
from pathlib import Path

from handmade import build, ic, markup_design, res

from netaudit.audit import audit, audit_design
from netaudit.checks import all_rules
from netaudit.config import Config
from netaudit.report import json as json_report
from netaudit.report import junit
from netaudit.results import Finding, Severity

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "fixtures" / "demo" / "greenhouse.net"
WHEN = datetime(2026, 3, 1, 12, 0, 0, tzinfo=timezone.utc)


def _parse(result) -> ET.Element:
    return ET.fromstring(junit.render(result, WHEN).encode("utf-8"))


def _lines(root: ET.Element) -> list[str]:
    out = []
    for el in root.iter():
        if el.tag in ("failure", "skipped") and el.text:
            out += el.text.splitlines()
    return out


def test_demo_junit_counts_match_the_json_summary():
    result = audit(DEMO)
    summary = json.loads(json_report.render(result))["summary"]
    root = _parse(result)
    lines = _lines(root)
    assert sum(x.startswith("error: ") for x in lines) == summary["errors"]
    assert sum(x.startswith("warning: ") for x in lines) == summary["warnings"]
    assert sum(x.startswith("info: ") for x in lines) == summary["infos"]
    assert sum(x.startswith("waived ") for x in lines) == summary["waived"]
    rules = len(all_rules())
    cases = root.findall("./testsuite/testcase")
    assert len(cases) == rules * (summary["segments"] + 1) == int(root.get("tests"))
    assert int(root.get("failures")) == len(root.findall("./testsuite/testcase/failure"))
    assert int(root.get("skipped")) == len(root.findall("./testsuite/testcase/skipped"))
    for suite in root.findall("testsuite"):
        assert int(suite.get("tests")) == len(suite.findall("testcase")) == rules
        assert int(suite.get("failures")) == len(suite.findall("testcase/failure"))


def test_each_rule_and_segment_pair_is_one_test_case():
    result = audit(DEMO)
    root = _parse(result)
    pairs = {(c.get("classname"), c.get("name")) for c in root.findall("./testsuite/testcase")}
    for bus in result.buses:
        for seg in bus.segments:
            for rule_id in all_rules():
                assert (seg.id, rule_id) in pairs
    case = next(c for c in root.iter("testcase")
                if c.get("classname") == "I2C_MAIN/U401.ch2" and c.get("name") == "pullup-too-strong")
    failure = case.find("failure")
    assert failure is not None and failure.get("type") == "error"
    assert len(failure.text.splitlines()) == 2        # demo faults 10 and 11: R405 and R406


def test_a_pair_whose_findings_are_all_waived_is_skipped_with_the_reason():
    result = audit(DEMO)
    case = next(c for c in _parse(result).iter("testcase")
                if c.get("classname") == "I2C_MAIN/U401.ch3" and c.get("name") == "pullup-to-signal")
    skipped = case.find("skipped")
    reason = next(f.waiver_reason for f in result.findings if f.waived)
    assert skipped is not None and case.find("failure") is None
    assert reason in skipped.get("message")


def test_a_pair_with_nothing_found_passes():
    case = next(c for c in _parse(audit(DEMO)).iter("testcase")
                if c.get("classname") == "I2C_MAIN/U401.ch0" and c.get("name") == "pullup-missing")
    assert list(case) == []


def test_findings_outside_any_segment_go_to_the_design_suite():
    d = build([ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
               ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), res("R1", "4k7"), res("R2", "4k7")],
              {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
               "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]}, title="loose")
    result = audit_design(d, Config.empty())
    rule_id = next(iter(all_rules()))
    loose = Finding(rule=rule_id, severity=Severity.WARNING, nets=("/ELSEWHERE",))
    result = dataclasses.replace(result, findings=result.findings + (loose,))
    root = _parse(result)
    case = next(c for c in root.iter("testcase") if c.get("classname") == junit.DESIGN_SUITE
                and c.get("name") == rule_id)
    assert "/ELSEWHERE" in case.find("failure").text


def test_markup_and_control_characters_from_the_design_still_parse():
    d = markup_design("/SDA<script>x</script>&\x01\"'", "<b>&amp;")
    result = audit_design(d, Config.empty())
    text = junit.render(result, WHEN)
    assert "<script>" not in text
    root = ET.fromstring(text.encode("utf-8"))
    segment = result.buses[0].segments[0].id            # named from the hostile net name
    assert "<" in segment or "&" in segment
    expected = segment.replace("\x01", "\ufffd")          # XML 1.0 cannot carry U+0001
    assert {c.get("classname") for c in root.iter("testcase")} >= {expected}
