"""Pull-up rules on small hand-made designs, and waivers: a case found and a case not found.

Rules (CONTRACT.md, rules table): pullup-missing, pullup-duplicated, pullup-parallel,
pullup-rail-mismatch, pullup-to-signal. The designs are invented.
"""

from __future__ import annotations

import pytest
from handmade import build, ic, res

from netaudit.audit import audit_design
from netaudit.config import Config, parse_config
from netaudit.results import Severity


def bus(extra_parts=(), extra_nets=None, *, config=None, mcu_pins=("SDA", "SCL", "VDD", "GND")):
    """Controller U1 and target U2 on /SDA and /SCL, both supplied from +3V3; the caller
    adds the pull-ups (parts and net members) it wants to test."""
    parts = [ic("U1", "MCU", list(mcu_pins), pins_total=48),
             ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]), *extra_parts]
    nets = {"/SDA": ["U1.SDA", "U2.SDA"], "/SCL": ["U1.SCL", "U2.SCL"],
            "+3V3": ["U1.VDD", "U2.VDD"], "GND": ["U1.GND", "U2.GND"]}
    for name, members in (extra_nets or {}).items():
        nets[name] = nets.get(name, []) + members
    return audit_design(build(parts, nets), config or Config.empty())


def of(audit, rule_id):
    return [f for f in audit.findings if f.rule == rule_id]


def plain_pullups():
    """One 4.7 kΩ pull-up per line to +3V3 (4.7 kΩ: common practice, no source)."""
    return ([res("R1", "4k7"), res("R2", "4k7")],
            {"/SDA": ["R1.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2", "R2.2"]})


def bus_yaml(extra: str) -> Config:
    return parse_config("version: 1\nbuses:\n  - name: MAIN\n    sda: /SDA\n    scl: /SCL\n" + extra)


# -- pullup-missing ------------------------------------------------------------------

def test_lines_without_pullups_are_missing_them():
    got = of(bus(), "pullup-missing")
    assert sorted(f.line for f in got) == ["scl", "sda"]
    assert all(f.severity is Severity.ERROR for f in got)   # CONTRACT.md default severity
    assert {f.nets for f in got} == {("/SDA",), ("/SCL",)}


def test_not_fitted_pullup_is_named_but_not_counted():
    # R1 on SDA is marked DNP: the line still has no pull-up, and R1 is named as the candidate.
    a = bus([res("R1", "4k7", dnp=True), res("R2", "4k7")],
            {"/SDA": ["R1.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2", "R2.2"]})
    (f,) = of(a, "pullup-missing")
    assert f.line == "sda"
    assert f.refs == ("R1",) and f.data["not_fitted"] == ["R1"]


def test_fitted_pullups_are_not_missing():
    assert of(bus(*plain_pullups()), "pullup-missing") == []


def test_offboard_pullup_in_config_satisfies_the_line():
    a = bus(config=bus_yaml("    offboard_pullup: {ohms: 2200, rail: +3V3}\n"))
    assert of(a, "pullup-missing") == []
    sda = a.buses[0].segments[0].sda
    assert [(p.ohms, p.rail, p.offboard) for p in sda.fitted_pullups] == [(2200.0, "+3V3", True)]


def test_mux_channel_without_pullups_is_missing_them_on_that_channel_only():
    # Each segment behind a multiplexer needs its own pull-ups (UM10204 Rev. 6 §7.2.3:
    # a multiplexer divides the bus into segments). Channel 0 has them, channel 1 not.
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "MUX", ["SDA", "SCL", "SD0", "SC0", "SD1", "SC1", "VCC", "GND"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             ic("U4", "SENSOR", ["SDA", "SCL", "VDD", "GND"])]
    parts += [res(f"R{i}", "4k7") for i in range(1, 5)]
    d = build(parts, {
        "/SDA": ["U1.SDA", "U2.SDA", "R1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
        "/CH0_SDA": ["U2.SD0", "U3.SDA", "R3.1"], "/CH0_SCL": ["U2.SC0", "U3.SCL", "R4.1"],
        "/CH1_SDA": ["U2.SD1", "U4.SDA"], "/CH1_SCL": ["U2.SC1", "U4.SCL"],
        "+3V3": ["U1.VDD", "U2.VCC", "U3.VDD", "U4.VDD"] + [f"R{i}.2" for i in range(1, 5)],
        "GND": ["U1.GND", "U2.GND", "U3.GND", "U4.GND"]})
    got = of(audit_design(d, Config.empty()), "pullup-missing")
    assert sorted((f.segment, f.line) for f in got) == [("I2C/U2.ch1", "scl"), ("I2C/U2.ch1", "sda")]


# -- pullup-duplicated ---------------------------------------------------------------

def two_probe_instances():
    """Sheet probe.kicad_sch placed twice (/Probe A/, /Probe B/), each with a 4.7 kΩ
    pull-up on SDA; SCL has one pull-up on the root sheet."""
    return bus([res("R11", "4k7", sheet="/Probe A/", sheet_file="probe.kicad_sch"),
                res("R21", "4k7", sheet="/Probe B/", sheet_file="probe.kicad_sch"),
                res("R2", "4k7")],
               {"/SDA": ["R11.1", "R21.1"], "/SCL": ["R2.1"], "+3V3": ["R11.2", "R21.2", "R2.2"]})


def test_one_sheet_placed_twice_duplicates_its_pullup():
    (f,) = of(two_probe_instances(), "pullup-duplicated")
    assert f.line == "sda" and f.refs == ("R11", "R21")
    assert f.data["sheet_file"] == "probe.kicad_sch"
    assert f.data["sheet_paths"] == ["/Probe A/", "/Probe B/"]
    assert f.severity is Severity.WARNING          # CONTRACT.md default severity


def test_duplicated_pullup_gives_equivalent_value():
    # 4.7 kΩ ∥ 4.7 kΩ = 2.35 kΩ (parallel resistors, arithmetic).
    (f,) = of(two_probe_instances(), "pullup-duplicated")
    assert f.data["equivalent_ohms"] == pytest.approx(2350.0)


def test_duplicated_pullup_is_not_also_reported_parallel():
    assert of(two_probe_instances(), "pullup-parallel") == []


def test_one_instance_of_a_sheet_is_not_duplicated():
    a = bus([res("R11", "4k7", sheet="/Probe A/", sheet_file="probe.kicad_sch"), res("R2", "4k7")],
            {"/SDA": ["R11.1"], "/SCL": ["R2.1"], "+3V3": ["R11.2", "R2.2"]})
    assert of(a, "pullup-duplicated") == []


# -- pullup-parallel -----------------------------------------------------------------

def parallel_from_two_places():
    """4.7 kΩ on SDA on the root sheet and another 4.7 kΩ in the sensor's own sheet."""
    return bus([res("R1", "4k7"), res("R31", "4k7", sheet="/Sensor/", sheet_file="sensor.kicad_sch"),
                res("R2", "4k7")],
               {"/SDA": ["R1.1", "R31.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2", "R31.2", "R2.2"]})


def test_pullups_from_two_places_are_parallel():
    (f,) = of(parallel_from_two_places(), "pullup-parallel")
    assert f.line == "sda" and f.refs == ("R1", "R31") and f.nets == ("/SDA",)
    assert f.severity is Severity.WARNING          # CONTRACT.md default severity


def test_parallel_pullups_give_equivalent_value():
    # 4.7 kΩ ∥ 4.7 kΩ = 1 / (2 / 4700) = 2350 Ω (parallel resistors, arithmetic).
    (f,) = of(parallel_from_two_places(), "pullup-parallel")
    assert f.data["equivalent_ohms"] == pytest.approx(2350.0)
    assert f.data["pullups"] == {"R1": 4700.0, "R31": 4700.0}


def test_parallel_pullups_set_the_line_budget_equivalent():
    sda = parallel_from_two_places().buses[0].segments[0].sda
    assert sda.budget.rp_ohms == pytest.approx(2350.0)


def test_pullups_from_two_sheets_of_unknown_file_are_parallel():
    # A design whose parts carry no sheet file name (sheet_file ""): pull-ups on the root
    # sheet and in /Sensor/ are two places, not one reused sheet.
    a = bus([res("R1", "4k7"), res("R31", "4k7", sheet="/Sensor/"), res("R2", "4k7")],
            {"/SDA": ["R1.1", "R31.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2", "R31.2", "R2.2"]})
    (f,) = of(a, "pullup-parallel")
    assert f.refs == ("R1", "R31")
    assert of(a, "pullup-duplicated") == []


def test_onboard_pullup_and_declared_offboard_one_are_parallel():
    parts, nets = plain_pullups()
    a = bus(parts, nets, config=bus_yaml("    offboard_pullup: {ohms: 4700, rail: +3V3}\n"))
    got = of(a, "pullup-parallel")
    assert sorted(f.line for f in got) == ["scl", "sda"]
    assert all(f.data["equivalent_ohms"] == pytest.approx(2350.0) for f in got)


def test_one_pullup_per_line_is_not_parallel():
    assert of(bus(*plain_pullups()), "pullup-parallel") == []


def test_not_fitted_second_pullup_is_not_parallel():
    a = bus([res("R1", "4k7"), res("R31", "4k7", dnp=True), res("R2", "4k7")],
            {"/SDA": ["R1.1", "R31.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2", "R31.2", "R2.2"]})
    assert of(a, "pullup-parallel") == []


# -- pullup-rail-mismatch ------------------------------------------------------------

def test_sda_and_scl_pulled_to_different_rails_mismatch():
    a = bus([res("R1", "4k7"), res("R2", "4k7")],
            {"/SDA": ["R1.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2"], "+5V": ["R2.2"]})
    (f,) = of(a, "pullup-rail-mismatch")
    assert f.data["rails"] == ["+3V3", "+5V"]
    assert f.data["by_line"] == {"sda": ["+3V3"], "scl": ["+5V"]}
    assert f.refs == ("R1", "R2") and f.nets == ("/SCL", "/SDA")
    assert f.severity is Severity.ERROR            # CONTRACT.md default severity


def test_one_line_pulled_to_two_rails_mismatches():
    a = bus([res("R1", "10k"), res("R3", "10k"), res("R2", "4k7")],
            {"/SDA": ["R1.1", "R3.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2", "R2.2"], "+5V": ["R3.2"]})
    (f,) = of(a, "pullup-rail-mismatch")
    assert f.data["by_line"]["sda"] == ["+3V3", "+5V"]


def test_pullups_to_one_rail_do_not_mismatch():
    assert of(bus(*plain_pullups()), "pullup-rail-mismatch") == []


def translated_bus(scl_hv_rail="+3V3"):
    """PCA9306-style translator U2 (VREF1 on +1V8, VREF2 on +3V3): controller side pulled
    to +1V8, target side's SDA to +3V3 and its SCL to ``scl_hv_rail``."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U2", "PCA9306", ["GND", "VREF1", "SCL1", "SDA1", "SDA2", "SCL2", "EN", "VREF2"]),
             ic("U3", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
             res("R1", "2k2"), res("R2", "2k2"), res("R3", "4k7"), res("R4", "4k7")]
    nets = {
        "/SDA_LV": ["U1.SDA", "U2.SDA1", "R1.1"], "/SCL_LV": ["U1.SCL", "U2.SCL1", "R2.1"],
        "/SDA_HV": ["U2.SDA2", "U3.SDA", "R3.1"], "/SCL_HV": ["U2.SCL2", "U3.SCL", "R4.1"],
        "+1V8": ["U1.VDD", "U2.VREF1", "R1.2", "R2.2"],
        "+3V3": ["U2.VREF2", "U2.EN", "U3.VDD", "R3.2"],
        "GND": ["U1.GND", "U2.GND", "U3.GND"]}
    nets[scl_hv_rail].append("R4.2")
    return audit_design(build(parts, nets), Config.empty())


def test_two_sides_of_a_translator_on_two_rails_do_not_mismatch():
    # A translator exists to join segments on different rails (CONTRACT.md topology
    # semantics; AN10441 §2.1 shows pull-ups to each side's own supply).
    assert of(translated_bus(), "pullup-rail-mismatch") == []


def test_mismatch_inside_one_translator_side_is_found():
    # SCL on the 3.3 V side pulled to +1V8 while its SDA goes to +3V3.
    a = translated_bus("+1V8")
    (f,) = of(a, "pullup-rail-mismatch")
    assert f.segment == a.buses[0].segments[1].id and a.buses[0].segments[1].upstream.kind == "translator"
    assert f.data["by_line"] == {"sda": ["+3V3"], "scl": ["+1V8"]}


# -- pullup-to-signal ----------------------------------------------------------------

def test_pullup_to_a_gpio_net_is_to_signal():
    # R1 pulls SDA up to /PU_EN, which the controller's GPIO pin PA3 drives.
    a = bus([res("R1", "4k7"), res("R2", "4k7")],
            {"/SDA": ["R1.1"], "/SCL": ["R2.1"], "/PU_EN": ["R1.2", "U1.PA3"], "+3V3": ["R2.2"]},
            mcu_pins=("SDA", "SCL", "PA3", "VDD", "GND"))
    (f,) = of(a, "pullup-to-signal")
    assert f.refs == ("R1",) and f.line == "sda"
    assert f.data["target_net"] == "/PU_EN" and f.data["ohms"] == 4700.0
    assert f.nets == ("/PU_EN", "/SDA")
    assert f.severity is Severity.WARNING          # CONTRACT.md default severity


def test_pullup_to_a_net_named_as_rail_in_config_is_not_to_signal():
    # The same net, declared a 3.3 V supply in netaudit.yaml (rails:), is a rail.
    a = bus([res("R1", "4k7"), res("R2", "4k7")],
            {"/SDA": ["R1.1"], "/SCL": ["R2.1"], "/PU_EN": ["R1.2", "U1.PA3"], "+3V3": ["R2.2"]},
            mcu_pins=("SDA", "SCL", "PA3", "VDD", "GND"),
            config=parse_config("version: 1\nrails:\n  /PU_EN: 3.3\n"))
    assert of(a, "pullup-to-signal") == []


def test_pullups_to_a_rail_are_not_to_signal():
    assert of(bus(*plain_pullups()), "pullup-to-signal") == []


# -- waivers -------------------------------------------------------------------------

WAIVE_PARALLEL = """\
version: 1
waivers:
  - rule: pullup-parallel
    refs: [R1, R31]
    reason: second pair sits on the optional sensor sheet
"""


def parallel_with(config):
    return bus([res("R1", "4k7"), res("R31", "4k7", sheet="/Sensor/", sheet_file="sensor.kicad_sch"),
                res("R2", "4k7")],
               {"/SDA": ["R1.1", "R31.1"], "/SCL": ["R2.1"], "+3V3": ["R1.2", "R31.2", "R2.2"]},
               config=config)


def test_waived_finding_stays_in_the_report_marked_with_reason():
    (f,) = of(parallel_with(parse_config(WAIVE_PARALLEL)), "pullup-parallel")
    assert f.waived is True
    assert f.waiver_reason == "second pair sits on the optional sensor sheet"


def test_waived_finding_does_not_count():
    a = parallel_with(parse_config(WAIVE_PARALLEL))
    assert a.counts()["warnings"] == 0 and a.counts()["waived"] == 1


def test_waiver_for_other_refs_leaves_the_finding_live():
    other = WAIVE_PARALLEL.replace("[R1, R31]", "[R1, R99]")
    (f,) = of(parallel_with(parse_config(other)), "pullup-parallel")
    assert f.waived is False and f.waiver_reason is None
