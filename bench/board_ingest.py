"""Board ingest benchmark: netaudit's .kicad_pcb reader against KiCad's own loader.

Run by hand (not a test):  python bench/board_ingest.py [--repeat 5] [--size-mb 30]

For each board the script times, in one run and interleaved so that the machine's load
falls on both alike:

* ours: ``netaudit.readers.kicad_board.read_file(path)``: read and decode the file, parse
  it, and build the Design (parts, nets) and the Board (track runs, vias, stackup);
* KiCad's: ``pcbnew.LoadBoard(path)`` inside one long-lived ``/usr/bin/python3`` (Debian's
  Python with KiCad's module), timing the call alone (the module import is not counted).

Boards: the real ones in ../shared/real-designs and one of about ``--size-mb`` megabytes
generated into build/bench/ (never committed) by copying the tracks, vias and zones of the
glasgow board side by side, each copy shifted 150 mm along x with fresh UUIDs and nets of
its own (``--same-nets`` adds a variant whose copies share glasgow's nets).
Figures: best (minimum) and median wall time of ``--repeat`` runs, and the ratio of the
best times (ours / KiCad's; below 1.0 we are faster). Our time is also split into
parse and build, and kiutils (``kiutils.board.Board.from_file``) is timed once per board
when it can be imported.
"""

from __future__ import annotations

import argparse
import json
import re
import statistics
import subprocess
import sys
import time
import uuid
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from netaudit.readers import kicad_board, sexpr  # noqa: E402
from netaudit.readers.common import decode_text, read_bytes  # noqa: E402

REAL = ROOT / ".." / "shared" / "real-designs"
OUT = ROOT / "build" / "bench"
BOARDS = ["usb-interface-explorer/glasgow.kicad_pcb", "battery-bms-kicad9/bms-c1.kicad_pcb",
          "event-badge-i2c-mux/hexpansion/hexpansion.kicad_pcb"]
KICAD_PYTHON = "/usr/bin/python3"

# A loop in KiCad's Python: one path per line in, one JSON line of seconds out.
PCBNEW_SERVER = r"""
import json, sys, time
import pcbnew
print(json.dumps({"ready": pcbnew.Version()}), flush=True)
for line in sys.stdin:
    start = time.perf_counter()
    board = pcbnew.LoadBoard(line.rstrip("\n"))
    seconds = time.perf_counter() - start
    tracks = len(board.GetTracks())
    del board
    print(json.dumps({"seconds": seconds, "tracks": tracks}), flush=True)
"""

_BLOCK = re.compile(r"\n\t\((?:segment|via|arc|zone)\n.*?\n\t\)", re.DOTALL)
_POINT = re.compile(r"\((start|end|mid|at|xy) (-?[\d.]+) ")
_UUID = re.compile(r'\(uuid "[^"]*"\)')
_NET_USE = re.compile(r"\(net (\d+)\)")
_NET_NAME = re.compile(r'\(net_name "([^"]*)"\)')
_NET_DECL = re.compile(r'^\t\(net (\d+) "([^"]*)"\)$', re.MULTILINE)


def generate(size_mb: float, same_nets: bool = False) -> Path:
    """A board of about ``size_mb`` MB: glasgow, then copies of its tracks, vias and zones
    side by side (150 mm apart along x, fresh UUIDs). Each copy gets nets of its own
    (``/copyK/NAME``), like a panel of boards; with ``same_nets`` the copies keep glasgow's
    nets, so each net falls apart into dozens of unconnected islands."""
    path = OUT / f"board-{size_mb:g}mb{'-same-nets' if same_nets else ''}.kicad_pcb"
    if path.exists():
        return path
    source = (REAL / BOARDS[0]).read_text(encoding="utf-8")
    blocks = _BLOCK.findall(source)
    if not blocks:
        raise SystemExit(f"no tracks found in {BOARDS[0]} to copy")
    if same_nets:
        blocks = [b for b in blocks if not b.startswith("\n\t(zone")]
    chunk = "".join(blocks)
    nets = {int(code): name for code, name in _NET_DECL.findall(source)}
    top = max(nets) + 1
    copies = max(1, int((size_mb * 1e6 - len(source)) / len(chunk)) + 1)
    pieces, declared = [], []
    for k in range(1, copies + 1):
        dx = 150.0 * k
        moved = _POINT.sub(lambda m: f"({m.group(1)} {float(m.group(2)) + dx:.6f} ", chunk)
        moved = _UUID.sub(lambda _m: f'(uuid "{uuid.uuid4()}")', moved)
        if not same_nets:
            def code(m, k=k):
                n = int(m.group(1))
                return f"(net {n + k * top})" if n else m.group(0)
            moved = _NET_USE.sub(code, moved)
            moved = _NET_NAME.sub(lambda m, k=k: f'(net_name "/copy{k}{m.group(1)}")'
                                  if m.group(1) else m.group(0), moved)
            declared += [f'\t(net {n + k * top} "/copy{k}{name}")\n' for n, name in nets.items() if n]
        pieces.append(moved)
    last_net = list(_NET_DECL.finditer(source))[-1].end() + 1
    end = source.rstrip().rfind(")")
    OUT.mkdir(parents=True, exist_ok=True)
    path.write_text(source[:last_net] + "".join(declared) + source[last_net:end] + "".join(pieces)
                    + "\n)\n", encoding="utf-8")
    return path


class KiCad:
    """pcbnew.LoadBoard in a long-lived KiCad Python."""

    def __init__(self) -> None:
        self.proc = subprocess.Popen([KICAD_PYTHON, "-c", PCBNEW_SERVER], stdin=subprocess.PIPE,
                                     stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)
        self.version = json.loads(self._line())["ready"]

    def _line(self) -> str:
        line = self.proc.stdout.readline()
        if not line:
            raise SystemExit(f"{KICAD_PYTHON} could not import or run pcbnew")
        return line

    def load(self, path: Path) -> tuple[float, int]:
        self.proc.stdin.write(f"{path}\n")
        self.proc.stdin.flush()
        answer = json.loads(self._line())
        return answer["seconds"], answer["tracks"]

    def close(self) -> None:
        self.proc.stdin.close()
        self.proc.wait(timeout=60)


def ours(path: Path) -> tuple[float, int]:
    start = time.perf_counter()
    design = kicad_board.read_file(path)
    seconds = time.perf_counter() - start
    board = design.board
    return seconds, sum(r.pieces for r in board.runs) + sum(v.count for v in board.vias)


def split(path: Path) -> tuple[float, float, float]:
    """Our time in three parts: read and decode, parse, build Design and Board."""
    t0 = time.perf_counter()
    data = read_bytes(path)
    text = decode_text(data, path)
    t1 = time.perf_counter()
    sexpr.parse(text, str(path))
    t2 = time.perf_counter()
    kicad_board.read(text, path, "")          # parses again, then builds
    t3 = time.perf_counter()
    return t1 - t0, t2 - t1, (t3 - t2) - (t2 - t1)


def kiutils_time(path: Path) -> float | None:
    try:
        from kiutils.board import Board
    except ImportError:
        return None
    start = time.perf_counter()
    Board.from_file(str(path), encoding="utf-8")
    return time.perf_counter() - start


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--size-mb", type=float, default=30.0)
    ap.add_argument("--no-kiutils", action="store_true")
    ap.add_argument("--same-nets", action="store_true",
                    help="also time a generated board whose copies share glasgow's nets "
                         "(KiCad's loader takes minutes on it)")
    args = ap.parse_args()

    paths = [REAL / b for b in BOARDS if (REAL / b).is_file()] + [generate(args.size_mb)]
    if args.same_nets:
        paths.append(generate(args.size_mb, same_nets=True))
    kicad = KiCad()
    print(f"pcbnew {kicad.version}; Python {sys.version.split()[0]}; {args.repeat} runs each, interleaved")
    head = (f"{'board':<24} {'MB':>6} {'ours best':>9} {'median':>7} {'KiCad best':>10} {'median':>7} "
            f"{'ratio':>6}  {'read':>5} {'parse':>6} {'build':>6}  {'kiutils':>7}  tracks+vias")
    print(head)
    print("-" * len(head))
    for path in paths:
        mine, theirs = [], []
        for _ in range(args.repeat):
            s, n_ours = ours(path)
            mine.append(s)
            s, n_kicad = kicad.load(path)
            theirs.append(s)
        read_s, parse_s, build_s = split(path)
        ki = None if args.no_kiutils else kiutils_time(path)
        ratio = min(mine) / min(theirs)
        print(f"{path.name[:24]:<24} {path.stat().st_size / 1e6:6.1f} {min(mine):9.3f} "
              f"{statistics.median(mine):7.3f} {min(theirs):10.3f} {statistics.median(theirs):7.3f} "
              f"{ratio:6.2f}  {read_s:5.2f} {parse_s:6.2f} {build_s:6.2f}  "
              f"{'-' if ki is None else f'{ki:7.2f}':>7}  {n_ours} / {n_kicad}")
    kicad.close()


if __name__ == "__main__":
    main()
