"""The board reader against KiCad's own board loader (pcbnew) on real boards.

Ground truth: KiCad 9's ``pcbnew`` module, run by Debian's /usr/bin/python3 in a subprocess,
loads the same file and reports per net the summed ``GetLength()`` of its tracks (in nm)
and its number of vias (``GetClass() == "PCB_VIA"``), and the board thickness from
``GetDesignSettings().GetBoardThickness()``.
"""

from __future__ import annotations

import json
import math
import subprocess
from functools import lru_cache
from pathlib import Path

import pytest

from conftest import require_demos, require_real
from netaudit.audit import audit
from netaudit.config import Config
from netaudit.readers import kicad_board
from netaudit.readers.common import unescape_kicad

pytestmark = pytest.mark.real

KICAD_PYTHON = "/usr/bin/python3"
TOLERANCE_M = 0.01e-3   # the bound: within 0.01 mm

PCBNEW_DUMP = """
import json, sys
import pcbnew
board = pcbnew.LoadBoard(sys.argv[1])
nets = {}
for item in board.GetTracks():
    entry = nets.setdefault(item.GetNetname(), [0.0, 0])
    if item.GetClass() == "PCB_VIA":
        entry[1] += 1
    else:
        entry[0] += item.GetLength()
print(json.dumps({"thickness_nm": board.GetDesignSettings().GetBoardThickness(), "nets": nets}))
"""


@lru_cache(maxsize=None)
def _pcbnew_available() -> str:
    try:
        proc = subprocess.run([KICAD_PYTHON, "-c", "import pcbnew"], capture_output=True,
                              text=True, timeout=120, check=False)
    except (OSError, subprocess.SubprocessError) as exc:
        return f"{KICAD_PYTHON} cannot run: {exc}"
    if proc.returncode != 0:
        return f"{KICAD_PYTHON} cannot import pcbnew (KiCad's Python module is not installed)"
    return ""


@lru_cache(maxsize=None)
def pcbnew_figures(path: str) -> dict:
    why = _pcbnew_available()
    if why:
        pytest.skip(why)
    proc = subprocess.run([KICAD_PYTHON, "-c", PCBNEW_DUMP, path], capture_output=True, text=True,
                          timeout=600, check=False)
    assert proc.returncode == 0, proc.stderr[-2000:]
    data = json.loads(proc.stdout.strip().splitlines()[-1])
    # KiCad keeps a "/" in a net name as "{slash}" (TOOLING.md); the reader unescapes names.
    data["nets"] = {unescape_kicad(name): figures for name, figures in data["nets"].items() if name}
    return data


BOARDS = ["usb-interface-explorer/glasgow.kicad_pcb", "battery-bms-kicad9/bms-c1.kicad_pcb"]


@lru_cache(maxsize=None)
def ours(path: str):
    return kicad_board.read_board(Path(path))


def board_path(name: str) -> str:
    return str(require_real(name).resolve())


@pytest.mark.parametrize("name", BOARDS)
def test_routed_length_per_net_equals_pcbnew(name):
    path = board_path(name)
    theirs, board = pcbnew_figures(path)["nets"], ours(path)
    routed = {net for net, (length_nm, _vias) in theirs.items() if length_nm > 0}
    assert routed == {net for net in board.nets if board.routed_length_m(net) > 0}
    off = {net: (board.routed_length_m(net), theirs[net][0] * 1e-9) for net in routed
           if abs(board.routed_length_m(net) - theirs[net][0] * 1e-9) > TOLERANCE_M}
    assert not off


@pytest.mark.parametrize("name", BOARDS)
def test_via_count_per_net_equals_pcbnew(name):
    path = board_path(name)
    theirs, board = pcbnew_figures(path)["nets"], ours(path)
    counted = {net: vias for net, (_length, vias) in theirs.items() if vias}
    assert counted == {net: board.via_count(net) for net in board.nets if board.via_count(net)}


@pytest.mark.parametrize("name", BOARDS)
def test_stackup_thickness_equals_pcbnew_board_thickness(name):
    path = board_path(name)
    thickness_m = pcbnew_figures(path)["thickness_nm"] * 1e-9
    board = ours(path)
    assert not board.stackup.assumed
    assert board.stackup.thickness_m == pytest.approx(thickness_m, abs=1e-9)
    assert board.thickness_m == pytest.approx(thickness_m, abs=1e-9)


# KiCad 9's own demo boards (Debian package kicad-demos): more layer counts and stackups.
DEMO_BOARDS = ["video/video.kicad_pcb", "vme-wren/vme-wren.kicad_pcb", "interf_u/interf_u.kicad_pcb",
               "kit-dev-coldfire-xilinx_5213/kit-dev-coldfire-xilinx_5213.kicad_pcb",
               "tiny_tapeout/tinytapeout-demo.kicad_pcb", "multichannel/multichannel_mixer.kicad_pcb"]


@pytest.mark.parametrize("name", DEMO_BOARDS)
def test_kicad_demo_boards_match_pcbnew(name):
    path = require_demos() / name
    if not path.is_file():
        pytest.skip(f"KiCad demo {name} not installed")
    figures = pcbnew_figures(str(path))
    board = kicad_board.read_board(path)
    theirs = figures["nets"]
    assert {n for n, (length, vias) in theirs.items() if length or vias} == board.nets
    assert all(abs(board.routed_length_m(n) - length * 1e-9) <= TOLERANCE_M and board.via_count(n) == vias
               for n, (length, vias) in theirs.items())
    # pcbnew's board thickness is the file's (general (thickness)); interf_u's stackup sums
    # to 1.6000 mm beside a general thickness of 1.6002 mm, so only this one is compared.
    assert board.thickness_m == pytest.approx(figures["thickness_nm"] * 1e-9, abs=1e-9)


def test_arc_lengths_equal_pcbnew(tmp_path):
    # Our own small board with arcs of several sweeps (real boards here route no arcs), each
    # written as KiCad writes one: start, the arc's midpoint, end, to the nanometre. Each
    # stands 100 mm from the next: KiCad gives touching tracks without pads one net.
    shapes = [(0, 0, 10, 0, 90), (0, 0, 10, 90, -90), (0, 0, 10, 0, -270), (25, 10, 12.5, 30, 120),
              (3, 4, 2.345678, 200, 179.5), (50, 0, 40, 10, 3)]   # centre x, y, radius, start°, sweep°

    def point(cx, cy, r, degrees):
        return (round(cx + r * math.cos(math.radians(degrees)), 6),
                round(cy + r * math.sin(math.radians(degrees)), 6))
    arcs = [(point(cx + 100 * i, cy, r, a), point(cx + 100 * i, cy, r, a + sweep / 2),
             point(cx + 100 * i, cy, r, a + sweep))
            for i, (cx, cy, r, a, sweep) in enumerate(shapes)]
    items = "\n".join(
        f'(arc (start {s[0]} {s[1]}) (mid {m[0]} {m[1]}) (end {e[0]} {e[1]}) '
        f'(width 0.2) (layer "F.Cu") (net {i + 1}) (uuid "00000000-0000-0000-0000-00000000000{i}"))'
        for i, (s, m, e) in enumerate(arcs))
    nets = "\n".join(f'(net {i + 1} "/A{i}")' for i in range(len(arcs)))
    path = tmp_path / "arcs.kicad_pcb"
    path.write_text(f"""(kicad_pcb (version 20240108) (generator "pcbnew") (generator_version "8.0")
  (general (thickness 1.6))
  (layers (0 "F.Cu" signal) (31 "B.Cu" signal) (44 "Edge.Cuts" user))
  (setup (pad_to_mask_clearance 0))
  (net 0 "")
  {nets}
  {items}
)
""", encoding="utf-8")
    theirs = pcbnew_figures(str(path))["nets"]
    board = kicad_board.read_board(path)
    assert len(theirs) == len(arcs)
    for net, (length_nm, _vias) in theirs.items():
        assert board.routed_length_m(net) == pytest.approx(length_nm * 1e-9, abs=TOLERANCE_M), net


# -- the audit of a board alone against the audit of the schematic's own netlist export --

BOARD_AND_NETLIST = {
    "bms-c1": ("battery-bms-kicad9/bms-c1.kicad_pcb", "battery-bms-kicad9/netlist-kicad-9.0.8/bms-c1.net"),
    "glasgow": ("usb-interface-explorer/glasgow.kicad_pcb",
                "usb-interface-explorer/netlist-kicad-9.0.8/glasgow.net"),
    "hexpansion": ("event-badge-i2c-mux/hexpansion/hexpansion.kicad_pcb",
                   "event-badge-i2c-mux/netlist-kicad-9.0.8/hexpansion.net"),
}


def bus_shape(result) -> list:
    return sorted((bus.name, tuple((line.signal, line.nets, tuple(sorted(p.ref for p in line.pullups)))
                                   for line in seg.lines), tuple(sorted(d.ref for d in seg.devices)))
                  for bus in result.buses for seg in bus.segments)


@pytest.mark.parametrize("stem", sorted(BOARD_AND_NETLIST))
def test_board_alone_finds_the_buses_the_schematic_netlist_gives(stem):
    # Ground truth: the netlist KiCad 9.0.8's kicad-cli exported from the same project.
    board, netlist = (require_real(p) for p in BOARD_AND_NETLIST[stem])
    from_board = bus_shape(audit(board, Config.empty()))
    assert from_board  # every one of these boards carries a bus
    assert from_board == bus_shape(audit(netlist, Config.empty()))
