"""Voltage rules on small hand-made designs: rail-overvoltage, rail-high-level-unmet,
rail-voltage-unknown and translator-wiring, each with a case found and a case not found.

Check values and their sources:
- V_IH(min) = 0.7·VDD, V_IL(max) = 0.3·VDD: UM10204 Rev. 6 §3.1.2 and Table 9.
- V_IH(max) = min(VDD + 0.5 V, 5.5 V): UM10204 Rev. 6 Table 9 note [2].
- SMBus 2.0 V_IL 0.8 V / V_IH 2.1 V: NXP AN4471 Table 2 (quoting SMBus 2.0 Table 2),
  UM10204 Rev. 6 §4.2.1; SMBus 3.0 V_IH 1.35 V: Microchip MCU datasheet Table 39-7.
- Discrete shifter: NXP AN10441 §2.1 (gate to the lower supply, source on the low-voltage
  side, drain on the high-voltage side, pull-ups on both sides).
The designs are invented.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from handmade import build, fet, ic, res

from netaudit.audit import audit, audit_design
from netaudit.checks import all_rules
from netaudit.checks.voltage import vih_max_v
from netaudit.config import Config, parse_config
from netaudit.model import Part, Pin
from netaudit.report.messages import phrase
from netaudit.results import Severity

VOLTAGE_RULES = ("rail-overvoltage", "rail-high-level-unmet", "rail-voltage-unknown", "translator-wiring")


def of(a, rule_id, ref=None):
    return [f for f in a.findings if f.rule == rule_id and (ref is None or ref in f.refs)]


def voltage_findings(a):
    return [f for f in a.findings if f.rule in VOLTAGE_RULES]


def pair(dev_rail, pu_rail, *, scl_rail=None, volts=None, extra_yaml="", mode=None):
    """Controller U1 supplied from the pull-up rail, target U2 supplied from ``dev_rail``;
    R1 pulls SDA and R2 pulls SCL to ``pu_rail`` (SCL to ``scl_rail`` when given).
    ``volts`` names rails of any voltage in netaudit.yaml."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), res("R1", "4k7"), res("R2", "4k7")]
    nets = {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
            "GND": ["U1.GND", "U2.GND"]}
    for net, node in ((pu_rail, "U1.VDD"), (pu_rail, "R1.2"), (scl_rail or pu_rail, "R2.2"), (dev_rail, "U2.VDD")):
        nets.setdefault(net, []).append(node)
    text = "version: 1\n"
    if volts:
        text += "rails:\n" + "".join(f"  {k}: {v}\n" for k, v in volts.items())
    cfg = parse_config(text + extra_yaml)
    return audit_design(build(parts, nets), cfg, mode)


def tolerant(volts: float) -> str:
    return f"parts:\n  - match: {{ref: U2}}\n    tolerant_volts: {volts}\n"


def test_rules_have_their_contract_severities():
    rules = all_rules()
    assert rules["rail-overvoltage"].severity is Severity.ERROR       # CONTRACT.md rules table
    assert rules["rail-high-level-unmet"].severity is Severity.ERROR
    assert rules["rail-voltage-unknown"].severity is Severity.INFO
    assert rules["translator-wiring"].severity is Severity.ERROR
    for rid in VOLTAGE_RULES:
        doc = rules[rid].doc
        assert all(word in doc for word in ("What:", "Why:", "Fix:", "Source:")), rid


# -- rail-overvoltage ------------------------------------------------------------------

def test_vih_max_is_half_a_volt_above_vdd_but_never_above_5v5():
    # UM10204 Rev. 6 Table 9 note [2]: VDD(max) + 0.5 V or 5.5 V, whichever is lower.
    assert vih_max_v(1.8) == pytest.approx(2.3)
    assert vih_max_v(3.3) == pytest.approx(3.8)
    assert vih_max_v(5.0) == pytest.approx(5.5)
    assert vih_max_v(5.2) == pytest.approx(5.5)


def test_1v8_sensor_on_3v3_pullups_is_over_voltage():
    a = pair("+1V8", "+3V3")
    (f,) = of(a, "rail-overvoltage")
    assert f.refs == ("U2",) and f.severity is Severity.ERROR
    assert f.line is None and set(f.nets) == {"/SDA", "/SCL"}        # both lines pulled too high
    assert f.data["io_volts"] == 1.8 and f.data["pullup_volts"] == 3.3
    assert f.data["limit_volts"] == pytest.approx(2.3)               # 1.8 V + 0.5 V
    assert "2.3 V" in phrase(f) and "U2" in phrase(f)


def test_1v8_sensor_on_1v8_pullups_is_not_over_voltage():
    assert of(pair("+1V8", "+1V8"), "rail-overvoltage") == []


def test_only_the_line_pulled_too_high_is_named():
    (f,) = of(pair("+1V8", "+3V3", scl_rail="+1V8"), "rail-overvoltage")
    assert f.line == "sda" and f.nets == ("/SDA",)


def test_pullup_level_at_vih_max_passes_and_above_it_fails():
    # 3.3 V device: V_IH(max) = 3.8 V (UM10204 Rev. 6 Table 9 note [2]).
    assert of(pair("+3V3", "VPU", volts={"VPU": 3.8}), "rail-overvoltage") == []
    (f,) = of(pair("+3V3", "VPU", volts={"VPU": 3.9}), "rail-overvoltage")
    assert f.data["limit_volts"] == pytest.approx(3.8)


def test_limit_is_capped_at_5v5():
    # A 5.2 V device: VDD + 0.5 V = 5.7 V, capped at 5.5 V (UM10204 Rev. 6 Table 9 note [2]).
    got = {f.refs: f for f in of(pair("VDEV", "VPU", volts={"VDEV": 5.2, "VPU": 5.6}), "rail-overvoltage")}
    assert got[("U2",)].data["limit_volts"] == pytest.approx(5.5)


def test_3v3_part_on_5v_pullups_is_over_voltage_unless_declared_tolerant():
    (f,) = of(pair("+3V3", "+5V"), "rail-overvoltage")
    assert f.data["limit_volts"] == pytest.approx(3.8)
    assert of(pair("+3V3", "+5V", extra_yaml=tolerant(5.5)), "rail-overvoltage") == []


def test_1v8_sensor_declared_5v_tolerant_is_not_over_voltage():
    assert of(pair("+1V8", "+3V3", extra_yaml=tolerant(5.5)), "rail-overvoltage") == []


def test_declared_tolerance_below_the_pullup_level_still_fails():
    (f,) = of(pair("+1V8", "+3V3", extra_yaml=tolerant(3.0)), "rail-overvoltage")
    assert f.data["limit_volts"] == 3.0 and f.data["limit_source"] == "tolerant_volts"


# -- rail-high-level-unmet ---------------------------------------------------------------

def test_5v_part_on_3v3_pullups_misses_the_high_level():
    a = pair("+5V", "+3V3")
    (f,) = of(a, "rail-high-level-unmet")
    assert f.refs == ("U2",) and f.severity is Severity.ERROR
    assert f.data["vih_min_volts"] == pytest.approx(3.5)    # 0.7 × 5 V
    assert f.data["vil_max_volts"] == pytest.approx(1.5)    # 0.3 × 5 V
    assert f.data["reads_as"] == "undefined"                # 3.3 V is between V_IL and V_IH
    assert of(a, "rail-overvoltage") == []
    assert "3.5 V" in phrase(f)


def test_pullup_level_at_0_7_vdd_meets_the_high_level():
    assert of(pair("+5V", "VPU", volts={"VPU": 3.5}), "rail-high-level-unmet") == []
    assert len(of(pair("+5V", "VPU", volts={"VPU": 3.4}), "rail-high-level-unmet")) == 1


def test_pullup_below_vil_is_read_as_low():
    (f,) = of(pair("+5V", "VPU", volts={"VPU": 1.2}), "rail-high-level-unmet")
    assert f.data["reads_as"] == "low"                      # 1.2 V ≤ 0.3 × 5 V
    assert "LOW" in phrase(f)


def test_smbus_2_levels_are_fixed_at_2v1():
    # In SMBus mode a 5 V device needs 2.1 V, not 0.7 × 5 V (AN4471 Table 2).
    # (The controller U1, supplied from the pull-up rail, needs 2.1 V as well.)
    assert of(pair("+5V", "+3V3", mode="smbus"), "rail-high-level-unmet") == []
    (f,) = of(pair("+5V", "VPU", volts={"VPU": 2.0}, mode="smbus"), "rail-high-level-unmet", "U2")
    assert f.data["vih_min_volts"] == pytest.approx(2.1)
    assert f.data["vil_max_volts"] == pytest.approx(0.8)


@pytest.mark.parametrize("mode", ["smbus-400k", "smbus-1m"])
def test_smbus_3_levels_are_fixed_at_1v35(mode):
    # SMBus 3.0 V_IH 1.35 V (Microchip datasheet Table 39-7).
    assert of(pair("+5V", "VPU", volts={"VPU": 1.4}, mode=mode), "rail-high-level-unmet") == []
    (f,) = of(pair("+5V", "VPU", volts={"VPU": 1.3}, mode=mode), "rail-high-level-unmet", "U2")
    assert f.data["vih_min_volts"] == pytest.approx(1.35)


# -- which devices are judged ------------------------------------------------------------

def mux_board(mux_rail="+3V3", up_rail="+3V3"):
    """Controller U1 and mux U2 upstream, pulled to ``up_rail``; channel 0 with a 5 V
    target U3 pulled to +5V."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "MUX", ["SDA", "SCL", "SD0", "SC0", "SD1", "SC1", "VCC", "GND"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"])] + [res(f"R{i}", "4k7") for i in range(1, 5)]
    nets = {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
            "/CH0_SDA": ["U2.SD0", "U3.SDA", "R3.1"], "/CH0_SCL": ["U2.SC0", "U3.SCL", "R4.1"],
            "+5V": ["U3.VDD", "R3.2", "R4.2"], "GND": ["U1.GND", "U2.GND", "U3.GND"]}
    for net, node in ((up_rail, "U1.VDD"), (up_rail, "R1.2"), (up_rail, "R2.2"), (mux_rail, "U2.VCC")):
        nets.setdefault(net, []).append(node)
    return audit_design(build(parts, nets), Config.empty())


def test_mux_is_not_judged_on_its_channel_side():
    # The channel's pass gates carry the channel's own level; the 3.3 V mux is not over-volted
    # by the channel's 5 V pull-ups, and the 5 V target there sees its own level.
    assert voltage_findings(mux_board()) == []


def test_mux_is_judged_on_its_upstream_side():
    (f,) = of(mux_board(mux_rail="+1V8"), "rail-overvoltage")
    assert f.refs == ("U2",) and f.segment == mux_board(mux_rail="+1V8").buses[0].segments[0].id


def test_pullup_to_a_rail_of_unknown_voltage_is_reported_and_not_judged():
    # VPULL carries a power pin (regulator U9's output) but no voltage in its name.
    reg = Part("U9", "LDO", lib="Handmade", lib_part="LDO",
               pins=(Pin("1", "VIN", "power_in"), Pin("2", "GND", "power_in"), Pin("3", "VOUT", "power_out")))
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), res("R1", "4k7"), res("R2", "4k7"), reg]
    d = build(parts, {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
                      "+1V8": ["U1.VDD", "U2.VDD"], "VPULL": ["R1.2", "R2.2", "U9.VOUT"],
                      "+5V": ["U9.VIN"], "GND": ["U1.GND", "U2.GND", "U9.GND"]})
    a = audit_design(d, Config.empty())
    (f,) = of(a, "rail-voltage-unknown")
    assert f.severity is Severity.INFO and f.data["rail"] == "VPULL" and set(f.refs) == {"R1", "R2"}
    assert f.data["config_hint"] == "rails:\n  VPULL: <volts>" and "VPULL" in phrase(f)
    assert of(a, "rail-overvoltage") == [] and of(a, "rail-high-level-unmet") == []
    named = audit_design(d, parse_config("version: 1\nrails:\n  VPULL: 3.3\n"))
    assert of(named, "rail-voltage-unknown") == []
    assert [g.refs for g in of(named, "rail-overvoltage")] == [("U1",), ("U2",)]   # 3.3 V > 1.8 + 0.5 V


def test_pullup_to_a_signal_gives_no_voltage_finding():
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND", "PA3"], pins_total=48),
             ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), res("R1", "4k7"), res("R2", "4k7")]
    d = build(parts, {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
                      "/PU_EN": ["U1.PA3", "R1.2", "R2.2"], "+3V3": ["U1.VDD", "U2.VDD"],
                      "GND": ["U1.GND", "U2.GND"]})
    a = audit_design(d, Config.empty())
    assert voltage_findings(a) == [] and of(a, "pullup-to-signal")


# -- translator-wiring: integrated parts ---------------------------------------------------

def pca9306(vref1="+1V8", vref2_feed="+3V3", side1_rail="+1V8", side2_rail="+3V3", vref2_open=False):
    """PCA9306-style U2: controller U1 on side 1, sensor U3 on side 2; VREF2 and EN reach
    ``vref2_feed`` through 200 kΩ R5 (the part's reference circuit)."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "PCA9306", ["GND", "VREF1", "SCL1", "SDA1", "SDA2", "SCL2", "EN", "VREF2"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             res("R1", "2k2"), res("R2", "2k2"), res("R3", "4k7"), res("R4", "4k7"), res("R5", "200k")]
    nets = {"/SDA_A": ["U1.SDA", "U2.SDA1", "R1.1"], "/SCL_A": ["U1.SCL", "U2.SCL1", "R2.1"],
            "/SDA_B": ["U2.SDA2", "U3.SDA", "R3.1"], "/SCL_B": ["U2.SCL2", "U3.SCL", "R4.1"],
            "GND": ["U1.GND", "U2.GND", "U3.GND"], "/EN": ["U2.EN", "R5.1"]}
    if not vref2_open:
        nets["/EN"].append("U2.VREF2")
    for net, node in ((side1_rail, "U1.VDD"), (side1_rail, "R1.2"), (side1_rail, "R2.2"), (vref1, "U2.VREF1"),
                      (side2_rail, "U3.VDD"), (side2_rail, "R3.2"), (side2_rail, "R4.2"), (vref2_feed, "R5.2")):
        nets.setdefault(net, []).append(node)
    return audit_design(build(parts, nets), Config.empty())


def test_translator_wired_as_its_reference_circuit_passes():
    a = pca9306()
    assert len(a.buses[0].segments) == 2
    assert voltage_findings(a) == []


def test_translator_with_its_references_reversed_is_caught():
    # VREF1 on the 3.3 V side and VREF2 on the 1.8 V side: side 1 must be the lower.
    a = pca9306(vref1="+3V3", vref2_feed="+1V8", side1_rail="+3V3", side2_rail="+1V8")
    (f,) = of(a, "translator-wiring")
    assert f.refs == ("U2",) and f.data["problem"] == "sides-reversed"
    assert (f.data["low_side"], f.data["low_side_volts"], f.data["high_side_volts"]) == ("1", 3.3, 1.8)
    assert "must be the lower" in phrase(f)


def test_translator_side_pulled_to_another_rail_than_its_supply_is_caught():
    # Side 2 pulled to +5V while its reference reaches +3V3.
    a = pca9306(side2_rail="+5V")
    (f,) = of(a, "translator-wiring")
    assert (f.data["problem"], f.data["side"], f.data["pullup_rail"]) == ("side-pullup-rail", "2", "+5V")
    assert f.data["supply_volts"] == 3.3


def test_translator_side_without_supply_is_caught():
    a = pca9306(vref2_open=True)
    (f,) = of(a, "translator-wiring")
    assert (f.data["problem"], f.data["side"]) == ("side-unpowered", "2")


def test_translator_side_without_pullups_is_pullup_missing_not_wiring():
    # Like fpga-som-carrier's PCA9306: pull-ups on the controller side live elsewhere.
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "PCA9306", ["GND", "VREF1", "SCL1", "SDA1", "SDA2", "SCL2", "EN", "VREF2"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), res("R3", "4k7"), res("R4", "4k7")]
    d = build(parts, {"/SDA_A": ["U1.SDA", "U2.SDA1"], "/SCL_A": ["U1.SCL", "U2.SCL1"],
                      "/SDA_B": ["U2.SDA2", "U3.SDA", "R3.1"], "/SCL_B": ["U2.SCL2", "U3.SCL", "R4.1"],
                      "+1V8": ["U1.VDD", "U2.VREF1"], "+3V3": ["U2.VREF2", "U2.EN", "U3.VDD", "R3.2", "R4.2"],
                      "GND": ["U1.GND", "U2.GND", "U3.GND"]})
    a = audit_design(d, Config.empty())
    assert len(of(a, "pullup-missing")) == 2 and of(a, "translator-wiring") == []


def buffer_ab(vcc_b="+5V"):
    """PCA9517-style buffer with pins SDAA/SCLA, SDAB/SCLB and supplies V_{CC(A)}, V_{CC(B)}."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "BUF", ["V_{CC(A)}", "SCLA", "SDAA", "GND", "EN", "SDAB", "SCLB", "V_{CC(B)}"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"])] + [res(f"R{i}", "2k") for i in range(1, 5)]
    nets = {"/SDA": ["U1.SDA", "U2.SDAA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCLA", "R2.1"],
            "/SDA_5V": ["U2.SDAB", "U3.SDA", "R3.1"], "/SCL_5V": ["U2.SCLB", "U3.SCL", "R4.1"],
            "+3V3": ["U1.VDD", "U2.V_{CC(A)}", "R1.2", "R2.2"], "+5V": ["U2.EN", "U3.VDD", "R3.2", "R4.2"],
            "GND": ["U1.GND", "U2.GND", "U3.GND"]}
    nets.setdefault(vcc_b, []).append("U2.V_{CC(B)}")
    return audit_design(build(parts, nets), Config.empty())


def test_buffer_sides_are_read_from_lettered_supply_pins():
    a = buffer_ab()
    rails = {s.id: next(d.io_rail for d in s.devices if d.ref == "U2") for s in a.buses[0].segments}
    assert sorted(rails.values()) == ["+3V3", "+5V"]
    assert voltage_findings(a) == []


def test_buffer_side_supplied_from_the_wrong_rail_is_caught():
    a = buffer_ab(vcc_b="+3V3")
    (f,) = of(a, "translator-wiring")
    assert (f.data["problem"], f.data["side"], f.data["supply_pin"]) == ("side-pullup-rail", "B", "V_{CC(B)}")


# -- translator-wiring: the discrete shifter of AN10441 §2.1 -----------------------------

def shifter(gate="+1V8", swap_q1=False, low_rail="+1V8", high_rail="+3V3", high_pullups=True):
    """U1 (1.8 V) on the low side, U3 (3.3 V) on the high side, one BSS138 per line."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND", "PA0"], pins_total=48),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), fet("Q1"), fet("Q2"),
             res("R1", "4k7"), res("R2", "4k7"), res("R3", "4k7"), res("R4", "4k7")]
    s1, d1 = ("Q1.D", "Q1.S") if swap_q1 else ("Q1.S", "Q1.D")
    nets = {"/SDA_LV": ["U1.SDA", s1, "R1.1"], "/SCL_LV": ["U1.SCL", "Q2.S", "R2.1"],
            "/SDA_HV": [d1, "U3.SDA"], "/SCL_HV": ["Q2.D", "U3.SCL"],
            "+1V8": ["U1.VDD"], "+3V3": ["U3.VDD"], "GND": ["U1.GND", "U3.GND"], "/PA0": ["U1.PA0"]}
    nets.setdefault(low_rail, []).extend(["R1.2", "R2.2"])
    if high_pullups:
        nets["/SDA_HV"].append("R3.1")
        nets["/SCL_HV"].append("R4.1")
        nets.setdefault(high_rail, []).extend(["R3.2", "R4.2"])
    nets[gate].extend(["Q1.G", "Q2.G"])
    return audit_design(build(parts, nets), Config.empty())


def test_shifter_wired_as_an10441_passes():
    a = shifter()
    assert [len(s.devices) for s in a.buses[0].segments] == [3, 3]     # U1 or U3 plus Q1, Q2
    assert voltage_findings(a) == []


def test_shifter_with_gates_on_the_higher_rail_is_caught():
    got = of(shifter(gate="+3V3"), "translator-wiring")
    assert sorted(f.refs for f in got) == [("Q1",), ("Q2",)]
    assert {f.data["problem"] for f in got} == {"gate-not-lower-rail"}
    assert all(f.data["gate_volts"] == 3.3 and f.data["low_volts"] == 1.8 for f in got)


def test_shifter_fet_with_source_and_drain_swapped_is_caught():
    got = of(shifter(swap_q1=True), "translator-wiring")
    assert [(f.refs, f.data["problem"]) for f in got] == [(("Q1",), "source-drain-reversed")]
    assert "reversed" in phrase(got[0])


def test_shifter_with_high_side_below_low_side_is_caught():
    # Pull-ups swapped: the drain side sits at 1.8 V, the source side at 3.3 V.
    got = of(shifter(gate="+1V8", low_rail="+3V3", high_rail="+1V8"), "translator-wiring")
    assert sorted((f.refs, f.data["problem"]) for f in got) == [
        (("Q1",), "source-drain-reversed"), (("Q2",), "source-drain-reversed")]


def test_shifter_side_without_pullups_is_caught_as_pullup_missing():
    a = shifter(high_pullups=False)
    missing = of(a, "pullup-missing")
    assert sorted(f.nets for f in missing) == [("/SCL_HV",), ("/SDA_HV",)]
    assert of(a, "translator-wiring") == []


def test_shifter_gate_on_a_signal_is_caught():
    got = of(shifter(gate="/PA0"), "translator-wiring")
    assert {f.data["problem"] for f in got} == {"gate-not-on-rail"} and len(got) == 2


# -- the demo design -----------------------------------------------------------------------

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "demo" / "greenhouse.net"


def test_demo_voltage_faults_carry_their_numbers():
    a = audit(DEMO)
    (over,) = of(a, "rail-overvoltage")
    # U8 BME280: VDDIO on +1V8, SDA pulled to +3V3 by R6; limit 1.8 V + 0.5 V.
    assert (over.refs, over.line, over.data["io_rail"]) == (("U8",), "sda", "+1V8")
    assert over.data["pullup_volts"] == 3.3 and over.data["limit_volts"] == pytest.approx(2.3)
    (high,) = of(a, "rail-high-level-unmet")
    # U9 MCP23017 on +5V: V_IH = 0.7 × 5 V = 3.5 V above the 3.3 V pull-ups.
    assert (high.refs, high.data["io_rail"]) == (("U9",), "+5V")
    assert high.data["vih_min_volts"] == pytest.approx(3.5) and high.data["pullup_volts"] == 3.3
    assert of(a, "translator-wiring") == [] and of(a, "rail-voltage-unknown") == []
