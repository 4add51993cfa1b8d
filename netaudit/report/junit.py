"""JUnit XML for CI test-result views: one test case per rule and bus segment.

Every rule runs over every segment, so each (rule, segment) pair is a test case: it passes
when the rule found nothing there, fails (``<failure>``) when it found something not
waived, and is skipped (``<skipped>``) when everything it found there is waived. Findings
that belong to no segment (a lone line, a rail) go to one more suite, ``design``, with a
test case per rule. Each finding is one line of the failure or skip text, starting with
its severity (``error:``, ``warning:``, ``info:``) or ``waived <severity>:``, so the
counts add up to the JSON report's summary.
"""

from __future__ import annotations

import os
import re
import xml.etree.ElementTree as ET
from datetime import datetime

from .. import __version__
from ..results import Audit, Finding
from .html import iso_date, run_date
from .messages import phrase

DESIGN_SUITE = "design"
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def _x(text) -> str:
    """Text XML 1.0 can carry (ElementTree escapes markup; it does not drop control characters)."""
    return _NOT_XML.sub("\ufffd", "" if text is None else str(text))


def _line(f: Finding) -> str:
    head = f"waived {f.severity.value}" if f.waived else f.severity.value
    text = f"{head}: {phrase(f)} [{f.rule}]"
    if f.refs:
        text += f" parts: {', '.join(f.refs)};"
    if f.nets:
        text += f" nets: {', '.join(f.nets)};"
    if f.waived:
        text += f" reason: {f.waiver_reason or 'none given'}"
    return text.rstrip(";")


def _case(suite: ET.Element, classname: str, rule_id: str, found: list[Finding]) -> str:
    case = ET.SubElement(suite, "testcase", {"name": _x(rule_id), "classname": _x(classname), "time": "0"})
    live = [f for f in found if not f.waived]
    body = "\n".join(_x(_line(f)) for f in found)
    if live:
        worst = max(live, key=lambda f: f.severity.rank)
        more = f" (and {len(live) - 1} more)" if len(live) > 1 else ""
        fail = ET.SubElement(case, "failure", {"message": _x(phrase(worst) + more), "type": worst.severity.value})
        fail.text = body
        return "failed"
    if found:
        skip = ET.SubElement(case, "skipped", {"message": _x("waived: " + "; ".join(
            sorted({f.waiver_reason or "none given" for f in found})))})
        skip.text = body
        return "skipped"
    return "passed"


def _suite(parent: ET.Element, name: str, when: str) -> ET.Element:
    return ET.SubElement(parent, "testsuite", {"name": _x(name), "tests": "0", "failures": "0", "errors": "0",
                                               "skipped": "0", "time": "0", "timestamp": when})


def _tally(suite: ET.Element, outcomes: list[str]) -> None:
    suite.set("tests", str(len(outcomes)))
    suite.set("failures", str(outcomes.count("failed")))
    suite.set("skipped", str(outcomes.count("skipped")))


def render(audit: Audit, when: datetime | None = None) -> str:
    from ..checks import all_rules

    stamp = iso_date(when or run_date())
    rules = list(all_rules())
    design_name = os.path.basename(audit.design.path.rstrip("/")) or audit.design.path
    root = ET.Element("testsuites", {"name": _x(f"netaudit {design_name}"), "tests": "0", "failures": "0",
                                     "errors": "0", "skipped": "0", "time": "0"})
    every: list[str] = []
    placed: set[int] = set()
    for bus in audit.buses:
        for seg in bus.segments:
            name = seg.id if seg.id.startswith(bus.name) else f"{bus.name} {seg.id}"
            suite = _suite(root, name, stamp)
            outcomes = []
            for rule_id in rules:
                found = [f for f in audit.findings
                         if f.rule == rule_id and f.bus == bus.name and f.segment == seg.id]
                placed.update(id(f) for f in found)
                outcomes.append(_case(suite, name, rule_id, found))
            _tally(suite, outcomes)
            every += outcomes
    suite = _suite(root, DESIGN_SUITE, stamp)
    props = ET.SubElement(suite, "properties")
    for key, value in (("design", design_name), ("sha256", audit.design.sha256), ("title", audit.design.title),
                       ("revision", audit.design.revision), ("netaudit", __version__), ("mode", audit.mode)):
        ET.SubElement(props, "property", {"name": key, "value": _x(value)})
    outcomes = []
    for rule_id in rules:
        found = [f for f in audit.findings if f.rule == rule_id and id(f) not in placed]
        outcomes.append(_case(suite, DESIGN_SUITE, rule_id, found))
    _tally(suite, outcomes)
    every += outcomes
    _tally(root, every)
    ET.indent(root, space="  ")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
