"""Bus finding on small hand-made designs: what makes a bus, what joins a line, what splits one.

Topology semantics from CONTRACT.md (facts of the trade): series resistors and 0 Ω links
join nets into one line; a translator splits a line into segments; a multiplexer splits
a bus into channel segments. Designs are invented; part names (PCA9306-style translator,
BSS138 shifter, 8-channel multiplexer) only borrow the pin names such parts have.
"""

from __future__ import annotations

import pytest
from handmade import build, fet, ic, res

from netaudit.audit import audit_design
from netaudit.config import Config
from netaudit.model import Part, Pin

# The rules of issues 3 and 4 (wiring, pull-ups, budget); later rule families (rail
# voltages, addresses) may add their own findings to the same boards.
BUS_AND_BUDGET_RULES = frozenset({
    "bus-line-unpaired", "bus-lines-swapped", "bus-pin-unconnected", "bus-lone-device",
    "pullup-missing", "pullup-duplicated", "pullup-parallel", "pullup-rail-mismatch",
    "pullup-to-signal", "pullup-too-strong", "pullup-too-weak", "capacitance-over-limit",
    "low-level-margin",
})


def run(design):
    return audit_design(design, Config.empty())


def mcu(pins=("SDA", "SCL", "VDD", "GND")):
    return ic("U1", "MCU", list(pins), pins_total=48)


def sensor(ref="U2"):
    return ic(ref, "SENSOR", ["SDA", "SCL", "VDD", "GND"])


def only_bus(audit):
    assert len(audit.buses) == 1, [b.name for b in audit.buses]
    return audit.buses[0]


# -- what makes a bus ----------------------------------------------------------------

def test_multi_function_pins_alone_make_no_bus():
    # PB7/SDA and PB6/SCL on one processor, nothing else on the board.
    d = build([mcu(("PB7/SDA", "PB6/SCL", "VDD", "GND"))],
              {"/PB7": ["U1.PB7/SDA"], "/PB6": ["U1.PB6/SCL"], "+3V3": ["U1.VDD"], "GND": ["U1.GND"]})
    a = run(d)
    assert a.buses == () and a.findings == ()


def test_multi_function_pins_with_a_sensor_make_a_bus():
    d = build([mcu(("PB7/SDA", "PB6/SCL", "VDD", "GND")), sensor()],
              {"/PB7": ["U1.PB7/SDA", "U2.SDA"], "/PB6": ["U1.PB6/SCL", "U2.SCL"],
               "+3V3": ["U1.VDD", "U2.VDD"], "GND": ["U1.GND", "U2.GND"]})
    seg = only_bus(run(d)).segments[0]
    assert seg.sda.nets == ("/PB7",) and seg.scl.nets == ("/PB6",)
    assert {dev.ref: dev.role for dev in seg.devices} == {"U1": "controller", "U2": "target"}


def _switch(ref="SW1"):
    return Part(ref, "SW_Push", lib="Switch", lib_part="SW_Push",
                pins=(Pin("1", "1", "passive"), Pin("2", "2", "passive")))


def _led(ref="D1"):
    return Part(ref, "LED", lib="Device", lib_part="LED", pins=(Pin("1", "K", "passive"), Pin("2", "A", "passive")))


def test_multi_function_pins_driving_leds_make_no_bus():
    # PB7/SDA and PB6/SCL each drive an LED through 330 Ω: used for something else.
    d = build([mcu(("PB7/SDA", "PB6/SCL", "VDD", "GND")), res("R1", "330"), res("R2", "330"),
               _led("D1"), _led("D2")],
              {"/PB7": ["U1.PB7/SDA", "R1.1"], "/LED1": ["R1.2", "D1.A"],
               "/PB6": ["U1.PB6/SCL", "R2.1"], "/LED2": ["R2.2", "D2.A"],
               "+3V3": ["U1.VDD"], "GND": ["U1.GND", "D1.K", "D2.K"]})
    assert run(d).buses == ()


def test_multi_function_pins_used_for_led_and_button_make_no_bus():
    d = build([mcu(("PB7/SDA", "PB6/SCL", "VDD", "GND")), _led(), _switch()],
              {"/PB7": ["U1.PB7/SDA", "D1.A"], "/PB6": ["U1.PB6/SCL", "SW1.1"],
               "+3V3": ["U1.VDD"], "GND": ["U1.GND", "D1.K", "SW1.2"]})
    a = run(d)
    assert a.buses == () and [f.rule for f in a.findings] == []


def test_strap_pullup_on_one_multi_function_pin_makes_no_bus():
    # PB6/SCL is held high by a 10 kΩ strap (a boot option), PB7/SDA drives an LED.
    d = build([mcu(("PB7/SDA", "PB6/SCL", "VDD", "GND")), _led(), res("R3", "10k")],
              {"/PB7": ["U1.PB7/SDA", "D1.A"], "/PB6": ["U1.PB6/SCL", "R3.1"],
               "+3V3": ["U1.VDD", "R3.2"], "GND": ["U1.GND", "D1.K"]})
    a = run(d)
    assert a.buses == () and [f.rule for f in a.findings] == []


def test_lone_sck_pin_makes_no_bus():
    # An SPI clock (SCK) is not an I2C clock; nothing here is a two-wire bus.
    d = build([mcu(("SCK", "MOSI", "VDD", "GND")), ic("U2", "FLASH", ["SCK", "SI", "VDD", "GND"])],
              {"/SCK": ["U1.SCK", "U2.SCK"], "/MOSI": ["U1.MOSI", "U2.SI"],
               "+3V3": ["U1.VDD", "U2.VDD"], "GND": ["U1.GND", "U2.GND"]})
    a = run(d)
    assert a.buses == () and a.findings == ()


# -- what joins a line ---------------------------------------------------------------

def joined(link: Part):
    """U1's SDA reaches /SDA through ``link`` (R5) from /SDA_MCU."""
    return run(build(
        [mcu(), sensor(), res("R1", "4k7"), res("R2", "4k7"), link],
        {"/SDA_MCU": ["U1.SDA", "R5.1"], "/SDA": ["R5.2", "U2.SDA", "R1.1"],
         "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
         "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]}))


def test_zero_ohm_link_joins_two_nets_into_one_line():
    sda = only_bus(joined(res("R5", "0"))).segments[0].sda
    assert sda.nets == ("/SDA", "/SDA_MCU")
    assert [(s.ref, s.ohms) for s in sda.series] == [("R5", 0.0)]


def test_not_fitted_zero_ohm_link_joins_nothing():
    a = joined(res("R5", "0", dnp=True))
    sda = only_bus(a).segments[0].sda
    assert sda.nets == ("/SDA",)
    # The controller's data pin is now on a line of its own, with no clock partner.
    assert [(f.rule, f.nets) for f in a.findings if f.rule == "bus-line-unpaired"] == [
        ("bus-line-unpaired", ("/SDA_MCU",))]


def test_series_resistor_joins_nets_and_is_kept():
    sda = only_bus(joined(res("R5", "33"))).segments[0].sda
    assert sda.nets == ("/SDA", "/SDA_MCU")
    assert [(s.ref, s.ohms, s.nets) for s in sda.series] == [("R5", 33.0, ("/SDA", "/SDA_MCU"))]
    assert [p.ref for p in sda.pullups] == ["R1"]


def test_value_in_a_user_field_when_value_is_a_library_name():
    # Value "R_2k2_0402" (a library name) with field Val=2k2; and a Value carrying no
    # value code at all ("RES_PULLUP"), where only the field can give 2.2 kΩ.
    d = build([mcu(), sensor(), res("R1", "R_2k2_0402", fields=(("Val", "2k2"),)),
               res("R2", "RES_PULLUP", fields=(("Val", "2k2"),))],
              {"/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
               "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND"]})
    seg = only_bus(run(d)).segments[0]
    assert [(p.ref, p.ohms) for p in seg.sda.pullups] == [("R1", 2200.0)]
    assert [(p.ref, p.ohms) for p in seg.scl.pullups] == [("R2", 2200.0)]


# -- what splits a bus ---------------------------------------------------------------

def mux_design():
    parts = [mcu(), ic("U2", "MUX8", ["SDA", "SCL", "SD0", "SC0", "SD1", "SC1", "VCC", "GND"]),
             sensor("U3"), sensor("U4")] + [res(f"R{i}", "4k7") for i in range(1, 7)]
    return build(parts, {
        "/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
        "/CH0_SDA": ["U2.SD0", "U3.SDA", "R3.1"], "/CH0_SCL": ["U2.SC0", "U3.SCL", "R4.1"],
        "/CH1_SDA": ["U2.SD1", "U4.SDA", "R5.1"], "/CH1_SCL": ["U2.SC1", "U4.SCL", "R6.1"],
        "+3V3": ["U1.VDD", "U2.VCC", "U3.VDD", "U4.VDD"] + [f"R{i}.2" for i in range(1, 7)],
        "GND": ["U1.GND", "U2.GND", "U3.GND", "U4.GND"]})


def test_mux_channels_are_segments_behind_the_mux():
    bus = only_bus(run(mux_design()))
    upstream = {s.sda.nets: (s.upstream and (s.upstream.ref, s.upstream.kind, s.upstream.channel))
                for s in bus.segments}
    assert upstream == {("/SDA",): None, ("/CH0_SDA",): ("U2", "mux", "0"),
                        ("/CH1_SDA",): ("U2", "mux", "1")}


def test_mux_channel_segments_hold_their_own_devices():
    bus = only_bus(run(mux_design()))
    devices = {s.sda.nets[0]: sorted(d.ref for d in s.devices) for s in bus.segments}
    assert devices == {"/SDA": ["U1", "U2"], "/CH0_SDA": ["U2", "U3"], "/CH1_SDA": ["U2", "U4"]}
    assert {d.role for s in bus.segments for d in s.devices if d.ref == "U2"} == {"mux"}


def test_segment_ids_are_unique_within_a_bus():
    bus = only_bus(run(mux_design()))
    ids = [s.id for s in bus.segments]
    assert len(set(ids)) == len(ids) == 3


def test_clean_mux_design_has_no_findings():
    assert [f for f in run(mux_design()).findings if f.rule in BUS_AND_BUDGET_RULES] == []


def translator_design():
    """PCA9306-style translator: VREF1 on +1V8 (controller side), VREF2 on +3V3."""
    parts = [mcu(), ic("U2", "PCA9306", ["GND", "VREF1", "SCL1", "SDA1", "SDA2", "SCL2", "EN", "VREF2"]),
             sensor("U3"), res("R1", "2k2"), res("R2", "2k2"), res("R3", "4k7"), res("R4", "4k7")]
    return build(parts, {
        "/SDA_1V8": ["U1.SDA", "U2.SDA1", "R1.1"], "/SCL_1V8": ["U1.SCL", "U2.SCL1", "R2.1"],
        "/SDA_3V3": ["U2.SDA2", "U3.SDA", "R3.1"], "/SCL_3V3": ["U2.SCL2", "U3.SCL", "R4.1"],
        "+1V8": ["U1.VDD", "U2.VREF1", "R1.2", "R2.2"],
        "+3V3": ["U2.VREF2", "U2.EN", "U3.VDD", "R3.2", "R4.2"],
        "GND": ["U1.GND", "U2.GND", "U3.GND"]})


def test_translator_splits_the_bus_into_two_segments():
    bus = only_bus(run(translator_design()))
    assert [(s.sda.nets, s.scl.nets) for s in bus.segments] == [
        (("/SDA_1V8",), ("/SCL_1V8",)), (("/SDA_3V3",), ("/SCL_3V3",))]
    first, second = bus.segments
    assert first.upstream is None
    assert (second.upstream.ref, second.upstream.kind, second.upstream.channel) == ("U2", "translator", None)


def test_translator_sides_keep_their_own_pullups_and_rails():
    first, second = only_bus(run(translator_design())).segments
    assert {p.rail for line in first.lines for p in line.pullups} == {"+1V8"}
    assert {p.rail for line in second.lines for p in line.pullups} == {"+3V3"}
    # Rp(min) per side: 1.8 V → (1.8 − 0.36) / 2 mA = 720 Ω; 3.3 V → 966.7 Ω
    # (UM10204 Rev. 6 §7.1 Eq. 2, Table 9 V_OL rows).
    assert first.sda.budget.rp_min_ohms == pytest.approx(720.0)
    assert second.sda.budget.rp_min_ohms == pytest.approx(966.667, abs=0.01)


def test_translator_design_has_no_findings():
    assert [f for f in run(translator_design()).findings if f.rule in BUS_AND_BUDGET_RULES] == []


def fet_shifter_design():
    """AN10441 §2.1 shifter: one BSS138 per line, gate on the lower rail (+1V8), source on
    the low-voltage side, drain on the high-voltage side, pull-ups on both sides."""
    parts = [mcu(), sensor("U3"), fet("Q1"), fet("Q2"),
             res("R1", "4k7"), res("R2", "4k7"), res("R3", "4k7"), res("R4", "4k7")]
    return build(parts, {
        "/SDA_1V8": ["U1.SDA", "Q1.S", "R1.1"], "/SCL_1V8": ["U1.SCL", "Q2.S", "R2.1"],
        "/SDA_3V3": ["Q1.D", "U3.SDA", "R3.1"], "/SCL_3V3": ["Q2.D", "U3.SCL", "R4.1"],
        "+1V8": ["U1.VDD", "Q1.G", "Q2.G", "R1.2", "R2.2"],
        "+3V3": ["U3.VDD", "R3.2", "R4.2"], "GND": ["U1.GND", "U3.GND"]})


def test_fet_shifter_splits_each_line():
    bus = only_bus(run(fet_shifter_design()))
    assert [(s.sda.nets, s.scl.nets) for s in bus.segments] == [
        (("/SDA_1V8",), ("/SCL_1V8",)), (("/SDA_3V3",), ("/SCL_3V3",))]
    assert bus.segments[1].upstream.kind == "translator"
    assert bus.segments[1].upstream.ref in ("Q1", "Q2")


def test_fet_shifter_sides_are_not_one_line():
    bus = only_bus(run(fet_shifter_design()))
    all_nets = [n for s in bus.segments for line in s.lines for n in line.nets]
    assert len(all_nets) == len(set(all_nets)) == 4
