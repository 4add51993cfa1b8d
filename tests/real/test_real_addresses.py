"""Addresses on the real designs match what an engineer reads off their straps.

The oracle is tests/real/expected.yaml (``addresses:`` per segment, read from the netlists;
evidence in tests/real/EXPECTATIONS.md). Its addresses apply each part's datasheet address
rule to the strap nets; almost all of those rules are recalled ("from memory, verify" in the
oracle and in the catalog), the INA233 table is TI SBOS790A Table 6-2 and the DAC081C081
one comes from the DAC121C081 datasheet SNAS395D Table 1 (same family).
"""

from __future__ import annotations

import subprocess
from pathlib import Path

import pytest
import yaml

from conftest import require_demos, require_real
from netaudit.addressing import address_domains, format_address, resolve_buses
from netaudit.audit import audit_design
from netaudit.catalog import describe_parts
from netaudit.config import Config
from netaudit.readers import read_design
from netaudit.topology.rails import find_rails

ORACLE = yaml.safe_load((Path(__file__).with_name("expected.yaml")).read_text(encoding="utf-8"))
DESIGNS = [d for d in ORACLE["designs"] if "folder" in d]
_AUDITS: dict[str, object] = {}


def _audit(folder: str, netlist: str):
    key = f"{folder}/{netlist}"
    if key not in _AUDITS:
        root = require_real(folder)
        _AUDITS[key] = audit_design(read_design(root / netlist), Config.empty())
    return _AUDITS[key]


def _devices(audit) -> dict[str, object]:
    return {d.ref: d for b in audit.buses for s in b.segments for d in s.devices}


def _rows():
    rows = []
    for entry in DESIGNS:
        for seg in entry["segments"]:
            for row in seg.get("addresses", []):
                if row["address"] is not None:
                    rows.append(pytest.param(entry["folder"], entry["netlist"], row,
                                             id=f"{entry['folder']}-{Path(entry['netlist']).stem}-{row['ref']}"))
    return rows


@pytest.mark.parametrize("folder, netlist, row", _rows())
def test_address_matches_the_oracle(folder, netlist, row):
    devices = _devices(_audit(folder, netlist))
    if row["ref"] not in devices:
        # U7 on tildagon-base is not fitted (dnp): no device, no address to compare
        assert "DNP" in row["strap"] or "dnp" in row["strap"], row
        return
    dev = devices[row["ref"]]
    assert format_address(dev.address, dev.address_10bit) == row["address"], (row["ref"], row["source"])


# -- usb-interface-explorer: one sheet placed twice ------------------------------------

GLASGOW = ("usb-interface-explorer", "netlist-kicad-9.0.8/glasgow.net")


@pytest.mark.parametrize("a, b, addr_a, addr_b", [
    ("U21", "U12", "0x40", "0x41"),   # INA233 A1/A0: GND/GND vs GND/VS (TI SBOS790A Table 6-2)
    ("U20", "U13", "0x0E", "0x0D"),   # DAC081C081 ADR0: VA vs GND (SNAS395D Table 1, same family)
    ("U19", "U5", "0x20", "0x21"),    # PCA6408A ADDR: GND vs VIOB (NXP PCA6408A Rev. 1 Table 5)
])
def test_parts_placed_twice_by_the_reused_sheet_resolve_by_their_straps(a, b, addr_a, addr_b):
    # Read from the netlist: the sheet pins ADRADC, ADRDAC, ADRPULL are wired differently for
    # /IO_Banks/IO_Buffer_A/ and /IO_Banks/IO_Buffer_B/, so the straps really differ.
    audit = _audit(*GLASGOW)
    devs = _devices(audit)
    assert format_address(devs[a].address) == addr_a and format_address(devs[b].address) == addr_b
    assert devs[a].address_source == devs[b].address_source == "catalog-straps"
    assert not [f for f in audit.findings if f.rule == "address-collision" and {a, b} <= set(f.refs)]


def test_glasgow_open_eeprom_pins_are_reported_and_read_low():
    # CAT24M01 A2 and BL24C256A A1/A2 are open (A1 only through DNP R40); the catalog's
    # onsemi/Catalyst entries say their address pins are pulled low on chip (CAT24C256:
    # "These pins have on-chip pull-down resistors"; CAT24M01 from memory)
    audit = _audit(*GLASGOW)
    floating = sorted((f.refs[0], f.data["pin"], f.nets) for f in audit.findings
                      if f.rule == "address-strap-floating")
    assert floating == [("U2", "A2", ("unconnected-(U2-A2-Pad3)",)),
                        ("U3", "A1", ("Net-(U3-A1)",)),
                        ("U3", "A2", ("unconnected-(U3-A2-Pad3)",))]
    assert all(f.data["reads_low"] for f in audit.findings if f.rule == "address-strap-floating")


def test_glasgow_has_no_address_clash_at_all():
    audit = _audit(*GLASGOW)
    assert not [f for f in audit.findings if f.rule in ("address-collision", "mux-address-overlap")]


# -- event-badge-i2c-mux: identical expanders and mux domains --------------------------

TILDAGON = ("event-badge-i2c-mux", "netlist-kicad-9.0.8/tildagon-base.net")


def test_three_identical_expanders_resolve_to_three_addresses():
    # AW9523B AD1/AD0 straps: GND/GND, GND/3V3_SYS, 3V3_SYS/GND -> 0x58, 0x59, 0x5A
    # (0x58 + 2*AD1 + AD0, from memory)
    devs = _devices(_audit(*TILDAGON))
    assert [format_address(devs[r].address) for r in ("U24", "U25", "U26")] == ["0x58", "0x59", "0x5A"]


def test_usb_c_controllers_on_different_mux_channels_do_not_collide():
    audit = _audit(*TILDAGON)
    devs = _devices(audit)
    assert devs["U2"].address == devs["U5"].address == 0x22   # FUSB302B (from memory)
    assert not [f for f in audit.findings if f.rule in ("address-collision", "mux-address-overlap")]


def test_mux_channels_form_separate_address_domains():
    audit = _audit(*TILDAGON)
    doms = address_domains(audit.buses)
    # host side + eight channels; the mux U4 (0x77) in every domain, U2 and U5 never together
    assert len(doms) == 9
    assert all("U4" in {d.ref for d in dom.devices} for dom in doms)
    holding = [dom.id for dom in doms if {"U2", "U5"} & {d.ref for d in dom.devices}]
    assert len(holding) == 2
    assert not [dom for dom in doms if {"U2", "U5"} <= {d.ref for d in dom.devices}]


def test_nothing_on_a_channel_shares_the_mux_address():
    devs = _devices(_audit(*TILDAGON))
    assert devs["U4"].address == 0x77          # TCA9548A A2A1A0 all high (from memory)
    others = [r for r, d in devs.items() if r != "U4" and d.address == 0x77]
    assert others == []


# -- every real design -----------------------------------------------------------------

@pytest.mark.parametrize("entry", DESIGNS, ids=lambda e: f"{e['folder']}/{Path(e['netlist']).name}")
def test_no_real_design_reports_an_address_clash(entry):
    # The oracle expects no collision or mux overlap anywhere (expected_rules lists none).
    audit = _audit(entry["folder"], entry["netlist"])
    assert not [f for f in audit.findings if f.rule in ("address-collision", "mux-address-overlap")]


@pytest.mark.parametrize("entry", DESIGNS, ids=lambda e: f"{e['folder']}/{Path(e['netlist']).name}")
def test_no_real_design_runs_a_device_too_fast(entry):
    # All buses run at the default Fast-mode; no part on them is limited to Standard-mode
    # by its catalog entry.
    audit = _audit(entry["folder"], entry["netlist"])
    assert not [f for f in audit.findings if f.rule == "speed-unsupported"]


# -- KiCad's own demo projects (exported with kicad-cli) -------------------------------

@pytest.mark.parametrize("folder, root", [("video", "video.kicad_sch"),
                                          ("pic_programmer", "pic_programmer.kicad_sch")])
def test_kicad_demo_eeprom_answers_its_block_range(kicad_cli, tmp_path, folder, root):
    # expected.yaml demos: U1 24C16 (video) and 24Cxx drawn with the 24C16 symbol
    # (pic_programmer): A0-A2 unused block-select bits, so 0x50-0x57 (from memory, verify)
    sch = require_demos() / folder / root
    if not sch.is_file():
        pytest.skip(f"{sch} not installed")
    out = tmp_path / f"{folder}.net"
    subprocess.run([kicad_cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o", str(out), str(sch)],
                   check=True, capture_output=True, timeout=300)
    design = read_design(out)
    audit = audit_design(design, Config.empty())
    assert format_address(_devices(audit)["U1"].address) == "0x50"
    rails = find_rails(design, {})
    resolved = resolve_buses(design, audit.buses, rails, describe_parts(design, Config.empty()))
    (u1,) = [r for (_b, ref), r in resolved.items() if ref == "U1"]
    assert sorted(a for _ten, a in u1.occupied) == list(range(0x50, 0x58))
