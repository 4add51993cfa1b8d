"""Voltage domains on small hand-made designs: which rail supplies each device's I/O,
which rails are switched, and how both reach the reports.

The designs are invented; the pin names (VDDIO, VREF1/VREF2, VCCIO_n, VBUS, ON/VOUT)
are the spellings such parts use (common practice, no source).
"""

from __future__ import annotations

import json

from handmade import build, ic, res

from netaudit.audit import audit_design
from netaudit.config import Config, parse_config
from netaudit.model import Part, Pin
from netaudit.report.json import render as render_json
from netaudit.report.text import render as render_text


def part(ref, value, pins, pins_total=0):
    """A part with explicit (name, electrical type) pins."""
    out = [Pin(str(i + 1), name, kind) for i, (name, kind) in enumerate(pins)]
    out += [Pin(str(i + 1), f"NC{i + 1}", "no_connect") for i in range(len(out), pins_total)]
    return Part(ref, value, lib="Handmade", lib_part=value, pins=tuple(out))


def mcu():
    return ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48)


def run(target, nets, *, extra=(), config=None):
    """Controller U1 on +3V3 and target ``target`` on /SDA, /SCL with 4.7 kΩ pull-ups to
    +3V3; ``nets`` adds the target's supply nets."""
    parts = [mcu(), target, res("R1", "4k7"), res("R2", "4k7"), *extra]
    all_nets = {"/SDA": ["U1.SDA", f"{target.ref}.SDA", "R1.1"], "/SCL": ["U1.SCL", f"{target.ref}.SCL", "R2.1"],
                "+3V3": ["U1.VDD", "R1.2", "R2.2"], "GND": ["U1.GND"]}
    for name, members in nets.items():
        all_nets[name] = all_nets.get(name, []) + members
    return audit_design(build(parts, all_nets), config or Config.empty())


def device(audit, ref, segment=0):
    return next(d for d in audit.buses[0].segments[segment].devices if d.ref == ref)


def unknown(audit):
    return [f for f in audit.findings if f.rule == "rail-voltage-unknown"]


# -- which pin supplies the I/O ------------------------------------------------------

def test_io_supply_pin_is_preferred_over_the_core_supply():
    # A sensor with its core on +3V3 and its interface on VDDIO = +1V8.
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "VDDIO", "GND"]),
            {"+3V3": ["U2.VDD"], "+1V8": ["U2.VDDIO"], "GND": ["U2.GND"]})
    d = device(a, "U2")
    assert (d.io_rail, d.io_volts) == ("+1V8", 1.8)


def test_configured_io_supply_pin_wins():
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "VDDIO", "GND"]),
            {"+3V3": ["U2.VDD"], "+1V8": ["U2.VDDIO"], "GND": ["U2.GND"]},
            config=parse_config("version: 1\nparts:\n  - match: {ref: U2}\n    io_supply_pin: VDD\n"))
    assert (device(a, "U2").io_rail, device(a, "U2").io_volts) == ("+3V3", 3.3)


def test_configured_pin_the_part_lacks_is_reported_not_replaced():
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), {"+3V3": ["U2.VDD"], "GND": ["U2.GND"]},
            config=parse_config("version: 1\nparts:\n  - match: {ref: U2}\n    io_supply_pin: VDDIO\n"))
    assert device(a, "U2").io_rail is None
    (f,) = unknown(a)
    assert f.refs == ("U2",) and f.data["problem"] == "config-pin-missing"
    assert "VDDIO" in f.data["candidates"][0]


def test_supply_joined_by_a_zero_ohm_link_takes_the_rail_voltage():
    # VDD on /SENS_VDD, which fitted 0 Ω R3 joins to +3V3: the same net electrically.
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
            {"/SENS_VDD": ["U2.VDD", "R3.1"], "+3V3": ["R3.2"], "GND": ["U2.GND"]}, extra=[res("R3", "0R")])
    d = device(a, "U2")
    assert (d.io_rail, d.io_volts) == ("/SENS_VDD", 3.3)


def test_usb_input_pin_is_not_taken_for_the_logic_supply():
    # A charger-like part: its only power input is VBUS (5 V); its bus logic runs from an
    # internal regulator the schematic does not show. Not guessed: reported.
    charger = part("U2", "CHARGER", [("SDA", "bidirectional"), ("SCL", "input"), ("VBUS", "power_in"),
                                     ("GND", "power_in"), ("REGN", "power_out")])
    a = run(charger, {"VBUS": ["U2.VBUS"], "GND": ["U2.GND"], "/REGN": ["U2.REGN"]})
    assert device(a, "U2").io_rail is None
    (f,) = unknown(a)
    assert f.refs == ("U2",) and f.data["kind"] == "device-supply" and f.data["problem"] == "none-found"
    assert f.data["config_hint"] == "parts:\n  - match: {ref: U2}\n    io_supply_pin: <pin name>"
    assert not [x for x in a.findings if x.rule in ("rail-overvoltage", "rail-high-level-unmet")]


def test_supply_pins_on_rails_of_different_voltage_leave_the_supply_undecided():
    # An FPGA-like part whose bus pins may sit in either I/O bank: VCCIO_0 on +3V3,
    # VCCIO_1 on +1V8. Which bank holds SDA/SCL is not in the netlist.
    fpga = ic("U2", "FPGA", ["SDA", "SCL", "VCCIO_0", "VCCIO_1", "VCC", "GND"])
    a = run(fpga, {"+3V3": ["U2.VCCIO_0"], "+1V8": ["U2.VCCIO_1"], "+1V2": ["U2.VCC"], "GND": ["U2.GND"]})
    assert device(a, "U2").io_rail is None
    (f,) = unknown(a)
    assert f.data["problem"] == "ambiguous"
    assert sorted(f.data["candidates"]) == [["VCCIO_0", "+3V3"], ["VCCIO_1", "+1V8"]]


def test_banks_on_one_rail_give_that_rail():
    fpga = ic("U2", "FPGA", ["SDA", "SCL", "VCCIO_0", "VCCIO_1", "VCC", "GND"])
    a = run(fpga, {"+3V3": ["U2.VCCIO_0", "U2.VCCIO_1"], "+1V2": ["U2.VCC"], "GND": ["U2.GND"]})
    assert (device(a, "U2").io_rail, device(a, "U2").io_volts) == ("+3V3", 3.3)


def test_config_io_supply_pin_settles_an_undecided_part():
    fpga = ic("U2", "FPGA", ["SDA", "SCL", "VCCIO_0", "VCCIO_1", "VCC", "GND"])
    a = run(fpga, {"+3V3": ["U2.VCCIO_0"], "+1V8": ["U2.VCCIO_1"], "+1V2": ["U2.VCC"], "GND": ["U2.GND"]},
            config=parse_config("version: 1\nparts:\n  - match: {ref: U2}\n    io_supply_pin: VCCIO_0\n"))
    assert device(a, "U2").io_rail == "+3V3" and unknown(a) == []


def test_supply_net_without_voltage_is_named_with_the_rails_line_to_add():
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), {"VCC_AUX": ["U2.VDD"], "GND": ["U2.GND"]})
    d = device(a, "U2")
    assert (d.io_rail, d.io_volts) == ("VCC_AUX", None)
    (f,) = unknown(a)
    assert f.data["kind"] == "rail" and f.data["rail"] == "VCC_AUX" and "VCC_AUX" in f.nets
    assert f.data["config_hint"] == "rails:\n  VCC_AUX: <volts>"
    # The hint, with a voltage filled in, is a valid netaudit.yaml that settles it.
    cfg = parse_config("version: 1\n" + f.data["config_hint"].replace("<volts>", "3.3"))
    b = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), {"VCC_AUX": ["U2.VDD"], "GND": ["U2.GND"]},
            config=cfg)
    assert device(b, "U2").io_volts == 3.3 and unknown(b) == []


def test_rails_hint_quotes_net_names_yaml_would_misread():
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
            {"/Sensor Power/VDD_S": ["U2.VDD"], "GND": ["U2.GND"]})
    (f,) = unknown(a)
    cfg = parse_config("version: 1\n" + f.data["config_hint"].replace("<volts>", "1.8"))
    assert cfg.rails == {"/Sensor Power/VDD_S": 1.8}


def translator(vref2_via_resistor=True):
    """PCA9306-style translator U2 between the controller on +1V8 and a sensor on +3V3;
    VREF2 and EN reach +3V3 through 200 kΩ R5, as that part's reference circuit shows."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "PCA9306", ["GND", "VREF1", "SCL1", "SDA1", "SDA2", "SCL2", "EN", "VREF2"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             res("R1", "2k2"), res("R2", "2k2"), res("R3", "4k7"), res("R4", "4k7"), res("R5", "200k")]
    nets = {"/SDA_1V8": ["U1.SDA", "U2.SDA1", "R1.1"], "/SCL_1V8": ["U1.SCL", "U2.SCL1", "R2.1"],
            "/SDA_3V3": ["U2.SDA2", "U3.SDA", "R3.1"], "/SCL_3V3": ["U2.SCL2", "U3.SCL", "R4.1"],
            "+1V8": ["U1.VDD", "U2.VREF1", "R1.2", "R2.2"],
            "+3V3": ["U3.VDD", "R3.2", "R4.2", "R5.2"], "GND": ["U1.GND", "U2.GND", "U3.GND"],
            "/VREF2": ["U2.VREF2", "U2.EN", "R5.1"]}
    return audit_design(build(parts, nets), Config.empty())


def test_translator_sides_take_their_own_reference_pin():
    a = translator()
    low, high = a.buses[0].segments
    u2_low, u2_high = device(a, "U2", 0), device(a, "U2", 1)
    assert (u2_low.io_rail, u2_low.io_volts) == ("+1V8", 1.8)
    # VREF2 sits on /VREF2, which reaches +3V3 only through 200 kΩ: the side is 3.3 V.
    assert (u2_high.io_rail, u2_high.io_volts) == ("/VREF2", 3.3)
    assert high.upstream.ref == "U2" and low.upstream is None


def test_connectors_get_no_supply():
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), {"+3V3": ["U2.VDD"], "GND": ["U2.GND"]},
            extra=[Part("J1", "Conn_01x04", lib="Connector", lib_part="Conn_01x04",
                        pins=tuple(Pin(str(i), f"Pin_{i}", "passive") for i in range(1, 5)))])
    assert all(d.io_rail is None for d in a.buses[0].segments[0].devices if d.role == "connector")


# -- switched rails ------------------------------------------------------------------

def load_switched(on_net="/SENS_EN"):
    """Sensor U2 on VDD_SENS, the output of load switch U3 whose ON input is ``on_net``
    (the controller's GPIO PA1, or the switch's own input rail)."""
    sw = part("U3", "LOADSW", [("VIN", "power_in"), ("GND", "power_in"), ("ON", "input"), ("VOUT", "power_out")])
    u1 = ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND", "PA1"], pins_total=48)
    parts = [u1, ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), sw, res("R1", "4k7"), res("R2", "4k7")]
    nets = {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
            "+3V3": ["U1.VDD", "R1.2", "R2.2", "U3.VIN"], "VDD_SENS": ["U2.VDD", "U3.VOUT"],
            "GND": ["U1.GND", "U2.GND", "U3.GND"]}
    if on_net == "+3V3":
        nets["+3V3"].append("U3.ON")
    else:
        nets[on_net] = ["U1.PA1", "U3.ON"]
    return audit_design(build(parts, nets), parse_config("version: 1\nrails:\n  VDD_SENS: 3.3\n"))


def test_device_on_a_rail_a_gpio_switches_is_noted():
    a = load_switched()
    seg = a.buses[0].segments[0]
    notes = [n for line in seg.lines for n in line.budget.notes if "can be off" in n]
    assert notes and all("U2 run from VDD_SENS" in n and "U3" in n and "/SENS_EN" in n for n in notes)
    # UM10204 Rev. 6 §5.1 / Table 9 note [9]: a switched-off Fast-mode device must not
    # obstruct the lines; the pull-ups here stay on +3V3.
    assert all("floating" in n for n in notes)
    assert "can be off" in render_text(a)
    doc = json.loads(render_json(a))
    assert any("can be off" in n for n in doc["buses"][0]["segments"][0]["lines"]["sda"]["notes"])
    assert unknown(a) == []   # a note, not a finding


def test_rail_whose_switch_is_always_on_is_not_noted():
    a = load_switched(on_net="+3V3")
    seg = a.buses[0].segments[0]
    assert not [n for line in seg.lines for n in line.budget.notes if "can be off" in n]


def test_rail_named_as_switched_is_noted():
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), {"3V3_SW": ["U2.VDD"], "GND": ["U2.GND"]})
    seg = a.buses[0].segments[0]
    assert [n for n in seg.sda.budget.notes if "3V3_SW" in n and "named as switched" in n]


def test_rail_behind_a_transistor_switch_is_noted():
    # PNP Q1: emitter on +5V, collector on /VCC_SOCKET, base driven through R3 from PA1.
    q = part("Q1", "BC807", [("B", "input"), ("E", "passive"), ("C", "passive")])
    u1 = ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND", "PA1"], pins_total=48)
    parts = [u1, ic("U2", "EEPROM", ["SDA", "SCL", "VCC", "GND"]), q, res("R1", "4k7"), res("R2", "4k7"),
             res("R3", "10k")]
    d = build(parts, {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
                      "+5V": ["U1.VDD", "R1.2", "R2.2", "Q1.E"], "/VCC_SOCKET": ["U2.VCC", "Q1.C"],
                      "/SOCK_ON": ["U1.PA1", "R3.1"], "/Q1_B": ["R3.2", "Q1.B"], "GND": ["U1.GND", "U2.GND"]})
    a = audit_design(d, parse_config("version: 1\nrails:\n  /VCC_SOCKET: 5\n"))
    notes = a.buses[0].segments[0].sda.budget.notes
    assert [n for n in notes if "/VCC_SOCKET" in n and "transistor Q1" in n]


# -- reports ---------------------------------------------------------------------------

def test_json_and_text_reports_carry_each_devices_supply():
    a = run(ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "VDDIO", "GND"]),
            {"+3V3": ["U2.VDD"], "+1V8": ["U2.VDDIO"], "GND": ["U2.GND"]})
    doc = json.loads(render_json(a))
    got = {d["ref"]: (d["io_rail"], d["io_volts"]) for d in doc["buses"][0]["segments"][0]["devices"]}
    assert got == {"U1": ("+3V3", 3.3), "U2": ("+1V8", 1.8)}
    assert "+1V8 1.8 V" in render_text(a)
