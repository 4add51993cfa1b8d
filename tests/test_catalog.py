"""The part catalog: the shipped YAML loads, every entry says where its data came from,
parts are found by value, part number or symbol, specific entries win over general ones,
bad catalog files are one clear error, and netaudit.yaml wins over the catalog.

Check values name their source; "from memory" marks values recalled from datasheets.
"""

from __future__ import annotations

import pytest

from netaudit.catalog import describe_parts
from netaudit.catalog.loader import ENV_VAR, PinTiesAddress, entries, lookup, parse_catalog
from netaudit.config import FixedAddress, PinBitsAddress, PinTieAddress, parse_config
from netaudit.errors import InputError
from netaudit.model import Design, Part


def part(value="", lib_part="", mpn="", ref="U1"):
    fields = (("MPN", mpn),) if mpn else ()
    return Part(ref, value, lib_part=lib_part, fields=fields)


# -- the shipped catalog ---------------------------------------------------------------

def test_shipped_catalog_loads_with_entries():
    assert len(entries()) >= 40


def test_every_entry_says_where_its_data_came_from():
    for e in entries():
        src = e.info.source
        assert src, e.name
        # seen in a datasheet, recalled (to verify), or a trade fact without a source
        assert ("seen" in src or "from memory, verify" in src or "verify" in src
                or "common practice, no source" in src), (e.name, src)


def test_entry_names_are_unique():
    names = [e.name for e in entries()]
    assert len(names) == len(set(names))


def test_part_found_by_value_ignoring_case():
    info = lookup(part("tmp102aidrlr"))
    assert info is not None and info.catalog_entry == "TMP102"


def test_part_found_by_part_number_field():
    info = lookup(part("TEMP_SENSOR", mpn="TMP102AIDRLR"))
    assert info is not None and info.catalog_entry == "TMP102"


def test_part_found_by_symbol_name():
    # glasgow's BL24C256A is drawn with the CAT24C256 symbol
    info = lookup(part("BL24C256A-SFRC", lib_part="CAT24C256"))
    assert info is not None and isinstance(info.address, PinBitsAddress)


def test_unknown_part_is_not_found():
    assert lookup(part("LUXSENSE-A1")) is None


def test_specific_entry_wins_over_general_one():
    # PCF8574A base 0x38 (from memory), PCF8574 base 0x20 (Philips PCF8574 spec Fig. 11:
    # slave address 0 1 0 0 A2 A1 A0)
    assert lookup(part("PCF8574AT")).address.base == 0x38
    assert lookup(part("PCF8574T")).address.base == 0x20


def test_usb_c_controller_variants_have_their_own_addresses():
    # onsemi FUSB302B ordering information (from memory): plain 0x22, -01 0x23, -10 0x24
    assert lookup(part("FUSB302BMPX")).address == FixedAddress(0x22)
    assert lookup(part("FUSB302B01MPX")).address == FixedAddress(0x23)
    assert lookup(part("FUSB302B10MPX")).address == FixedAddress(0x24)


def test_pcf8574_is_standard_mode_only():
    # NXP PCF8574/PCF8574A data sheet Rev. 5, Table 10: fSCL max 100 kHz
    assert lookup(part("PCF8574")).max_mode == "standard"


def test_ina233_table_gives_sixteen_addresses():
    # TI INA233 datasheet SBOS790A Table 6-2: A1/A0 to GND, VS, SDA, SCL -> 0x40..0x4F
    form = lookup(part("INA233")).address
    assert isinstance(form, PinTiesAddress)
    levels = ("GND", "VDD", "SDA", "SCL")   # VS is the part's supply: tie VDD
    got = [form.address_for({"A1": a1, "A0": a0}) for a1 in levels for a0 in levels]
    assert got == list(range(0x40, 0x50))


def test_mux_entries_have_the_mux_role():
    for value in ("TCA9548APWR", "PCA9547BS", "PI4MSD5V9540BUEX"):
        assert lookup(part(value)).role == "mux", value


def test_controllers_have_the_controller_role():
    for value in ("ESP32-S3-PICO-1-N8R2", "RP2040", "ICE40HX8K-BG121", "CY7C68013A-56LTX"):
        assert lookup(part(value)).role == "controller", value


def test_demo_parts_are_all_known():
    # fixtures/demo/README.md device table, except the two invented parts
    for value in ("SHT31-DIS", "24LC256", "PCA9555", "ADS1115", "PCF8574", "PCA9306", "BME280",
                  "MCP23017", "VL53L0X", "TCA9548A", "BMP390", "SCD41", "TMP102"):
        assert lookup(part(value)) is not None, value


# -- catalog files -------------------------------------------------------------------

GOOD = """\
- name: WIDGET
  match: {value: ["WIDGET-*"]}
  role: target
  address: {pin: ADDR, map: {OPEN: 0x10, GND: 0x11, VDD: 0x12}}
  max_mode: fast
  source: "invented test entry"
"""


def test_open_is_a_pin_state_in_a_catalog_map():
    (e,) = parse_catalog(GOOD, "w.yaml")
    assert e.info.address == PinTieAddress("ADDR", {"OPEN": 0x10, "GND": 0x11, "VDD": 0x12})
    assert e.info.address_origin == "catalog" and e.info.source == "invented test entry"


def test_ties_form_parses_per_pin_offsets():
    text = GOOD.replace("{pin: ADDR, map: {OPEN: 0x10, GND: 0x11, VDD: 0x12}}",
                        "{base: 0x40, ties: {A0: {GND: 0, VDD: 1}, A1: {GND: 0, VDD: 2}}}")
    (e,) = parse_catalog(text, "w.yaml")
    assert e.info.address.address_for({"A0": "VDD", "A1": "VDD"}) == 0x43


@pytest.mark.parametrize("bad, words", [
    (GOOD.replace("  max_mode: fast\n", "  max_mode: turbo\n"), ["w.yaml:5", "max_mode", "turbo"]),
    (GOOD.replace('  source: "invented test entry"\n', ""), ["w.yaml:1", "source", "missing"]),
    (GOOD.replace("  role: target\n", "  role: target\n  colour: red\n"), ["w.yaml:4", "colour"]),
    (GOOD.replace("0x12", "0x92"), ["w.yaml:4", "0x92"]),
    (GOOD.replace("  role: target\n", "  role: target\n  span: 4\n").replace(
        "  address: {pin: ADDR, map: {OPEN: 0x10, GND: 0x11, VDD: 0x12}}\n", ""), ["span", "address"]),
    (GOOD.replace("{pin: ADDR, map: {OPEN: 0x10, GND: 0x11, VDD: 0x12}}",
                  "{base: 0x7C, ties: {A0: {GND: 0, SCL: 3}, A1: {GND: 0, VDD: 4}}}"), ["7-bit"]),
    ("- name: [oops\n", ["w.yaml", "YAML"]),
])
def test_bad_catalog_entry_is_one_clear_error(bad, words):
    with pytest.raises(InputError) as err:
        parse_catalog(bad, "w.yaml")
    text = str(err.value)
    assert "\n" not in text
    for w in words:
        assert w in text, (w, text)


def test_user_catalog_file_wins_over_the_shipped_one(tmp_path, monkeypatch):
    own = tmp_path / "ours.yaml"
    own.write_text(GOOD.replace('["WIDGET-*"]', '["TMP102*"]'), encoding="utf-8")
    monkeypatch.setenv(ENV_VAR, str(tmp_path))
    assert lookup(part("TMP102")).catalog_entry == "WIDGET"
    monkeypatch.delenv(ENV_VAR)
    assert lookup(part("TMP102")).catalog_entry == "TMP102"


def test_missing_user_catalog_file_is_bad_input(tmp_path, monkeypatch):
    monkeypatch.setenv(ENV_VAR, str(tmp_path / "nothing.yaml"))
    with pytest.raises(InputError, match="nothing.yaml"):
        lookup(part("TMP102"))


# -- config wins over catalog ------------------------------------------------------------

def test_config_address_wins_and_keeps_catalog_speed():
    d = Design("x.net", "kicad-netlist", parts=(part("TMP102", ref="U5"),))
    cfg = parse_config("version: 1\nparts:\n  - match: {ref: U5}\n    address: 0x4B\n")
    info = describe_parts(d, cfg)["U5"]
    assert info.address == FixedAddress(0x4B) and info.address_origin == "config"
    assert info.max_mode == "fast" and info.catalog_entry == "TMP102"


def test_catalog_address_keeps_its_origin_when_config_sets_only_speed():
    d = Design("x.net", "kicad-netlist", parts=(part("TMP102", ref="U5"),))
    cfg = parse_config("version: 1\nparts:\n  - match: {ref: U5}\n    max_mode: standard\n")
    info = describe_parts(d, cfg)["U5"]
    assert info.address_origin == "catalog" and info.max_mode == "standard"


@pytest.mark.parametrize("seed", range(30))
def test_catalog_globs_match_exactly_as_fnmatch_does(seed):
    """The catalog's quick glob matching (prefix, exact name, else a regular expression)
    agrees with the standard library's fnmatch.fnmatchcase, the rules the format names."""
    import fnmatch
    import random

    from netaudit.catalog.loader import _Globs

    rng = random.Random(seed)
    alphabet = ["A", "B", "1", "*", "?", "[AB]", "[!A]", "-", "."]
    globs = tuple("".join(rng.choice(alphabet) for _ in range(rng.randrange(1, 6))) for _ in range(3))
    matcher = _Globs(globs)
    for _ in range(200):
        text = "".join(rng.choice("AB1-.C") for _ in range(rng.randrange(0, 7)))
        assert matcher.match(text) == any(fnmatch.fnmatchcase(text, g) for g in globs), (globs, text)
