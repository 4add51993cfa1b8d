"""The schematic reader against KiCad itself on real designs and KiCad's demo projects.

Ground truth: KiCad 9.0.8's own netlist export. For the real designs that is the netlist
kept beside them (netlist-kicad-9.0.8/, exported with `kicad-cli sch export netlist` from
the same files); for KiCad's demo projects a fresh kicad-cli export. Net by net (the same
pins, the same names, automatic names included) and part by part (every field the netlist
reader fills), the reader's Design must equal KiCad's.
"""

from __future__ import annotations

import json
import subprocess

import pytest

from conftest import KICAD_DEMOS, require_demos, require_real, run_cli
from netaudit.errors import InputError
from netaudit.readers import kicad_schematic, read_design
from netaudit.readers.kicad_netlist import read as read_netlist
from netaudit.readers.schematic.compare import compare

# (folder, root schematic inside it, KiCad 9.0.8 netlist inside it)
REAL = [
    ("battery-bms-kicad9", "bms-c1.kicad_sch", "netlist-kicad-9.0.8/bms-c1.net"),
    ("compute-module-baseboard", "jetson-nano-baseboard.kicad_sch",
     "netlist-kicad-9.0.8/jetson-nano-baseboard.net"),
    ("event-badge-i2c-mux", "tildagon-base/tildagon-base.kicad_sch",
     "netlist-kicad-9.0.8/tildagon-base.net"),
    ("event-badge-i2c-mux", "tildagon-base/tildagon-top.kicad_sch",
     "netlist-kicad-9.0.8/tildagon-top.net"),
    ("event-badge-i2c-mux", "hexpansion/hexpansion.kicad_sch", "netlist-kicad-9.0.8/hexpansion.net"),
    ("event-badge-kicad6", "mch2022.kicad_sch", "netlist-kicad-9.0.8/mch2022.net"),
    ("fpga-som-carrier", "kria-k26-devboard.kicad_sch", "netlist-kicad-9.0.8/kria-k26-devboard.net"),
    ("usb-analyzer-bus-aliases", "cynthion.kicad_sch", "netlist-kicad-9.0.8/cynthion.net"),
    ("usb-interface-explorer", "glasgow.kicad_sch", "netlist-kicad-9.0.8/glasgow.net"),
]


def demo_roots() -> list[str]:
    """The root schematic of every KiCad demo project (relative to the demos folder)."""
    if not KICAD_DEMOS.is_dir():
        return []
    return sorted(str(p.with_suffix(".kicad_sch").relative_to(KICAD_DEMOS))
                  for p in KICAD_DEMOS.rglob("*.kicad_pro") if p.with_suffix(".kicad_sch").is_file())


@pytest.mark.parametrize("folder,root,netlist", REAL, ids=[r[1] for r in REAL])
def test_real_design_equals_kicad_netlist(folder, root, netlist):
    base = require_real(folder)
    theirs = read_netlist((base / netlist).read_text(encoding="utf-8"), base / netlist, "")
    result = compare(kicad_schematic.read(base / root), theirs)
    assert result.nets > 0 and result.parts > 0
    assert result.equal and not result.auto_name_differences, result.summary()


def test_kicad10_preview_sheets_are_refused_cleanly():
    # revD0 was saved by a KiCad 10 development build (format 20260306), which kicad-cli
    # 9.0.8 refuses too.
    base = require_real("usb-interface-explorer") / "revD0"
    with pytest.raises(InputError, match="newer than KiCad 9.*--use-kicad-cli"):
        kicad_schematic.read(base / "glasgow_revD0.kicad_sch")


@pytest.mark.parametrize("root", demo_roots() or ["(demos not installed)"])
def test_kicad_demo_equals_kicad_cli_export(kicad_cli, tmp_path, root):
    demos = require_demos()
    sch = demos / root
    out = tmp_path / "export.net"
    proc = subprocess.run([kicad_cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o",
                           str(out), sch.name], cwd=str(sch.parent), capture_output=True,
                          text=True, timeout=600)
    if proc.returncode != 0 or not out.is_file():
        pytest.skip(f"kicad-cli cannot export {root}: {proc.stderr.strip()[-200:]}")
    theirs = read_netlist(out.read_text(encoding="utf-8"), out, "")
    result = compare(kicad_schematic.read(sch), theirs)
    assert result.equal and not result.auto_name_differences, result.summary()


def test_both_routes_give_the_same_audit(kicad_cli, tmp_path):
    base = require_real("battery-bms-kicad9")
    reports = []
    for flags in ([], ["--use-kicad-cli"]):
        out = tmp_path / f"report{len(reports)}.json"
        code, _, err = run_cli(["check", base / "bms-c1.kicad_pro", "--json", out, "--quiet",
                                "--fail-on", "never", *flags])
        assert code == 0, err
        doc = json.loads(out.read_text(encoding="utf-8"))
        doc["design"].pop("kicad_version")     # who made the Design: netaudit or kicad-cli
        doc.pop("tool", None)
        reports.append(doc)
    assert reports[0] == reports[1]
    assert reports[0]["buses"], "the design's I2C bus is found"


def test_project_folder_is_read_without_kicad_by_default():
    base = require_real("usb-interface-explorer")
    d = read_design(base / "glasgow.kicad_pro")
    assert d.format == "kicad-project" and d.tool.startswith("netaudit schematic reader")
    assert d.net("/SDA") is not None and len(d.parts) == 257


def test_reader_reads_each_schematic_file_once():
    base = require_real("usb-interface-explorer")
    from netaudit.readers.schematic.hierarchy import Hierarchy
    h = Hierarchy(base / "glasgow.kicad_sch")
    assert len(h.files) == 3 and len(h.instances) == 4      # io_buffer used twice, read once
