"""The board route (a Design built through KiCad's pcbnew from the .kicad_pcb) against the
schematic route (the netlist kicad-cli 9.0.8 exported from the same project).

Sources of truth: the stored netlists in ../shared/real-designs/*/netlist-kicad-9.0.8,
KiCad 9.0.8's own pcbnew module reading the boards, and the engineer's oracle
tests/real/expected.yaml. usb-interface-explorer's board was saved by KiCad 8
(``generator_version "8.0"``), battery-bms-kicad9's by KiCad 9.

What differs between the routes, and why (seen on these two designs):
- the board does not carry the symbol library name (``lib_part``), so a part the catalog
  knows only by its symbol name is unknown on the board: glasgow's U3 (symbol CAT24C256,
  value BL24C256A-SFRC) gets no address there, so its address-pin findings become
  "address unknown". Buses, lines and pull-ups do not depend on it;
- KiCad's not-fitted attribute on glasgow's footprints lags the schematic's (the board was
  not updated after DNP was set); those parts still carry their DNP field, so they are
  not fitted on both routes;
- bms-c1's board names one USB-C pin net differently (Net-(J3-VBUS-PadA4) against the
  netlist's unconnected-(J3-VBUS-PadA4)); nothing on a bus.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from conftest import require_real
from netaudit.audit import audit_design
from netaudit.catalog import describe_parts
from netaudit.config import Config
from netaudit.readers import read_design
from netaudit.readers.pcbnew_board import read_board

pytestmark = [pytest.mark.kicad, pytest.mark.real]

# folder, board, stored netlist (kicad-cli 9.0.8 XML export of the schematic)
DESIGNS = {
    "glasgow": ("usb-interface-explorer", "glasgow.kicad_pcb", "netlist-kicad-9.0.8/glasgow.xml"),
    "bms-c1": ("battery-bms-kicad9", "bms-c1.kicad_pcb", "netlist-kicad-9.0.8/bms-c1.xml"),
}
ORACLE = yaml.safe_load((Path(__file__).resolve().parents[1] / "real" / "expected.yaml")
                        .read_text(encoding="utf-8"))
_CACHE: dict[str, tuple] = {}


def _routes(name, load_board, pcbnew_api):
    """(board design, netlist design, board audit, netlist audit) for one real design."""
    if name not in _CACHE:
        folder, board, netlist = DESIGNS[name]
        root = require_real(folder)
        by_board = read_board(load_board(root / board), pcbnew_api)
        by_netlist = read_design(root / netlist)
        _CACHE[name] = (by_board, by_netlist, audit_design(by_board, Config.empty()),
                        audit_design(by_netlist, Config.empty()))
    return _CACHE[name]


def _structure(audit) -> dict:
    """Bus -> segment -> line -> (nets, pull-ups as (ref, rail, fitted)), and the devices."""
    out = {}
    for bus in audit.buses:
        for seg in bus.segments:
            for line in seg.lines:
                out[(bus.name, seg.id, line.signal)] = (
                    tuple(sorted(line.nets)),
                    tuple(sorted((p.ref, p.rail, p.fitted) for p in line.pullups)))
            out[(bus.name, seg.id, "devices")] = tuple(sorted((d.ref, d.role) for d in seg.devices))
    return out


@pytest.mark.parametrize("name", sorted(DESIGNS))
def test_board_route_finds_the_same_buses_lines_pullups_and_devices(name, load_board, pcbnew_api):
    board_audit, netlist_audit = _routes(name, load_board, pcbnew_api)[2:]
    assert board_audit.buses, "no bus found through the board"
    assert _structure(board_audit) == _structure(netlist_audit)


@pytest.mark.parametrize("name", sorted(DESIGNS))
def test_board_route_lines_and_pullups_match_the_engineers_reading(name, load_board, pcbnew_api):
    folder = DESIGNS[name][0]
    expected = next(d for d in ORACLE["designs"] if d.get("folder") == folder
                    and "kicad-9" in d.get("netlist", ""))
    board_audit = _routes(name, load_board, pcbnew_api)[2]
    found = {}
    for bus in board_audit.buses:
        for seg in bus.segments:
            found[(tuple(sorted(seg.sda.nets)), tuple(sorted(seg.scl.nets)))] = seg
    for want in expected["segments"]:
        seg = found[(tuple(sorted(want["sda"])), tuple(sorted(want["scl"])))]
        for signal in ("sda", "scl"):
            line = getattr(seg, signal)
            fitted = [p for p in line.pullups if p.fitted]
            assert sorted(p.ref for p in fitted) == sorted(want["pullups"][signal])
            assert {p.rail for p in fitted} == {want["pullup_rail"][signal]}


@pytest.mark.parametrize("name", sorted(DESIGNS))
def test_findings_differ_only_for_parts_the_catalog_knows_by_symbol_name(name, load_board, pcbnew_api):
    by_board, by_netlist, board_audit, netlist_audit = _routes(name, load_board, pcbnew_api)
    on_board = describe_parts(by_board, Config.empty())
    in_netlist = describe_parts(by_netlist, Config.empty())
    recognised_differently = {ref for ref in set(on_board) | set(in_netlist)
                              if on_board.get(ref) != in_netlist.get(ref)}
    key = lambda f: (f.rule, f.refs, f.nets, f.segment)  # noqa: E731
    differing = {key(f) for f in board_audit.findings} ^ {key(f) for f in netlist_audit.findings}
    for rule, refs, _nets, _segment in differing:
        assert set(refs) <= recognised_differently, f"{rule} on {refs} differs between routes"
    for ref in recognised_differently:   # and each such part really has a symbol name only the netlist has
        assert by_netlist.part(ref).lib_part and not by_board.part(ref).lib_part


@pytest.mark.parametrize("name", sorted(DESIGNS))
def test_bus_net_pins_carry_the_same_pin_functions_and_types(name, load_board, pcbnew_api):
    by_board, by_netlist, _b, netlist_audit = _routes(name, load_board, pcbnew_api)
    bus_nets = {n for bus in netlist_audit.buses for seg in bus.segments for line in seg.lines
                for n in line.nets}
    assert bus_nets
    for net in bus_nets:
        assert set(by_board.net(net).nodes) == set(by_netlist.net(net).nodes), net


@pytest.mark.parametrize("name", sorted(DESIGNS))
def test_parts_keep_value_and_sheet_path(name, load_board, pcbnew_api):
    # glasgow's KiCad 8 board stores only a sheet's own name (IO_Buffer_A); bms-c1's KiCad 9
    # board stores the whole path (/BQ76952/). Both must read as the netlist writes them.
    by_board, by_netlist = _routes(name, load_board, pcbnew_api)[:2]
    assert {p.ref for p in by_board.parts} == {p.ref for p in by_netlist.parts}
    for part in by_netlist.parts:
        mine = by_board.part(part.ref)
        assert (mine.value, mine.sheet_path, mine.sheet_file) == \
            (part.value, part.sheet_path, part.sheet_file), part.ref


def test_repeated_sheet_instances_keep_their_own_paths(load_board, pcbnew_api):
    # ../shared/real-designs/usb-interface-explorer/SOURCE.txt: io_buffer.kicad_sch is placed
    # twice, as /IO_Banks/IO_Buffer_A/ and /IO_Banks/IO_Buffer_B/.
    by_board = _routes("glasgow", load_board, pcbnew_api)[0]
    paths = {p.sheet_path for p in by_board.parts if p.sheet_file == "io_buffer.kicad_sch"}
    assert paths == {"/IO_Banks/IO_Buffer_A/", "/IO_Banks/IO_Buffer_B/"}


def test_board_only_footprints_are_left_out(load_board, pcbnew_api):
    root = require_real("usb-interface-explorer")
    board = load_board(root / "glasgow.kicad_pcb")
    board_only = {str(fp.GetReference()) for fp in board.GetFootprints() if fp.IsBoardOnly()}
    assert "FID1" in board_only   # the board file marks its fiducials (attr ... board_only)
    design = _routes("glasgow", load_board, pcbnew_api)[0]
    assert not board_only & {p.ref for p in design.parts}


def test_net_names_lose_kicads_brace_escapes(load_board, pcbnew_api):
    # The board file writes Net-(U3-RT{slash}SYNC); the XML netlist Net-(U3-RT/SYNC)
    # (../shared/TOOLING.md, netlist details).
    by_board = _routes("bms-c1", load_board, pcbnew_api)[0]
    names = {n.name for n in by_board.nets}
    assert "Net-(U3-RT/SYNC)" in names
    assert not [n for n in names if "{slash}" in n]


def test_design_names_the_board_and_kicad_version(load_board, pcbnew_api):
    by_board = _routes("bms-c1", load_board, pcbnew_api)[0]
    assert by_board.format == "kicad-board"
    assert by_board.path.endswith("bms-c1.kicad_pcb")
    assert by_board.kicad_version.split(".")[0] == str(pcbnew_api.Version()).split(".")[0]
    assert by_board.title == "Libre Solar BMS C1"   # the board's title block


# -- the KiCad 7 API shape, with hand-made stand-ins (no KiCad 7 here) ----------------------
# Method names of KiCad 7's FOOTPRINT are from memory: a property map (GetProperties)
# instead of fields, and no IsDNP()/IsExcludedFromBOM()/IsBoardOnly() but attribute bits.

class _Path:
    def __init__(self, text):
        self.text = text

    def AsString(self):  # noqa: N802 - KiCad's names
        return self.text


class _LibId:
    def __init__(self, text):
        self.text = text

    def Format(self):  # noqa: N802
        return self.text


class _Pad:
    def __init__(self, number, net, function="", pin_type=""):
        self.number, self.net, self.function, self.pin_type = number, net, function, pin_type

    def GetNumber(self):  # noqa: N802
        return self.number

    def GetNetname(self):  # noqa: N802
        return self.net

    def GetNetCode(self):  # noqa: N802
        return 0 if not self.net else 7

    def GetPinFunction(self):  # noqa: N802
        return self.function

    def GetPinType(self):  # noqa: N802
        return self.pin_type


class _Kicad7Footprint:
    def __init__(self, ref, value, attributes, properties, path, pads):
        self.ref, self.value, self.attributes = ref, value, attributes
        self.properties, self.path, self.pads = properties, path, pads

    def GetReference(self):  # noqa: N802
        return self.ref

    def GetValue(self):  # noqa: N802
        return self.value

    def GetAttributes(self):  # noqa: N802
        return self.attributes

    def GetProperties(self):  # noqa: N802
        return dict(self.properties)

    def GetFPID(self):  # noqa: N802
        return _LibId("Resistor_SMD:R_0402")

    def GetPath(self):  # noqa: N802
        return _Path(self.path)

    def Pads(self):  # noqa: N802
        return list(self.pads)


class _Board:
    def __init__(self, footprints):
        self.footprints = footprints

    def GetFootprints(self):  # noqa: N802
        return list(self.footprints)

    def GetFileName(self):  # noqa: N802
        return "/tmp/handmade.kicad_pcb"


class _Api:   # the attribute bits (the same values KiCad 9's pcbnew module reports)
    FP_EXCLUDE_FROM_BOM = 0x08
    FP_BOARD_ONLY = 0x10
    FP_DNP = 0x100

    @staticmethod
    def GetBuildVersion():  # noqa: N802
        return "7.0.11"


def _kicad7_board():
    return _Board([
        _Kicad7Footprint("R7", "4k7", 0x02 | 0x100, {"Sheetname": "Sensors", "Sheetfile": "sensors.kicad_sch",
                                                     "ki_description": "Resistor", "MPN": "RC0402"},
                         "/aaaa/bbbb", [_Pad("1", "/Sensors/SDA"), _Pad("2", "+3V3")]),
        _Kicad7Footprint("U7", "TMP102", 0x02, {"Sheetname": "Sensors", "Sheetfile": "sensors.kicad_sch"},
                         "/aaaa/cccc", [_Pad("1", "/Sensors/SDA", "SDA", "bidirectional"),
                                        _Pad("3", "", "ALERT", "open_collector"),
                                        _Pad("", "")]),
        _Kicad7Footprint("FID1", "Fiducial", 0x02 | 0x08 | 0x10, {}, "", [_Pad("", "")]),
        _Kicad7Footprint("REF**", "Logo", 0x00, {}, "", []),
    ])


def test_kicad7_properties_and_attribute_bits_are_read():
    design = read_board(_kicad7_board(), _Api)
    r7 = design.part("R7")
    assert (r7.dnp, r7.exclude_from_bom, r7.fitted) == (True, False, False)
    assert r7.sheet_path == "/Sensors/" and r7.sheet_file == "sensors.kicad_sch"
    assert r7.description == "Resistor" and ("MPN", "RC0402") in r7.fields
    assert r7.footprint == "Resistor_SMD:R_0402"
    assert design.kicad_version == "7.0.11"


def test_board_only_and_unlinked_footprints_are_left_out_with_the_kicad7_api():
    design = read_board(_kicad7_board(), _Api)
    assert [p.ref for p in design.parts] == ["R7", "U7"]


def test_open_pin_gets_a_net_of_its_own_and_mechanical_pads_none():
    design = read_board(_kicad7_board(), _Api)
    # KiCad's own name for the net of an unconnected pin, as in the real netlists:
    # unconnected-(U3-A2-Pad3) in usb-interface-explorer's glasgow.xml
    assert design.net_of("U7", "3") == "unconnected-(U7-ALERT-Pad3)"
    assert [p.number for p in design.part("U7").pins] == ["1", "3"]
    assert {(n.ref, n.pin) for n in design.net("/Sensors/SDA").nodes} == {("R7", "1"), ("U7", "1")}
