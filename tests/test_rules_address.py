"""The address and speed rules on hand-made boards: each with a case found and a case not.

Reserved addresses: UM10204 Rev. 6 section 3.1.12 Table 3 (Rev. 7 Table 4), "0000 XXX and
1111 XXX"; SMBus host 0x08, Alert Response 0x0C and device default 0x61 from the SMBus
reserved-address table as quoted in REFERENCES.md section 2.4. Mode ranks: UM10204 Rev. 6
Table 10 (f_SCL 100 kHz Standard-mode, 400 kHz Fast-mode). Part addresses follow the
catalog entries (TMP102 and PCA9555 tables from memory; PCF8574 100 kHz from the NXP
PCF8574 data sheet Rev. 5 Table 10).
"""

from __future__ import annotations

import json

import pytest
from handmade import build, ic, res

from netaudit.audit import audit_design
from netaudit.checks import all_rules
from netaudit.config import Config, parse_config
from netaudit.report.json import report
from netaudit.report.messages import phrase
from netaudit.report.text import render

ADDRESS_RULES = {"address-collision", "address-reserved", "address-strap-floating",
                 "address-unknown", "mux-address-overlap", "speed-unsupported"}


def board(targets, nets=None, extra_parts=()):
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND", "PA1"], pins_total=48),
             res("R1", "4k7"), res("R2", "4k7"), *targets, *extra_parts]
    all_nets = {"/SDA": ["U1.SDA", "R1.1"] + [f"{t.ref}.SDA" for t in targets],
                "/SCL": ["U1.SCL", "R2.1"] + [f"{t.ref}.SCL" for t in targets],
                "+3V3": ["U1.VDD", "R1.2", "R2.2"], "GND": ["U1.GND"]}
    for name, nodes in (nets or {}).items():
        all_nets.setdefault(name, []).extend(nodes)
    return build(parts, all_nets)


def found(design, config_text: str | None = None, rule: str | None = None):
    cfg = parse_config(config_text) if config_text else Config.empty()
    a = audit_design(design, cfg)
    return [f for f in a.findings if f.rule in ADDRESS_RULES and (rule is None or f.rule == rule)]


def tmp102(ref):
    return ic(ref, "TMP102", ["SDA", "SCL", "V+", "GND", "ADD0"])


def pca9555(ref):
    return ic(ref, "PCA9555", ["SDA", "SCL", "VDD", "GND", "A0", "A1", "A2"])


def test_all_six_rules_are_registered():
    assert ADDRESS_RULES <= set(all_rules())


# -- address-collision -----------------------------------------------------------------

def test_same_strapped_part_twice_collides():
    d = board([tmp102("U2"), tmp102("U3")], {"GND": ["U2.ADD0", "U3.ADD0"]})
    (f,) = found(d, rule="address-collision")
    assert f.refs == ("U2", "U3") and f.data["addresses"] == ["0x48"]
    assert set(f.nets) == {"/SDA", "/SCL"}


def test_same_part_with_different_straps_does_not_collide():
    d = board([tmp102("U2"), tmp102("U3")], {"GND": ["U2.ADD0"], "+3V3": ["U3.ADD0"]})
    assert found(d) == []


def test_block_select_eeprom_collides_with_an_eeprom_in_its_range():
    # 24xx16 answers 0x50-0x57 (from memory); 24LC256 with A0 high is 0x51 (DS20001203X 2.1)
    d = board([ic("U2", "24LC16B", ["SDA", "SCL", "VCC", "GND"]),
               ic("U3", "24LC256", ["SDA", "SCL", "VCC", "GND", "A0", "A1", "A2"])],
              {"+3V3": ["U3.A0"], "GND": ["U3.A1", "U3.A2"]})
    (f,) = found(d, rule="address-collision")
    assert f.refs == ("U2", "U3") and f.data["addresses"] == ["0x51"]


def test_seven_and_ten_bit_addresses_never_collide():
    d = board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"]), ic("U3", "WIDGET", ["SDA", "SCL", "VDD", "GND"])])
    cfg = ("version: 1\nparts:\n  - match: {ref: U2}\n    address: 0x50\n"
           "  - match: {ref: U3}\n    address: {ten_bit: 0x050}\n")
    assert found(d, cfg) == []


def test_devices_on_different_buses_do_not_collide():
    parts = [ic("U1", "MCU", ["I2C1_SDA", "I2C1_SCL", "I2C2_SDA", "I2C2_SCL", "VDD", "GND"], pins_total=48),
             tmp102("U2"), tmp102("U3")] + [res(f"R{i}", "4k7") for i in range(1, 5)]
    d = build(parts, {"/A_SDA": ["U1.I2C1_SDA", "U2.SDA", "R1.1"], "/A_SCL": ["U1.I2C1_SCL", "U2.SCL", "R2.1"],
                      "/B_SDA": ["U1.I2C2_SDA", "U3.SDA", "R3.1"], "/B_SCL": ["U1.I2C2_SCL", "U3.SCL", "R4.1"],
                      "+3V3": ["U1.VDD", "R1.2", "R2.2", "R3.2", "R4.2"],
                      "GND": ["U1.GND", "U2.ADD0", "U3.ADD0"]})
    assert found(d, rule="address-collision") == []


# -- multiplexer domains ---------------------------------------------------------------

def mux_board(ch0_strap, ch1_strap, upstream_extra=None):
    """U4 TCA9548A at 0x70 (A pins to GND; 1110 A2 A1 A0, from memory), a TMP102 on each of
    channels 0 and 1, translator U7 on the main segment with a TMP102 (U8) behind it."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U4", "TCA9548A", ["SDA", "SCL", "SD0", "SC0", "SD1", "SC1", "VCC", "GND", "A0", "A1", "A2"]),
             tmp102("U5"), tmp102("U6"), tmp102("U8"),
             ic("U7", "PCA9306", ["SDA1", "SCL1", "SDA2", "SCL2", "VREF1", "VREF2", "EN", "GND"])] + \
        [res(f"R{i}", "4k7") for i in range(1, 9)]
    nets = {"/SDA": ["U1.SDA", "U4.SDA", "U7.SDA1", "R1.1"], "/SCL": ["U1.SCL", "U4.SCL", "U7.SCL1", "R2.1"],
            "/CH0_SDA": ["U4.SD0", "U5.SDA", "R3.1"], "/CH0_SCL": ["U4.SC0", "U5.SCL", "R4.1"],
            "/CH1_SDA": ["U4.SD1", "U6.SDA", "R5.1"], "/CH1_SCL": ["U4.SC1", "U6.SCL", "R6.1"],
            "/LV_SDA": ["U7.SDA2", "U8.SDA", "R7.1"], "/LV_SCL": ["U7.SCL2", "U8.SCL", "R8.1"],
            "+3V3": ["U1.VDD", "U4.VCC", "U7.VREF2", "U7.EN", "R1.2", "R2.2", "R3.2", "R4.2", "R5.2", "R6.2"],
            "+1V8": ["U7.VREF1", "R7.2", "R8.2"],
            "GND": ["U1.GND", "U4.GND", "U7.GND", "U4.A0", "U4.A1", "U4.A2"]}
    for net, node in (("ch0", "U5.ADD0"), ("ch1", "U6.ADD0"), ("up", "U8.ADD0")):
        tie = {"ch0": ch0_strap, "ch1": ch1_strap, "up": upstream_extra or "+3V3"}[net]
        nets.setdefault(tie, []).append(node)
    return build(parts, nets)


def test_same_address_on_two_mux_channels_does_not_collide():
    assert found(mux_board("GND", "GND")) == []


def test_device_on_channel_at_the_address_of_an_upstream_device_overlaps():
    # U8 behind the translator is upstream of the mux, at 0x49 (ADD0 to V+); U5 on channel 0 too
    (f,) = found(mux_board("+3V3", "GND"))
    assert f.rule == "mux-address-overlap" and f.refs == ("U5", "U8")
    assert f.data["mux"] == "U4" and f.data["channel"] == "0" and f.data["with_mux"] == []


def test_device_behind_a_translator_collides_with_the_main_segment():
    # a translator does not split the address domain (CONTRACT.md topology semantics)
    d = mux_board("GND", "GND")
    extra = tmp102("U9")
    parts = list(d.parts) + [extra]
    nets = {n.name: [f"{x.ref}.{x.pin}" for x in n.nodes] for n in d.nets}
    nets["/SDA"].append("U9.SDA")
    nets["/SCL"].append("U9.SCL")
    nets["+3V3"].append("U9.ADD0")          # 0x49, as U8 behind the translator
    (f,) = found(build(parts, nets))
    assert f.rule == "address-collision" and f.refs == ("U8", "U9")


def test_device_on_channel_at_the_mux_address_overlaps_and_does_not_collide():
    chip = ic("U5", "WIDGET", ["SDA", "SCL", "VDD", "GND"])
    d = mux_board("GND", "GND")
    parts = [chip if p.ref == "U5" else p for p in d.parts]
    nets = {n.name: [f"{x.ref}.{x.pin}" for x in n.nodes if not (x.ref == "U5" and x.pin == "5")]
            for n in d.nets}
    cfg = "version: 1\nparts:\n  - match: {ref: U5}\n    address: 0x70\n"
    fs = found(build(parts, nets), cfg)
    assert [f.rule for f in fs] == ["mux-address-overlap"]
    assert fs[0].refs == ("U4", "U5") and fs[0].data["with_mux"] == ["U4"]
    assert "multiplexer U4" in phrase(fs[0])


# -- address-reserved ------------------------------------------------------------------

@pytest.mark.parametrize("address, meaning", [
    (0x7A, "10-bit target addressing"),   # 1111 0XX
    (0x7C, "device ID"),                  # 1111 1XX
    (0x00, "general call"),               # 0000 000
    (0x05, "Hs-mode"),                    # 0000 1XX
])
def test_address_in_the_reserved_groups_is_reported(address, meaning):
    d = board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"])])
    (f,) = found(d, f"version: 1\nparts:\n  - match: {{ref: U2}}\n    address: {address}\n")
    assert f.rule == "address-reserved" and meaning in f.data["meaning"]


@pytest.mark.parametrize("address", [0x08, 0x77])
def test_ordinary_addresses_are_not_reserved_on_an_i2c_bus(address):
    d = board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"])])
    assert found(d, f"version: 1\nparts:\n  - match: {{ref: U2}}\n    address: {address}\n") == []


@pytest.mark.parametrize("address, meaning", [(0x08, "SMBus host"), (0x0C, "Alert Response"),
                                              (0x61, "Device Default")])
def test_smbus_addresses_are_reserved_on_an_smbus_bus(address, meaning):
    d = board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"])])
    cfg = (f"version: 1\ndefaults: {{mode: smbus}}\nparts:\n  - match: {{ref: U2}}\n"
           f"    address: {address}\n    max_mode: smbus\n")
    (f,) = found(d, cfg)
    assert f.rule == "address-reserved" and meaning in f.data["meaning"] and f.data["smbus"]


def test_ten_bit_address_is_not_checked_against_the_seven_bit_groups():
    d = board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"])])
    assert found(d, "version: 1\nparts:\n  - match: {ref: U2}\n    address: {ten_bit: 0x07A}\n") == []


# -- address-strap-floating ------------------------------------------------------------

def test_open_address_pin_is_reported_with_the_addresses_it_could_give():
    d = board([pca9555("U2")], {"+3V3": ["U2.A0"], "GND": ["U2.A1"]})
    (f,) = found(d)
    assert f.rule == "address-strap-floating" and f.data["pin"] == "A2"
    assert f.data["possible_addresses"] == ["0x21", "0x25"]


def test_tied_address_pins_are_not_floating():
    d = board([pca9555("U2")], {"+3V3": ["U2.A0"], "GND": ["U2.A1", "U2.A2"]})
    assert found(d) == []


def test_open_pin_reached_only_through_a_not_fitted_resistor_names_its_net():
    d = board([pca9555("U2")], {"+3V3": ["U2.A0", "R9.2"], "GND": ["U2.A1"], "/A2": ["U2.A2", "R9.1"]},
              [res("R9", "10k", dnp=True)])
    (f,) = found(d)
    assert f.rule == "address-strap-floating" and f.nets == ("/A2",)


# -- address-unknown -------------------------------------------------------------------

def test_unknown_target_is_reported_as_info():
    (f,) = found(board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"])]))
    assert f.rule == "address-unknown" and f.severity.value == "info" and f.data["reason"] == "no-entry"


def test_controller_and_connector_need_no_address():
    d = board([], {"/SDA": ["J1.1"], "/SCL": ["J1.2"]},
              [ic("J1", "Conn_01x02", ["P1", "P2"], lib="Connector")])
    roles = {dev.ref: dev.role for s in audit_design(d, Config.empty()).buses[0].segments for dev in s.devices}
    assert roles == {"U1": "controller", "J1": "connector"}
    assert found(d) == []


def test_address_from_the_symbol_field_is_known():
    part = ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"], fields=(("I2C_ADDR", "0x33"),))
    assert found(board([part])) == []


def test_strap_driven_by_the_controller_is_unknown_not_floating():
    d = board([tmp102("U2")], {"/ADDR": ["U2.ADD0", "U1.PA1"]})
    (f,) = found(d)
    assert f.rule == "address-unknown" and f.data["reason"] == "strap-unresolved"
    assert f.nets == ("/ADDR",) and "driven by U1" in phrase(f)


# -- speed-unsupported -----------------------------------------------------------------

def pcf8574():
    return ic("U2", "PCF8574", ["SDA", "SCL", "VDD", "GND", "A0", "A1", "A2"])


def strapped():
    return {"GND": ["U2.A0", "U2.A1", "U2.A2"]}


def test_standard_mode_part_on_a_fast_mode_bus_is_reported():
    (f,) = found(board([pcf8574()], strapped()))
    assert f.rule == "speed-unsupported" and f.refs == ("U2",)
    assert (f.data["max_hz"], f.data["bus_hz"]) == (100e3, 400e3)   # UM10204 Rev. 6 Table 10


def test_standard_mode_part_on_a_standard_mode_bus_is_fine():
    assert found(board([pcf8574()], strapped()), "version: 1\ndefaults: {mode: standard}\n") == []


def test_fast_mode_part_on_a_fast_mode_plus_bus_is_reported():
    d = board([tmp102("U2")], {"GND": ["U2.ADD0"]})
    (f,) = found(d, "version: 1\ndefaults: {mode: fast-plus}\n")
    assert f.rule == "speed-unsupported" and f.data["max_mode"] == "fast"


def test_config_max_mode_overrides_the_catalog():
    cfg = "version: 1\nparts:\n  - match: {value: PCF8574}\n    max_mode: fast\n"
    assert found(board([pcf8574()], strapped()), cfg) == []


# -- reports ---------------------------------------------------------------------------

def collision_audit():
    return audit_design(board([tmp102("U2"), tmp102("U3")], {"GND": ["U2.ADD0", "U3.ADD0"]}), Config.empty())


def test_every_address_rule_has_its_own_phrase():
    f = next(f for f in collision_audit().findings if f.rule == "address-collision")
    assert phrase(f) == "U2 and U3 both answer 0x48 on I2C"


def test_json_report_lists_address_domains_with_their_collisions():
    doc = json.loads(json.dumps(report(collision_audit())))
    (dom,) = doc["address_domains"]
    assert dom["id"] == dom["bus"] == "I2C"
    assert [(d["ref"], d["address"], d["address_source"]) for d in dom["devices"]] == \
        [("U2", "0x48", "catalog-straps"), ("U3", "0x48", "catalog-straps")]
    assert dom["collisions"] == [{"rule": "address-collision", "refs": ["U2", "U3"],
                                  "addresses": ["0x48"], "waived": False}]


def test_text_report_prints_each_domain_map():
    text = render(collision_audit())
    assert "addresses on I2C: 0x48 U2 (clash), 0x48 U3 (clash)" in text
    mux_text = render(audit_design(mux_board("GND", "+3V3"), Config.empty()))
    assert "addresses on I2C/U4.ch0 (plus I2C): 0x48 U5" in mux_text
    assert "addresses on I2C/U4.ch1 (plus I2C): 0x49 U6 (clash)" in mux_text
