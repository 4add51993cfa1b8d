"""SARIF 2.1.0 output, validated against the published OASIS SARIF 2.1.0 JSON schema as the
npm package @microsoft/jest-sarif ships it (fetched by scripts/fetch-sarif-schema into
build/sarif-schema/, never written by hand).

Invented data: the demo design (fixtures/demo) and a small hand-made design.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from datetime import datetime, timezone
from pathlib import Path

import jsonschema
import pytest
from handmade import markup_design

from netaudit.audit import audit, audit_design
from netaudit.checks import all_rules
from netaudit.config import Config
from netaudit.report import sarif
from netaudit.report.messages import phrase

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "fixtures" / "demo" / "greenhouse.net"
SCHEMA = REPO / "build" / "sarif-schema" / "sarif-2.1.0-rtm.5.json"
FETCH = REPO / "scripts" / "fetch-sarif-schema"
WHEN = datetime(2026, 3, 1, 12, 0, 0, tzinfo=timezone.utc)
HOSTILE = "/SDA<script>alert(1)</script>&\"quoted\""


@pytest.fixture(scope="module")
def validator():
    if not SCHEMA.is_file():
        if shutil.which("npm") is None:
            pytest.skip(f"SARIF 2.1.0 schema not fetched ({SCHEMA} missing) and npm is not installed to fetch "
                        "it; run scripts/fetch-sarif-schema where npm is available")
        proc = subprocess.run(["bash", str(FETCH)], capture_output=True, text=True, timeout=300, check=False)
        assert proc.returncode == 0 and SCHEMA.is_file(), f"scripts/fetch-sarif-schema failed: {proc.stderr}"
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    assert "SARIF" in schema.get("title", "") and "2.1.0" in schema.get("title", "")
    cls = jsonschema.validators.validator_for(schema)
    cls.check_schema(schema)
    return cls(schema, format_checker=cls.FORMAT_CHECKER)


def _errors(validator, doc) -> list[str]:
    return [f"{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in validator.iter_errors(doc)]


def _demo_doc():
    result = audit(DEMO)
    return result, json.loads(sarif.render(result, WHEN))


def _hostile():
    return audit_design(markup_design(HOSTILE, "SENSOR<img src=x onerror=alert(2)>"), Config.empty())


def test_demo_sarif_validates_against_the_published_schema(validator):
    _, doc = _demo_doc()
    assert _errors(validator, doc) == []
    assert doc["version"] == "2.1.0"


def test_hostile_design_sarif_validates_and_carries_no_raw_markup(validator):
    result = _hostile()
    text = sarif.render(result, WHEN)
    doc = json.loads(text)
    assert _errors(validator, doc) == []
    assert "<" not in text and ">" not in text and "&" not in text
    names = {loc["name"] for r in doc["runs"][0]["results"] for loc in r["locations"][0].get("logicalLocations", [])}
    assert any(f.nets for f in result.findings)
    assert {n for f in result.findings for n in f.nets} <= names


def test_every_finding_is_a_result_with_its_rule_level_and_sentence():
    result, doc = _demo_doc()
    run = doc["runs"][0]
    results = run["results"]
    assert len(results) == len(result.findings)
    levels = {"error": "error", "warning": "warning", "info": "note"}   # SARIF 2.1.0 result.level values
    rules = run["tool"]["driver"]["rules"]
    for f, r in zip(result.findings, results):
        assert r["ruleId"] == f.rule and rules[r["ruleIndex"]]["id"] == f.rule
        assert r["level"] == levels[f.severity.value]
        assert r["message"]["text"] == phrase(f)


def test_waived_findings_are_suppressed_with_the_waiver_reason():
    result, doc = _demo_doc()
    for f, r in zip(result.findings, doc["runs"][0]["results"]):
        if f.waived:
            assert r["suppressions"] == [{"kind": "external", "status": "accepted",
                                          "justification": f.waiver_reason}]
        else:
            assert "suppressions" not in r
    assert any(f.waived for f in result.findings)


def test_driver_lists_every_rule_with_its_documentation_and_default_level():
    _, doc = _demo_doc()
    driver = doc["runs"][0]["tool"]["driver"]
    assert driver["name"] == "netaudit" and driver["version"]
    table = all_rules()
    assert [r["id"] for r in driver["rules"]] == list(table)
    levels = {"error": "error", "warning": "warning", "info": "note"}
    for r in driver["rules"]:
        rule = table[r["id"]]
        assert r["shortDescription"]["text"].startswith(rule.summary)
        assert r["defaultConfiguration"]["level"] == levels[rule.severity.value]
        if "Fix:" in rule.doc:
            assert "Fix:" in r["help"]["text"]


def test_results_point_at_the_design_file_and_name_parts_and_nets():
    result, doc = _demo_doc()
    run = doc["runs"][0]
    assert run["artifacts"][0]["hashes"]["sha-256"] == result.design.sha256
    for f, r in zip(result.findings, run["results"]):
        loc = r["locations"][0]
        uri = loc["physicalLocation"]["artifactLocation"]["uri"]
        assert uri == run["artifacts"][0]["location"]["uri"] and not uri.startswith("/")
        logical = loc.get("logicalLocations", [])
        assert [x["name"] for x in logical if x["kind"] == "component"] == list(f.refs)
        assert [x["name"] for x in logical if x["kind"] == "net"] == list(f.nets)


def test_design_uri_is_relative_to_the_working_folder():
    assert sarif.design_uri("boards/my board.net", "/work") == "boards/my%20board.net"
    assert sarif.design_uri("/work/boards/a.net", "/work") == "boards/a.net"
    assert sarif.design_uri("/elsewhere/a.net", "/work") == "a.net"
    assert sarif.design_uri(os.path.join("x", "..", "a.net"), "/work") == "a.net"


def test_results_keep_a_stable_fingerprint_between_runs():
    _, first = _demo_doc()
    _, second = _demo_doc()
    prints = [r["partialFingerprints"] for r in first["runs"][0]["results"]]
    assert prints == [r["partialFingerprints"] for r in second["runs"][0]["results"]]
    assert len({p["netauditFinding/v1"] for p in prints}) == len(prints)


def test_the_schema_check_rejects_a_level_sarif_does_not_define(validator):
    _, doc = _demo_doc()
    doc["runs"][0]["results"][0]["level"] = "fatal"     # SARIF 2.1.0: none, note, warning, error
    assert _errors(validator, doc)
