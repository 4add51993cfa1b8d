"""Benchmark: netaudit's schematic reader against KiCad's own netlist export.

Run by hand (not a test):  python bench/schematic_engine.py [ROOT.kicad_sch ...] [--runs N]

Without arguments it times the largest real design (../shared/real-designs, by total
size of its schematic files). For each schematic, in one run and alternating, it times
(a) reading the schematic with netaudit's reader in a fresh Python process
(`python -c "read(...)"`, interpreter start and imports included, as a user meets it) and
(b) `kicad-cli sch export netlist` of the same files into a temporary folder, then
prints the median wall-clock time and CPU time (user + system, the child processes' own)
of each and their ratio (reader / KiCad: below 1 means the reader is faster). The design
files are only read.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
REAL = ROOT / ".." / "shared" / "real-designs"
READ = ("import sys; from pathlib import Path; from netaudit.readers import kicad_schematic; "
        "d = kicad_schematic.read(Path(sys.argv[1])); print(len(d.parts), len(d.nets))")


def largest_real_design() -> Path:
    """The root schematic of the real design whose schematics weigh the most."""
    best, size = None, -1
    for pro in REAL.rglob("*.kicad_pro"):
        root = pro.with_suffix(".kicad_sch")
        if not root.is_file() or "revD0" in root.parts:
            continue
        total = sum(f.stat().st_size for f in root.parent.glob("*.kicad_sch"))
        if total > size:
            best, size = root, total
    if best is None:
        sys.exit(f"no real designs at {REAL.resolve()}; pass a root schematic")
    return best


def timed(cmd: list[str], cwd: Path, env=None) -> tuple[float, float, str]:
    """Wall seconds, child CPU seconds and standard output of one command."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    proc = subprocess.run(cmd, cwd=str(cwd), capture_output=True, text=True, env=env,
                          check=False)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode != 0:
        sys.exit(f"{' '.join(cmd)} failed: {(proc.stderr or proc.stdout).strip()[-400:]}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu, proc.stdout.strip()


def bench(sch: Path, runs: int, kicad_cli: str) -> None:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT)] + ([env["PYTHONPATH"]]
                                                        if env.get("PYTHONPATH") else []))
    ours, theirs = [], []
    counts = ""
    with tempfile.TemporaryDirectory(prefix="netaudit-bench-") as tmp:
        out = Path(tmp) / "export.net"
        for _ in range(runs):
            wall, cpu, counts = timed([sys.executable, "-c", READ, str(sch)], ROOT, env)
            ours.append((wall, cpu))
            wall, cpu, _ = timed([kicad_cli, "sch", "export", "netlist", "--format",
                                  "kicadsexpr", "-o", str(out), sch.name], sch.parent)
            theirs.append((wall, cpu))
    parts, nets = counts.split()
    files = len(list(sch.parent.glob("*.kicad_sch")))
    mb = sum(f.stat().st_size for f in sch.parent.glob("*.kicad_sch")) / 1e6
    ow, oc = (statistics.median(x[i] for x in ours) for i in (0, 1))
    kw, kc = (statistics.median(x[i] for x in theirs) for i in (0, 1))
    print(f"{sch.name}: {parts} parts, {nets} nets, {files} sheet files ({mb:.1f} MB), "
          f"median of {runs} runs")
    print(f"  netaudit reader     wall {ow:6.2f} s   cpu {oc:6.2f} s")
    print(f"  kicad-cli export    wall {kw:6.2f} s   cpu {kc:6.2f} s")
    print(f"  ratio reader/KiCad  wall {ow / kw:6.2f}     cpu {oc / kc:6.2f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("schematics", nargs="*", type=Path, help="root schematics to time")
    ap.add_argument("--runs", type=int, default=5, help="runs of each (median reported)")
    args = ap.parse_args()
    kicad_cli = shutil.which("kicad-cli")
    if kicad_cli is None:
        sys.exit("kicad-cli is not on PATH; install KiCad 9 to compare against it")
    for sch in args.schematics or [largest_real_design()]:
        bench(sch.resolve(), args.runs, kicad_cli)


if __name__ == "__main__":
    main()
