"""Reading addresses: the symbol field, straps to rails, ground and bus lines, straps through
resistors, open and unreadable straps, which source wins, and address domains.

Boards are hand-made (invented). Part values borrow real part numbers so the catalog
applies; each expected address names the datasheet rule it follows ("from memory" where
recalled, as the catalog entry says).
"""

from __future__ import annotations

import pytest
from handmade import build, ic, res

from netaudit.addressing import (ADDRESS_FIELD, address_domains, field_address, home_zones,
                                 resolve_buses, zones)
from netaudit.audit import audit_design
from netaudit.catalog import describe_parts
from netaudit.config import Config, parse_config
from netaudit.errors import InputError
from netaudit.model import Part
from netaudit.topology.buses import find_buses
from netaudit.topology.rails import find_rails


def board(targets, nets=None, extra_parts=(), config: Config | None = None):
    """A controller U1 with 4k7 pull-ups to +3V3 and the given targets on /SDA, /SCL.
    ``nets`` adds or extends nets (lists of REF.PIN)."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND", "PA1", "PA2"], pins_total=48),
             res("R1", "4k7"), res("R2", "4k7"), *targets, *extra_parts]
    all_nets = {"/SDA": ["U1.SDA", "R1.1"] + [f"{t.ref}.SDA" for t in targets],
                "/SCL": ["U1.SCL", "R2.1"] + [f"{t.ref}.SCL" for t in targets],
                "+3V3": ["U1.VDD", "R1.2", "R2.2"], "GND": ["U1.GND"]}
    for name, nodes in (nets or {}).items():
        all_nets.setdefault(name, []).extend(nodes)
    return build(parts, all_nets)


def resolve(design, config: Config | None = None):
    config = config or Config.empty()
    rails = find_rails(design, config.rails)
    parts = describe_parts(design, config)
    roles = {r: i.role for r, i in parts.items() if i.role}
    topo = find_buses(design, rails, roles=roles, bus_configs=config.buses)
    return {ref: r for (_bus, ref), r in resolve_buses(design, topo.buses, rails, parts).items()}


def tmp102(ref="U2"):
    return ic(ref, "TMP102", ["SDA", "SCL", "V+", "GND", "ADD0", "ALERT"])


# -- the symbol field ------------------------------------------------------------------

@pytest.mark.parametrize("text, value", [("0x48", 0x48), ("0X4a", 0x4A), ("48h", 0x48), (" 2Fh ", 0x2F)])
def test_symbol_field_takes_hex_forms(text, value):
    assert field_address(Part("U9", "X", fields=((ADDRESS_FIELD, text),))) == value


def test_empty_symbol_field_gives_no_address():
    assert field_address(Part("U9", "X", fields=((ADDRESS_FIELD, ""),))) is None


def test_eight_bit_address_in_symbol_field_is_bad_input():
    with pytest.raises(InputError, match=r"0x48 if '0x90' is the 8-bit"):
        field_address(Part("U9", "X", fields=((ADDRESS_FIELD, "0x90"),)), "board.net")


def test_bare_number_in_symbol_field_is_bad_input():
    with pytest.raises(InputError, match="I2C_ADDR"):
        field_address(Part("U9", "X", fields=((ADDRESS_FIELD, "72"),)), "board.net")


# -- straps ----------------------------------------------------------------------------

@pytest.mark.parametrize("net, address", [("GND", 0x48), ("+3V3", 0x49), ("/SDA", 0x4A), ("/SCL", 0x4B)])
def test_multi_level_pin_reads_ground_supply_and_bus_lines(net, address):
    # TI TMP102 address table (from memory): ADD0 to GND/V+/SDA/SCL -> 0x48/0x49/0x4A/0x4B
    nets = {"+3V3": ["U2.V+"], "GND": ["U2.GND"]}
    nets.setdefault(net, []).append("U2.ADD0")
    r = resolve(board([tmp102()], nets))["U2"]
    assert (r.address, r.source) == (address, "catalog-straps")


def test_strap_through_a_fitted_resistor_reads_its_far_end():
    d = board([tmp102()], {"/ADDR": ["U2.ADD0", "R9.1"], "+3V3": ["R9.2"]}, [res("R9", "10k")])
    r = resolve(d)["U2"]
    assert r.address == 0x49 and r.straps[0].via == ("R9",)


def test_strap_through_a_zero_ohm_link_is_the_net_it_joins():
    d = board([tmp102()], {"/ADDR": ["U2.ADD0", "R9.1"], "GND": ["R9.2"]}, [res("R9", "0R")])
    assert resolve(d)["U2"].address == 0x48


def test_strap_to_a_rail_of_unknown_voltage_is_high():
    # /VIO_B is a supply (a power pin sits on it) whose name says no voltage
    d = board([tmp102()], {"/VIO_B": ["U2.ADD0", "U9.VDD"]}, [ic("U9", "LDO", ["VDD", "GND"])])
    assert resolve(d)["U2"].address == 0x49


def test_strap_on_no_net_is_floating():
    d = board([tmp102()])
    r = resolve(d)["U2"]
    assert r.address is None and r.reason == "strap-floating"
    assert [s.pin for s in r.floating] == ["ADD0"]


def test_strap_reaching_only_a_not_fitted_resistor_is_floating():
    d = board([tmp102()], {"/ADDR": ["U2.ADD0", "R9.1"], "+3V3": ["R9.2"]}, [res("R9", "10k", dnp=True)])
    r = resolve(d)["U2"]
    assert r.reason == "strap-floating" and r.floating[0].net == "/ADDR"


def test_strap_driven_by_another_part_cannot_be_read():
    d = board([tmp102()], {"/ADDR_SEL": ["U2.ADD0", "U1.PA1"]})
    r = resolve(d)["U2"]
    assert r.reason == "strap-unresolved" and "U1" in r.straps[0].why and not r.floating


def test_strap_pulled_both_ways_cannot_be_read():
    d = board([tmp102()], {"/ADDR": ["U2.ADD0", "R8.1", "R9.1"], "+3V3": ["R8.2"], "GND": ["R9.2"]},
              [res("R8", "10k"), res("R9", "10k")])
    assert resolve(d)["U2"].reason == "strap-unresolved"


def test_binary_pin_tied_to_a_bus_line_cannot_be_read():
    # PCA9555 A pins are plain binary inputs: SDA is not one of their states
    exp = ic("U2", "PCA9555", ["SDA", "SCL", "VDD", "GND", "A0", "A1", "A2"])
    d = board([exp], {"/SDA": ["U2.A0"], "GND": ["U2.A1", "U2.A2"]})
    r = resolve(d)["U2"]
    assert r.reason == "strap-unresolved" and "SDA" in r.straps[0].why


def test_binary_pins_set_their_bits():
    # PCA9555: 0100 A2 A1 A0 (from memory): A0 high, A2 high -> 0x25
    exp = ic("U2", "PCA9555", ["SDA", "SCL", "VDD", "GND", "A0", "A1", "A2"])
    d = board([exp], {"+3V3": ["U2.A0", "U2.A2"], "GND": ["U2.A1"]})
    assert resolve(d)["U2"].address == 0x25


def test_open_pin_that_reads_low_gives_an_address_and_stays_reported():
    # Catalyst CAT24C256 pin description: A0-A2 have on-chip pull-down resistors -> 0x50 + A0
    eep = ic("U2", "CAT24C256", ["SDA", "SCL", "VCC", "GND", "A0", "A1", "A2"])
    d = board([eep], {"+3V3": ["U2.A0"], "GND": ["U2.A1"]})
    r = resolve(d)["U2"]
    assert r.address == 0x51 and [s.pin for s in r.floating] == ["A2"]


def test_open_pin_with_an_address_of_its_own_is_not_floating():
    # DAC121C081 SNAS395D Table 1 (same family): ADR0 floating -> 0x0C
    dac = ic("U2", "DAC081C081CIMK", ["SDA", "SCL", "VA", "GND", "ADR0", "VOUT"])
    r = resolve(board([dac]))["U2"]
    assert r.address == 0x0C and r.floating == ()


def test_floating_strap_lists_the_addresses_it_could_give():
    exp = ic("U2", "PCA9555", ["SDA", "SCL", "VDD", "GND", "A0", "A1", "A2"])
    d = board([exp], {"+3V3": ["U2.A0"], "GND": ["U2.A1"]})
    assert resolve(d)["U2"].candidates == (0x21, 0x25)


def test_symbol_without_the_address_pin_leaves_the_address_unknown():
    d = board([ic("U2", "TMP102", ["SDA", "SCL", "V+", "GND"])])
    assert resolve(d)["U2"].reason == "pin-missing"


def test_pin_name_alternative_is_an_address_pin():
    # LSM6DS3 (from memory): SDO/SA0 high -> 0x6B
    imu = ic("U2", "LSM6DS3", ["SDA", "SCL", "VDD", "GND", "SDO/SA0"])
    assert resolve(board([imu], {"+3V3": ["U2.SDO/SA0"]}))["U2"].address == 0x6B


def test_resistor_coded_pin_through_a_resistor_cannot_be_read():
    # PAC195x (from memory): ADDRSEL's address depends on the resistor value to GND
    mon = ic("U2", "PAC1954", ["SDA", "SCL", "VDD", "GND", "ADDRSEL"])
    d = board([mon], {"/SEL": ["U2.ADDRSEL", "R9.1"], "GND": ["R9.2"]}, [res("R9", "499")])
    assert resolve(d)["U2"].reason == "strap-unresolved"
    d = board([mon], {"GND": ["U2.ADDRSEL"]})
    assert resolve(d)["U2"].address == 0x10


def test_block_select_eeprom_answers_eight_addresses():
    # 24xx16: the low three address bits select the block (from memory) -> 0x50..0x57
    r = resolve(board([ic("U2", "24LC16B", ["SDA", "SCL", "VCC", "GND"])]))["U2"]
    assert sorted(a for _t, a in r.occupied) == list(range(0x50, 0x58))


# -- which source wins -----------------------------------------------------------------

def test_symbol_field_wins_over_the_catalog():
    part = ic("U2", "TMP102", ["SDA", "SCL", "V+", "GND", "ADD0"], fields=((ADDRESS_FIELD, "4Bh"),))
    r = resolve(board([part], {"GND": ["U2.ADD0"]}))["U2"]
    assert (r.address, r.source) == (0x4B, "symbol-field")


def test_config_wins_over_the_symbol_field():
    part = ic("U2", "TMP102", ["SDA", "SCL", "V+", "GND", "ADD0"], fields=((ADDRESS_FIELD, "0x4B"),))
    cfg = parse_config("version: 1\nparts:\n  - match: {ref: U2}\n    address: 0x4A\n")
    r = resolve(board([part], {"GND": ["U2.ADD0"]}), cfg)["U2"]
    assert (r.address, r.source) == (0x4A, "config")


def test_config_strap_form_reads_the_straps():
    part = ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND", "SEL"])
    cfg = parse_config("version: 1\nparts:\n  - match: {value: WIDGET}\n"
                       "    address: {pin: SEL, map: {GND: 0x30, VDD: 0x31}}\n")
    r = resolve(board([part], {"+3V3": ["U2.SEL"]}), cfg)["U2"]
    assert (r.address, r.source) == (0x31, "config-straps")


def test_part_nobody_knows_has_no_address():
    r = resolve(board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"])]))["U2"]
    assert r.address is None and r.reason == "no-entry"


def test_controller_is_not_given_an_address():
    assert resolve(board([tmp102()], {"GND": ["U2.ADD0"]}))["U1"].reason == "not-addressed"


def test_audit_fills_device_address_source_and_speed():
    a = audit_design(board([tmp102()], {"GND": ["U2.ADD0"]}), Config.empty())
    dev = next(d for s in a.buses[0].segments for d in s.devices if d.ref == "U2")
    assert (dev.address, dev.address_10bit, dev.address_source, dev.max_mode) == \
        (0x48, False, "catalog-straps", "fast")


def test_ten_bit_address_from_config_is_marked():
    cfg = parse_config("version: 1\nparts:\n  - match: {ref: U2}\n    address: {ten_bit: 0x2A5}\n")
    a = audit_design(board([ic("U2", "WIDGET", ["SDA", "SCL", "VDD", "GND"])]), cfg)
    dev = next(d for s in a.buses[0].segments for d in s.devices if d.ref == "U2")
    assert (dev.address, dev.address_10bit) == (0x2A5, True)


# -- domains ---------------------------------------------------------------------------

def mux_board():
    """U1 controller; U4 two-channel multiplexer; U5 behind channel 0, U6 behind channel 1;
    translator U7 on the main segment with U8 behind it."""
    parts = [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
             ic("U4", "TCA9548A", ["SDA", "SCL", "SD0", "SC0", "SD1", "SC1", "VCC", "GND", "A0", "A1", "A2"]),
             ic("U5", "WIDGET", ["SDA", "SCL", "VDD", "GND"]), ic("U6", "WIDGET", ["SDA", "SCL", "VDD", "GND"]),
             ic("U7", "PCA9306", ["SDA1", "SCL1", "SDA2", "SCL2", "VREF1", "VREF2", "EN", "GND"]),
             ic("U8", "WIDGET", ["SDA", "SCL", "VDD", "GND"])] + \
        [res(f"R{i}", "4k7") for i in range(1, 9)]
    return build(parts, {
        "/SDA": ["U1.SDA", "U4.SDA", "U7.SDA1", "R1.1"], "/SCL": ["U1.SCL", "U4.SCL", "U7.SCL1", "R2.1"],
        "/CH0_SDA": ["U4.SD0", "U5.SDA", "R3.1"], "/CH0_SCL": ["U4.SC0", "U5.SCL", "R4.1"],
        "/CH1_SDA": ["U4.SD1", "U6.SDA", "R5.1"], "/CH1_SCL": ["U4.SC1", "U6.SCL", "R6.1"],
        "/LV_SDA": ["U7.SDA2", "U8.SDA", "R7.1"], "/LV_SCL": ["U7.SCL2", "U8.SCL", "R8.1"],
        "+3V3": ["U1.VDD", "U4.VCC", "U5.VDD", "U6.VDD", "U7.VREF2", "U7.EN", "R1.2", "R2.2", "R3.2",
                 "R4.2", "R5.2", "R6.2", "U4.A0", "U4.A1", "U4.A2"],
        "+1V8": ["U7.VREF1", "U8.VDD", "R7.2", "R8.2"],
        "GND": ["U1.GND", "U4.GND", "U5.GND", "U6.GND", "U7.GND", "U8.GND"]})


def the_bus():
    a = audit_design(mux_board(), Config.empty())
    assert len(a.buses) == 1
    return a.buses[0]


def test_translator_does_not_split_the_address_space():
    bus = the_bus()
    zone_map, zone_of = zones(bus)
    behind = next(s for s in bus.segments if s.upstream and s.upstream.kind == "translator")
    root = next(s for s in bus.segments if s.upstream is None)
    assert zone_of[behind.id] == zone_of[root.id]


def test_each_mux_channel_is_its_own_zone_under_the_root():
    bus = the_bus()
    zone_map, _ = zones(bus)
    channels = [z for z in zone_map.values() if z.mux == "U4"]
    assert sorted(z.channel for z in channels) == ["0", "1"]
    root = next(s for s in bus.segments if s.upstream is None).id
    assert all(z.parent == root for z in channels)


def test_mux_address_lives_upstream():
    bus = the_bus()
    root = next(s for s in bus.segments if s.upstream is None).id
    home = home_zones(bus)
    assert home["U4"] == root and home["U8"] == root and home["U5"] != root


def test_channel_domains_hold_their_channel_and_the_upstream_but_not_each_other():
    doms = [d for d in address_domains([the_bus()]) if len(d.zones) == 2]
    refs = [{dev.ref for dev in d.devices} for d in doms]
    assert len(doms) == 2
    assert all({"U4", "U7", "U8"} <= r for r in refs)
    assert sum("U5" in r for r in refs) == 1 and sum("U6" in r for r in refs) == 1
    assert not any({"U5", "U6"} <= r for r in refs)
