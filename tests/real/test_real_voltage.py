"""Voltage domains on the real designs and a KiCad demo, against the engineer's oracle.

The oracle is tests/real/expected.yaml (``io_rails`` per segment: the net each device's
supply pin sits on, as an engineer reads it off the netlist; ``rail_volts``: what the
rail's name says). Evidence for each entry: tests/real/EXPECTATIONS.md.
"""

from __future__ import annotations

import subprocess
from pathlib import Path

import pytest
import yaml

from conftest import require_demos, require_real
from netaudit.audit import audit_design
from netaudit.config import Config, parse_config
from netaudit.readers import read_design

ORACLE = yaml.safe_load((Path(__file__).with_name("expected.yaml")).read_text(encoding="utf-8"))
DESIGNS = [d for d in ORACLE["designs"] if "folder" in d]
VOLTAGE_RULES = ("rail-overvoltage", "rail-high-level-unmet", "rail-voltage-unknown", "translator-wiring")


def _id(entry) -> str:
    return f"{entry['folder']}/{Path(entry['netlist']).name}" + ("-kicad5" if "legacy" in entry["netlist"] else "")


def _entry(folder, netlist_part):
    return next(e for e in DESIGNS if e["folder"] == folder and netlist_part in e["netlist"])


def _run(entry, config=None):
    folder = require_real(entry["folder"])
    return audit_design(read_design(folder / entry["netlist"]), config or Config.empty())


def _segment(audit, sda_nets):
    return next(s for b in audit.buses for s in b.segments if sorted(s.sda.nets) == sorted(sda_nets))


def _device(seg, ref):
    return next(d for d in seg.devices if d.ref == ref)


@pytest.mark.parametrize("entry", [e for e in DESIGNS if any(s.get("io_rails") for s in e["segments"])], ids=_id)
def test_each_devices_supply_is_the_one_an_engineer_reads(entry):
    audit = _run(entry)
    for exp in entry["segments"]:
        seg = _segment(audit, exp["sda"])
        for ref, rail in (exp.get("io_rails") or {}).items():
            if ref in exp.get("not_fitted_devices", []):
                continue  # a DNP part is no device of the segment
            assert _device(seg, ref).io_rail == rail, (exp["label"], ref)


@pytest.mark.parametrize("entry", DESIGNS, ids=_id)
def test_supply_voltage_is_the_one_the_rail_name_gives(entry):
    audit = _run(entry)
    for exp in entry["segments"]:
        seg = _segment(audit, exp["sda"])
        for d in seg.devices:
            if d.io_rail in exp.get("rail_volts", {}):
                assert d.io_volts == exp["rail_volts"][d.io_rail], (exp["label"], d.ref)


@pytest.mark.parametrize("entry", DESIGNS, ids=_id)
def test_no_voltage_error_where_the_engineer_finds_none(entry):
    # No design's expected_rules lists a voltage error: every bus part sits on its own
    # segment's rail, or a translator or repeater joins the rails.
    audit = _run(entry)
    errors = [f for f in audit.findings if f.rule in ("rail-overvoltage", "rail-high-level-unmet", "translator-wiring")]
    assert errors == []


@pytest.mark.parametrize("netlist", ["netlist-kicad-9.0.8", "legacy-kicad5"])
def test_fpga_carrier_translator_sides_have_their_own_rails(netlist):
    entry = _entry("fpga-som-carrier", netlist)
    audit = _run(entry)
    low, high = (s for s in entry["segments"] if "PS I2C" in s["label"])    # 1.8 V side, then 3.3 V side
    ref = next(iter(low["io_rails"]))                  # U12 (KiCad 9) / U10 (KiCad 5)
    lo, hi = _segment(audit, low["sda"]), _segment(audit, high["sda"])
    # 1.8 V side: VREF1 on PS_1V8. 3.3 V side: VREF2 on its own node, which reaches
    # PS_3V3 through the 200 kΩ of the PCA9306 reference circuit.
    assert (_device(lo, ref).io_rail, _device(lo, ref).io_volts) == ("PS_1V8", 1.8)
    assert (_device(hi, ref).io_rail, _device(hi, ref).io_volts) == (high["io_rails"][ref], 3.3)
    assert (hi.upstream.ref, hi.upstream.kind) == (ref, "translator")
    assert [f for f in audit.findings if f.rule == "translator-wiring"] == []


def test_compute_module_repeater_sides_and_unnamed_5v_rail():
    entry = _entry("compute-module-baseboard", "jetson")
    audit = _run(entry)
    a_side = _segment(audit, ["/Display/TMDS_SDA", "Net-(IC6-SDAA)"])
    b_side = _segment(audit, ["/Display/TMDS_SDA_5V0"])
    assert (_device(a_side, "IC6").io_rail, _device(a_side, "IC6").io_volts) == ("3V3_SYS", 3.3)
    # V_{CC(B)} on HDMI_PWR, 5V0_SYS through a ferrite: the name carries no voltage.
    assert (_device(b_side, "IC6").io_rail, _device(b_side, "IC6").io_volts) == ("HDMI_PWR", None)
    (f,) = [f for f in audit.findings if f.rule == "rail-voltage-unknown" and f.data.get("rail") == "HDMI_PWR"]
    assert "HDMI_PWR" in f.nets and {"IC6", "R5", "R6"} <= set(f.refs)
    assert f.data["config_hint"] == "rails:\n  HDMI_PWR: <volts>"


def test_compute_module_named_rail_settles_the_repeater_b_side():
    entry = _entry("compute-module-baseboard", "jetson")
    audit = _run(entry, parse_config("version: 1\nrails:\n  HDMI_PWR: 5.0\n"))
    b_side = _segment(audit, ["/Display/TMDS_SDA_5V0"])
    assert _device(b_side, "IC6").io_volts == 5.0
    assert not [f for f in audit.findings if f.rule == "rail-voltage-unknown" and f.data.get("rail") == "HDMI_PWR"]
    assert not [f for f in audit.findings if f.rule in ("translator-wiring", "rail-overvoltage",
                                                        "rail-high-level-unmet")]


def test_devices_without_a_readable_supply_are_reported_not_guessed():
    # BQ76952 (battery-bms U4) has no I/O supply pin; BQ25895 (tildagon-base U3) has only
    # VBUS and regulator outputs (expected.yaml io_rails: null for both).
    for folder, netlist, ref in (("battery-bms-kicad9", "bms-c1", "U4"), ("event-badge-i2c-mux", "tildagon-base", "U3")):
        audit = _run(_entry(folder, netlist))
        hits = [f for f in audit.findings if f.rule == "rail-voltage-unknown" and f.refs == (ref,)]
        assert [f.data["problem"] for f in hits] == ["none-found"], (folder, ref)


def _pic_programmer(kicad_cli, tmp_path, config=None):
    demos = require_demos()
    out = tmp_path / "pic_programmer.net"
    subprocess.run([kicad_cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o", str(out),
                    str(demos / "pic_programmer" / "pic_programmer.kicad_sch")],
                   check=True, capture_output=True, timeout=300)
    return audit_design(read_design(out), config or Config.empty())


def test_pic_programmer_is_reported_as_an_engineer_reads_it(kicad_cli, tmp_path):
    entry = next(d for d in ORACLE["demos"] if d["project"].startswith("pic_programmer"))
    exp = entry["segments"][0]
    audit = _pic_programmer(kicad_cli, tmp_path)
    seg = _segment(audit, exp["sda"])
    assert {d.ref: d.io_rail for d in seg.devices if d.ref in exp["io_rails"]} == exp["io_rails"]
    # Neither rail name carries a voltage (VCC is the 7805's output, VCC_PIC is VCC switched):
    # each is named once with the line to add.
    unknown = {f.data["rail"]: f for f in audit.findings if f.rule == "rail-voltage-unknown"}
    assert set(unknown) == {"VCC", "/pic_sockets/VCC_PIC"}
    assert set(unknown["/pic_sockets/VCC_PIC"].refs) == {"U1", "U5", "U6"}
    # No pull-up, so nothing to compare with: no voltage error, no translator.
    assert not [f for f in audit.findings if f.rule in ("rail-overvoltage", "rail-high-level-unmet",
                                                        "translator-wiring")]
    # The socket parts' rail is switched by Q3 while U2 keeps driving the lines through 470 Ω.
    notes = [n for line in seg.lines for n in line.budget.notes if "can be off" in n]
    assert notes and all("/pic_sockets/VCC_PIC" in n and "Q3" in n for n in notes)


def test_pic_programmer_with_named_rails_has_no_unknown_rail(kicad_cli, tmp_path):
    cfg = parse_config('version: 1\nrails:\n  VCC: 5\n  "/pic_sockets/VCC_PIC": 5\n')
    audit = _pic_programmer(kicad_cli, tmp_path, cfg)
    assert not [f for f in audit.findings if f.rule in VOLTAGE_RULES]
