"""Buses, segments and pull-ups found on the real designs match what an engineer reads off them.

The oracle is tests/real/expected.yaml, written by reading each design's netlist and
schematics (the evidence is in tests/real/EXPECTATIONS.md), not by running this code.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from conftest import require_real
from netaudit.audit import audit_design
from netaudit.checks import all_rules
from netaudit.config import Config
from netaudit.readers import read_design

ORACLE = yaml.safe_load((Path(__file__).with_name("expected.yaml")).read_text(encoding="utf-8"))
DESIGNS = [d for d in ORACLE["designs"] if "folder" in d]


def _id(entry) -> str:
    return f"{entry['folder']}/{Path(entry['netlist']).name}" + ("-kicad5" if "legacy" in entry["netlist"] else "")


_AUDITS: dict[str, object] = {}


def _audit(entry):
    key = _id(entry)
    if key not in _AUDITS:
        folder = require_real(entry["folder"])
        _AUDITS[key] = audit_design(read_design(folder / entry["netlist"]), Config.empty())
    return _AUDITS[key]


def _key(sda, scl) -> tuple:
    return (tuple(sorted(sda)), tuple(sorted(scl)))


def _ambiguous_nets(entry) -> set[str]:
    return {n for a in entry.get("ambiguous", []) for n in a["nets"]}


def _ours(audit):
    return {_key(s.sda.nets, s.scl.nets): s for b in audit.buses for s in b.segments}


@pytest.mark.parametrize("entry", DESIGNS, ids=_id)
def test_segments_are_the_ones_an_engineer_reads_off_the_design(entry):
    ours = _ours(_audit(entry))
    expected = {_key(s["sda"], s["scl"]) for s in entry["segments"]}
    loose = _ambiguous_nets(entry)
    extra = {k for k in set(ours) - expected if not (set(k[0]) | set(k[1])) <= loose}
    assert expected - set(ours) == set(), "segments not found"
    assert extra == set(), "segments found that are not there"


@pytest.mark.parametrize("entry", DESIGNS, ids=_id)
def test_pullups_per_line_match_fitted_rails_and_not_fitted_candidates(entry):
    ours = _ours(_audit(entry))
    for exp in entry["segments"]:
        seg = ours.get(_key(exp["sda"], exp["scl"]))
        if seg is None:
            pytest.fail(f"segment {exp['sda']} missing")
        for signal in ("sda", "scl"):
            line = getattr(seg, signal)
            fitted = sorted(p.ref for p in line.fitted_pullups)
            assert fitted == sorted(exp["pullups"][signal]), (exp["sda"], signal)
            rails = {p.rail for p in line.fitted_pullups}
            want = exp["pullup_rail"][signal]
            assert rails == ({want} if want else set()), (exp["sda"], signal)
            not_fitted = sorted(p.ref for p in line.pullups if not p.fitted)
            assert not_fitted == sorted(exp["not_fitted_pullups"][signal]), (exp["sda"], signal)
            series = sorted(s.ref for s in line.series if s.fitted)
            assert series == sorted(exp["series"][signal]), (exp["sda"], signal)


@pytest.mark.parametrize("entry", DESIGNS, ids=_id)
def test_devices_connectors_and_upstream_match(entry):
    ours = _ours(_audit(entry))
    for exp in entry["segments"]:
        seg = ours[_key(exp["sda"], exp["scl"])]
        devices = sorted(d.ref for d in seg.devices if d.role != "connector")
        connectors = sorted(d.ref for d in seg.devices if d.role == "connector")
        assert devices == sorted(exp["devices"]), exp["sda"]
        assert connectors == sorted(exp["connectors"]), exp["sda"]
        up = exp["upstream"]
        if up is None:
            assert seg.upstream is None, exp["sda"]
        else:
            assert (seg.upstream.ref, seg.upstream.kind) == (up["ref"], up["kind"]), exp["sda"]
            if up["kind"] == "mux":
                assert seg.upstream.channel == str(up["channel"]), exp["sda"]


def _matches(f, want) -> bool:
    if f.rule != want["rule"]:
        return False
    if "line" in want and f.line != want["line"]:
        return False
    if "nets" in want and not set(want["nets"]) <= set(f.nets):
        return False
    return not ("refs" in want and not set(want["refs"]) <= set(f.refs))


@pytest.mark.parametrize("entry", DESIGNS, ids=_id)
def test_expected_findings_are_reported(entry):
    rules = all_rules()
    audit = _audit(entry)
    for want in entry.get("expected_rules", []):
        assert want["rule"] in rules, want
        assert any(_matches(f, want) for f in audit.findings), want


@pytest.mark.parametrize("entry", DESIGNS, ids=_id)
def test_findings_an_engineer_would_call_wrong_are_absent(entry):
    audit = _audit(entry)
    for bad in entry.get("must_not_report", []):
        hits = [f for f in audit.findings if f.rule == bad["rule"] and
                (not bad.get("refs") or set(bad["refs"]) & set(f.refs)) and
                (not bad.get("nets") or set(bad["nets"]) & set(f.nets))]
        assert hits == [], bad["why"]
