"""Wiring rules on small hand-made designs: one case that must be found, one that must not.

Rules (CONTRACT.md, rules table): bus-line-unpaired, bus-lines-swapped, bus-pin-unconnected,
bus-lone-device. The designs are invented; each is the smallest board that shows the fault.
"""

from __future__ import annotations

from handmade import build, ic, res

from netaudit.audit import audit_design
from netaudit.config import Config
from netaudit.results import Severity

# The rules of issues 3 and 4 (wiring, pull-ups, budget); later rule families (rail
# voltages, addresses) may add their own findings to the same boards.
BUS_AND_BUDGET_RULES = frozenset({
    "bus-line-unpaired", "bus-lines-swapped", "bus-pin-unconnected", "bus-lone-device",
    "pullup-missing", "pullup-duplicated", "pullup-parallel", "pullup-rail-mismatch",
    "pullup-to-signal", "pullup-too-strong", "pullup-too-weak", "capacitance-over-limit",
    "low-level-margin",
})


def mcu(pins=("SDA", "SCL", "VDD", "GND")):
    # 48 pins: processor-sized, so the bus has a controller (common practice, no source).
    return ic("U1", "MCU", list(pins), pins_total=48)


def sensor(ref="U2", pins=("SDA", "SCL", "VDD", "GND")):
    return ic(ref, "SENSOR", list(pins))


def findings(design, rule_id):
    return [f for f in audit_design(design, Config.empty()).findings if f.rule == rule_id]


def good_bus():
    """Controller and one target, 4.7 kΩ pull-ups to +3V3: nothing wrong with the wiring."""
    return build(
        [mcu(), sensor(), res("R1", "4k7"), res("R2", "4k7")],
        {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
         "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]})


# -- bus-line-unpaired ---------------------------------------------------------------

def test_data_line_without_clock_is_unpaired():
    # A data line with two devices and a pull-up, and no clock line anywhere.
    d = build(
        [mcu(("SDA", "VDD", "GND")), sensor(pins=("SDA", "VDD", "GND")), res("R1", "4k7")],
        {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "+3V3": ["U1.VDD", "U2.VDD", "R1.2"],
         "GND": ["U1.GND", "U2.GND"]})
    (f,) = findings(d, "bus-line-unpaired")
    assert f.severity is Severity.WARNING          # CONTRACT.md default severity
    assert f.line == "sda" and f.nets == ("/SDA",)
    assert f.refs == ("U1", "U2")


def test_paired_lines_are_not_unpaired():
    assert findings(good_bus(), "bus-line-unpaired") == []


# -- bus-lines-swapped ---------------------------------------------------------------

def swapped_design():
    """U3's SDA pin is wired to /SCL and its SCL pin to /SDA; U1 and U2 are right."""
    return build(
        [mcu(), sensor(), sensor("U3"), res("R1", "4k7"), res("R2", "4k7")],
        {"/SDA": ["U1.SDA", "U2.SDA", "U3.SCL", "R1.1"],
         "/SCL": ["U1.SCL", "U2.SCL", "U3.SDA", "R2.1"],
         "+3V3": ["U1.VDD", "U2.VDD", "U3.VDD", "R1.2", "R2.2"],
         "GND": ["U1.GND", "U2.GND", "U3.GND"]})


def test_crossed_device_is_swapped_on_both_lines():
    got = findings(swapped_design(), "bus-lines-swapped")
    assert {(f.refs, f.line, f.data["pin_function"]) for f in got} == {
        (("U3",), "scl", "SDA"), (("U3",), "sda", "SCL")}
    assert all(f.severity is Severity.ERROR for f in got)   # CONTRACT.md default severity


def test_swapped_finding_names_the_line_it_sits_on():
    got = {f.line: f for f in findings(swapped_design(), "bus-lines-swapped")}
    assert got["scl"].nets == ("/SCL",) and got["sda"].nets == ("/SDA",)


def test_straight_wiring_is_not_swapped():
    assert findings(good_bus(), "bus-lines-swapped") == []


# -- bus-pin-unconnected -------------------------------------------------------------

def test_device_sda_pin_on_no_net_is_unconnected():
    # U3 is on the clock line but its SDA pin is left off every net.
    d = build(
        [mcu(), sensor(), sensor("U3"), res("R1", "4k7"), res("R2", "4k7")],
        {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "U3.SCL", "R2.1"],
         "+3V3": ["U1.VDD", "U2.VDD", "U3.VDD", "R1.2", "R2.2"],
         "GND": ["U1.GND", "U2.GND", "U3.GND"]})
    (f,) = findings(d, "bus-pin-unconnected")
    assert f.refs == ("U3",) and f.line == "sda"
    assert f.data["pin_function"] == "SDA"
    assert f.severity is Severity.WARNING          # CONTRACT.md default severity


def test_pin_alone_on_its_net_is_unconnected():
    # KiCad names a net holding a single pin "unconnected-(REF-PIN-PadN)".
    d = build(
        [mcu(), sensor(), sensor("U3"), res("R1", "4k7"), res("R2", "4k7")],
        {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "U3.SCL", "R2.1"],
         "unconnected-(U3-SDA-Pad1)": ["U3.SDA"],
         "+3V3": ["U1.VDD", "U2.VDD", "U3.VDD", "R1.2", "R2.2"],
         "GND": ["U1.GND", "U2.GND", "U3.GND"]})
    assert [f.refs for f in findings(d, "bus-pin-unconnected")] == [("U3",)]


def test_connected_pins_are_not_unconnected():
    assert findings(good_bus(), "bus-pin-unconnected") == []


def test_unused_multi_function_pins_are_not_unconnected():
    # A processor's PB7/SDA and PB6/SCL left open are unused port pins; the rule is for
    # pins named plainly SDA or SCL (rule docstring). Nothing else is on the board.
    d = build([mcu(("PB7/SDA", "PB6/SCL", "VDD", "GND"))],
              {"/PB7": ["U1.PB7/SDA"], "/PB6": ["U1.PB6/SCL"], "+3V3": ["U1.VDD"], "GND": ["U1.GND"]})
    assert findings(d, "bus-pin-unconnected") == []


def test_unused_numbered_controller_port_is_not_unconnected():
    # I2C1_SDA / I2C1_SCL of a second controller port left open: normal (rule docstring).
    d = build(
        [mcu(("SDA", "SCL", "I2C1_SDA", "I2C1_SCL", "VDD", "GND")), sensor(),
         res("R1", "4k7"), res("R2", "4k7")],
        {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
         "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]})
    assert findings(d, "bus-pin-unconnected") == []


# -- bus-lone-device -----------------------------------------------------------------

def test_segment_with_one_device_is_reported():
    d = build(
        [mcu(), res("R1", "4k7"), res("R2", "4k7")],
        {"/SDA": ["U1.SDA", "R1.1"], "/SCL": ["U1.SCL", "R2.1"],
         "+3V3": ["U1.VDD", "R1.2", "R2.2"], "GND": ["U1.GND"]})
    (f,) = findings(d, "bus-lone-device")
    assert f.refs == ("U1",) and f.nets == ("/SCL", "/SDA")
    assert f.severity is Severity.INFO             # CONTRACT.md default severity


def test_segment_with_two_devices_is_not_lone():
    assert findings(good_bus(), "bus-lone-device") == []


def test_good_bus_has_no_findings_at_all():
    # 4.7 kΩ to 3.3 V with 20 pF of pins: inside 966.7 Ω (UM10204 Rev. 6 §7.1 Eq. 2)
    # and Rp(max) 300 ns / (0.8473 · 20 pF) = 17.7 kΩ (Eq. 1, t_r from Rev. 6 Table 10).
    found = audit_design(good_bus(), Config.empty()).findings
    assert [f for f in found if f.rule in BUS_AND_BUDGET_RULES] == []
