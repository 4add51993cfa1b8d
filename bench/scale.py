"""Scale benchmark: audit generated designs of 1k, 10k and 50k parts end to end.

Run by hand (not a test):  .venv/bin/python bench/scale.py [--sizes 1000,10000,50000]

Each design is a KiCad version "E" netlist written to build/bench/ (never committed):
buses of a controller, several 8-pin targets with address straps, two pull-ups and
decoupling, plus filler parts (resistors, capacitors, LEDs) on their own nets, all on one
GND and one +3V3 net, as real boards have. Each size is audited in a fresh subprocess
(`netaudit check FILE --json OUT --quiet`), timing the wall clock of the whole process
(interpreter start, imports, reading, audit, JSON report) and reading the child's peak
resident memory; the time inside `main()` alone is printed beside it. The ratio of time
per part between sizes shows how the audit scales. Modules are byte-compiled first (into
build/bench/pycache), as an installed package is, so the figures do not include compiling
netaudit's source on each run.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "build" / "bench"


def q(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


def generate(parts: int, buses: int) -> Path:
    """Write a netlist of about ``parts`` parts with ``buses`` buses; return its path."""
    path = OUT / f"scale-{parts}-{buses}.net"
    if path.exists():
        return path
    OUT.mkdir(parents=True, exist_ok=True)
    comps: list[str] = []
    nets: dict[str, list[str]] = {"GND": [], "+3V3": []}

    def comp(ref: str, value: str, lib_part: str) -> None:
        comps.append(f'    (comp (ref {q(ref)}) (value {q(value)}) (footprint "bench:fp")\n'
                     f'      (libsource (lib "bench") (part {q(lib_part)}) (description ""))\n'
                     f'      (sheetpath (names "/") (tstamps "/")) (tstamps "0"))')

    def node(net: str, ref: str, pin: str, fn: str, kind: str) -> None:
        nets.setdefault(net, []).append(
            f'      (node (ref {q(ref)}) (pin {q(pin)})' + (f' (pinfunction {q(fn)})' if fn else "")
            + f' (pintype {q(kind)}))')

    n = 0
    targets_per_bus = 6
    for b in range(buses):
        sda, scl = f"/B{b}_SDA", f"/B{b}_SCL"
        mcu = f"U{n}"; n += 1
        comp(mcu, "MCU-BENCH", "MCU48")
        node(sda, mcu, "1", "I2C1_SDA", "bidirectional")
        node(scl, mcu, "2", "I2C1_SCL", "bidirectional")
        node("+3V3", mcu, "3", "VDD", "power_in")
        node("GND", mcu, "4", "VSS", "power_in")
        for t in range(targets_per_bus):
            ref = f"U{n}"; n += 1
            comp(ref, "SENSOR-BENCH", "SENS8")
            node(sda, ref, "1", "SDA", "bidirectional")
            node(scl, ref, "2", "SCL", "bidirectional")
            node("+3V3", ref, "3", "VDD", "power_in")
            node("GND", ref, "4", "GND", "power_in")
            for a in range(3):
                node("GND" if (t >> a) & 1 == 0 else "+3V3", ref, str(5 + a), f"A{a}", "input")
            c = f"C{n}"; n += 1
            comp(c, "100n", "C")
            node("+3V3", c, "1", "", "passive"); node("GND", c, "2", "", "passive")
        for line in (sda, scl):
            r = f"R{n}"; n += 1
            comp(r, "2k2", "R")
            node(line, r, "1", "", "passive"); node("+3V3", r, "2", "", "passive")
    i = 0
    while n < parts:
        net = f"/F{i}"
        r, d = f"R{n}", f"D{n + 1}"
        comp(r, "1k", "R"); comp(d, "LED", "LED")
        node(net, r, "1", "", "passive"); node("+3V3", r, "2", "", "passive")
        node(net, d, "1", "A", "passive"); node("GND", d, "2", "K", "passive")
        n += 2
        i += 1
    libparts = """  (libparts
    (libpart (lib "bench") (part "MCU48") (pins
      (pin (num "1") (name "I2C1_SDA") (type "bidirectional")) (pin (num "2") (name "I2C1_SCL") (type "bidirectional"))
      (pin (num "3") (name "VDD") (type "power_in")) (pin (num "4") (name "VSS") (type "power_in"))
""" + "".join(f'      (pin (num "{k}") (name "P{k}") (type "bidirectional"))\n' for k in range(5, 49)) + """    ))
    (libpart (lib "bench") (part "SENS8") (pins
      (pin (num "1") (name "SDA") (type "bidirectional")) (pin (num "2") (name "SCL") (type "input"))
      (pin (num "3") (name "VDD") (type "power_in")) (pin (num "4") (name "GND") (type "power_in"))
      (pin (num "5") (name "A0") (type "input")) (pin (num "6") (name "A1") (type "input"))
      (pin (num "7") (name "A2") (type "input")) (pin (num "8") (name "INT") (type "open_collector"))))
    (libpart (lib "bench") (part "R") (pins (pin (num "1") (name "") (type "passive")) (pin (num "2") (name "") (type "passive"))))
    (libpart (lib "bench") (part "C") (pins (pin (num "1") (name "") (type "passive")) (pin (num "2") (name "") (type "passive"))))
    (libpart (lib "bench") (part "LED") (pins (pin (num "1") (name "A") (type "passive")) (pin (num "2") (name "K") (type "passive")))))
"""
    net_text = "\n".join(f'    (net (code "{k + 1}") (name {q(name)}) (class "Default")\n' + "\n".join(nodes) + ")"
                         for k, (name, nodes) in enumerate(nets.items()))
    text = ('(export (version "E")\n  (design (source "bench.kicad_sch") (tool "Eeschema 9.0.8")\n'
            '    (sheet (number "1") (name "/") (tstamps "/") (title_block (title "scale bench") (rev "1"))))\n'
            '  (components\n' + "\n".join(comps) + ")\n" + libparts + "  (nets\n" + net_text + "))\n")
    path.write_text(text, encoding="utf-8")
    return path


def run(path: Path) -> tuple[float, float, float]:
    """Wall seconds of the whole process, seconds inside main() and peak resident MB of one
    `netaudit check` in a fresh process."""
    script = ("import resource, sys, time\n"
              "from netaudit.cli import main\n"
              "t = time.perf_counter()\n"
              "try:\n    main()\nexcept SystemExit:\n    pass\n"
              "dt = time.perf_counter() - t\n"
              "print(dt, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, file=sys.stderr)\n")
    out = OUT / (path.stem + ".json")
    start = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", script, "check", str(path), "--quiet", "--json", str(out)],
                          capture_output=True, text=True, cwd=ROOT, env=_child_env())
    wall = time.perf_counter() - start
    seconds, mb = proc.stderr.strip().splitlines()[-1].split()
    return wall, float(seconds), float(mb)


def _child_env() -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": str(ROOT), "PYTHONPYCACHEPREFIX": str(OUT / "pycache")}


def reference_seconds() -> float:
    """Seconds a fixed pure-Python workload takes in a fresh process: this machine's speed
    at the moment (a shared 2-core machine varies by half again between quiet periods),
    printed beside the table so that runs can be compared."""
    script = ("import time\nt = time.perf_counter()\n"
              "d = {}\nfor i in range(600000):\n    d[str(i)] = (i, str(i * 7))\n"
              "sorted(d.items(), key=lambda kv: kv[1][1])\nprint(time.perf_counter() - t)\n")
    runs = [float(subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                                 check=True).stdout) for _ in range(3)]
    return statistics.median(runs)


def compile_modules() -> None:
    """Byte-compile netaudit and its dependencies as an installed package would be."""
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(ROOT / "netaudit")],
                   check=True, env=_child_env(), stdout=subprocess.DEVNULL)
    subprocess.run([sys.executable, "-c", "import netaudit.cli, netaudit.audit, netaudit.report.json"],
                   check=True, env={**_child_env(), "PYTHONDONTWRITEBYTECODE": ""}, cwd=ROOT)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000,50000")
    ap.add_argument("--buses", default="10,50,200", help="buses per size, same order")
    ap.add_argument("--repeat", type=int, default=5,
                    help="runs per size; the median time and the largest peak memory are shown")
    args = ap.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    buses = [int(s) for s in args.buses.split(",")]
    compile_modules()
    before = reference_seconds()
    rows = []
    for size, nb in zip(sizes, buses):
        path = generate(size, nb)
        runs = [run(path) for _ in range(max(1, args.repeat))]
        wall = statistics.median(r[0] for r in runs)
        inside = statistics.median(r[1] for r in runs)
        mb = max(r[2] for r in runs)
        rows.append((size, nb, path.stat().st_size / 1e6, wall, inside, mb))
    after = reference_seconds()
    print(f"machine speed: reference workload {before:.3f} s before, {after:.3f} s after")
    print(f"{'parts':>7} {'buses':>6} {'file MB':>8} {'wall s':>8} {'main() s':>9} {'peak MB':>8} {'us/part':>8}")
    for size, nb, fmb, s, inside, mb in rows:
        print(f"{size:>7} {nb:>6} {fmb:>8.1f} {s:>8.2f} {inside:>9.2f} {mb:>8.0f} {s / size * 1e6:>8.1f}")
    for (a, _, _, sa, _, _), (b, _, _, sb, _, _) in zip(rows, rows[1:]):
        print(f"time ratio {b}/{a} parts: {sb / sa:.2f} for {b / a:.0f}x the parts "
              f"({'linear or better' if sb / sa <= b / a * 1.1 else 'faster than linear growth'})")


if __name__ == "__main__":
    main()
