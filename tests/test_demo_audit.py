"""The demo design's deliberate faults are found, and nothing else is said about them.

The fault table is fixtures/demo/faults.yaml (our own invented scenario, README.md there).
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from netaudit.audit import audit
from netaudit.checks import all_rules

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "demo"
FAULTS = yaml.safe_load((DEMO / "faults.yaml").read_text(encoding="utf-8"))
TRAPS = yaml.safe_load((DEMO / "not_expected.yaml").read_text(encoding="utf-8"))
RESULT = audit(DEMO / "greenhouse.net")
IMPLEMENTED = set(all_rules())


def _matches(f, row) -> bool:
    return (f.rule == row["rule"] and set(row.get("refs", [])) <= set(f.refs)
            and set(row.get("nets", [])) <= set(f.nets)
            and ("line" not in row or f.line == row["line"]))


def test_every_deliberate_fault_is_found():
    for row in FAULTS:
        assert row["rule"] in IMPLEMENTED, row
        hits = [f for f in RESULT.findings if _matches(f, row)]
        assert hits, row
        assert all(f.waived == bool(row.get("waived", False)) for f in hits), row


def test_no_finding_outside_the_fault_table():
    for f in RESULT.findings:
        assert any(_matches(f, row) for row in FAULTS), f


def test_no_trap_is_reported():
    for trap in TRAPS:
        for f in RESULT.findings:
            if f.rule == trap["rule"]:
                assert trap["refs"] and not set(trap["refs"]) <= set(f.refs), trap["why"]


def test_the_demo_config_is_the_one_used():
    assert RESULT.config_path is not None and RESULT.config_path.endswith("netaudit.yaml")
    assert {b.name for b in RESULT.buses} >= {"I2C_MAIN", "SOIL", "ROOF_LINK"}


def _one(rule, ref):
    hits = [f for f in RESULT.findings if f.rule == rule and ref in f.refs]
    assert len(hits) == 1, (rule, ref, hits)
    return hits[0]


def test_demo_budget_faults_carry_the_right_numbers():
    # ROOF_LINK, standard mode: R9 10 kΩ to +3V3; Cb = 250 pF declared cable (netaudit.yaml)
    # + one 10 pF device pin (UM10204 Rev. 6 Table 9, Ci max), no trace data.
    weak = _one("pullup-too-weak", "R9")
    assert weak.data["capacitance_farads"] == pytest.approx(260e-12)
    # Rise time = ln(7/3)·Rp·Cb = 0.8473 × 10 kΩ × 260 pF (UM10204 Rev. 6 §7.1) = 2.203 µs
    assert weak.data["rise_time_s"] == pytest.approx(0.8473 * 10e3 * 260e-12, rel=1e-4)
    assert weak.data["rise_time_max_s"] == pytest.approx(1000e-9)   # Standard-mode t_r, Table 10
    # Rp(max) = 1000 ns / (0.8473 × 260 pF) = 4.539 kΩ (Eq. 1)
    assert weak.data["rp_max_ohms"] == pytest.approx(1000e-9 / (0.8473 * 260e-12), rel=1e-4)
    strong = _one("pullup-too-strong", "R405")
    # Rp(min) = (3.3 V − 0.4 V) / 3 mA = 966.7 Ω (Eq. 2; VOL/IOL from Table 9)
    assert strong.data["rp_ohms"] == pytest.approx(470.0)
    assert strong.data["rp_min_ohms"] == pytest.approx(966.667, abs=1e-3)
    parallel = _one("pullup-parallel", "R3")
    assert parallel.data["equivalent_ohms"] == pytest.approx(1650.0)  # 3.3 kΩ ∥ 3.3 kΩ
