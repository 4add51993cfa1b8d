"""Bus finding on KiCad's own demo projects, exported with the real kicad-cli.

No demo names a net SDA or SCL (../shared/real-designs/README.md), so every bus here must be
found through pin functions, and SDA/SCL-named pins used for other jobs must make no bus.
"""

from __future__ import annotations

import subprocess

import pytest

from conftest import require_demos
from netaudit.audit import audit_design
from netaudit.config import Config
from netaudit.readers import read_design


def _audit_demo(kicad_cli: str, tmp_path, folder: str, root: str):
    demos = require_demos()
    sch = demos / folder / root
    if not sch.is_file():
        pytest.skip(f"{sch} not installed")
    out = tmp_path / f"{folder}.net"
    subprocess.run([kicad_cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o", str(out), str(sch)],
                   check=True, capture_output=True, timeout=300)
    return audit_design(read_design(out), Config.empty())


def test_video_finds_its_eeprom_bus_through_pin_functions_only(kicad_cli, tmp_path):
    audit = _audit_demo(kicad_cli, tmp_path, "video", "video.kicad_sch")
    assert len(audit.buses) == 1
    bus = audit.buses[0]
    assert bus.evidence == "pin-function"
    seg = bus.segments[0]
    # Read off the demo's schematic: U1 24C16 EEPROM on the PCI bridge U11's serial EEPROM
    # port; R29 (SDA) and R28 (SCL), both "2,2K", to +5V.
    assert {d.ref for d in seg.devices} == {"U1", "U11"}
    assert [(p.ref, p.ohms, p.rail) for p in seg.sda.fitted_pullups] == [("R29", 2200.0, "+5V")]
    assert [(p.ref, p.ohms, p.rail) for p in seg.scl.fitted_pullups] == [("R28", 2200.0, "+5V")]
    assert all(n.startswith("Net-(") for n in seg.sda.nets + seg.scl.nets)  # no SDA/SCL net names
    assert not [f for f in audit.findings if f.rule.startswith("pullup-")]


def test_stickhub_pins_named_sda_for_other_jobs_make_no_bus(kicad_cli, tmp_path):
    audit = _audit_demo(kicad_cli, tmp_path, "stickhub", "StickHub.kicad_sch")
    # The USB hub's "TEST#/SDA" multi-function pin is not used as a bus.
    assert audit.buses == ()
    assert not [f for f in audit.findings if f.rule == "bus-line-unpaired"]


def test_pic_programmer_bus_has_series_drivers_and_no_pullups(kicad_cli, tmp_path):
    audit = _audit_demo(kicad_cli, tmp_path, "pic_programmer", "pic_programmer.kicad_sch")
    assert len(audit.buses) == 1
    seg = audit.buses[0].segments[0]
    # Read off the demo: the 24Cxx EEPROM U1 and the PIC sockets share /DATA-RB7 and
    # /CLOCK-RB6, driven from the 74HC125 U2 through series resistors R12 and R13 (470 each).
    assert "/DATA-RB7" in seg.sda.nets and "/CLOCK-RB6" in seg.scl.nets
    assert [(s.ref, s.ohms) for s in seg.sda.series] == [("R12", 470.0)]
    assert [(s.ref, s.ohms) for s in seg.scl.series] == [("R13", 470.0)]
    assert {"U1", "U2"} <= {d.ref for d in seg.devices}
    missing = {f.line for f in audit.findings if f.rule == "pullup-missing"}
    assert missing == {"sda", "scl"}
