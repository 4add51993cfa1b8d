"""KiCad projects and schematics (``.kicad_pro``, root ``.kicad_sch``, a folder).

By default the schematics are read by netaudit's own reader (``kicad_schematic``), which
needs no KiCad installed and gives the Design KiCad's netlist export would give. With
``use_kicad_cli`` the netlist is exported by KiCad's own ``kicad-cli`` into a temporary
folder and read with the netlist reader. Both routes give the same Design (path, format
and digest included); the design files are only read.
"""

from __future__ import annotations

import dataclasses
import hashlib
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

from ..errors import InputError
from ..model import Design
from . import kicad_board, kicad_netlist
from .common import decode_text, read_bytes

FORMAT = "kicad-project"
EXPORT_HINT = ("install KiCad 7 or newer (for kicad-cli), or export a netlist from the schematic "
               "editor (File > Export > Netlist, KiCad format) and pass the .net file")


def root_schematic(path: Path) -> Path:
    """The root schematic of a project file, schematic or folder."""
    if path.is_dir():
        projects = sorted(path.glob("*.kicad_pro"))
        if not projects:
            raise InputError("folder holds no KiCad project (.kicad_pro)", str(path))
        if len(projects) > 1:
            names = ", ".join(p.name for p in projects)
            raise InputError(f"folder holds several projects ({names}); name one", str(path))
        path = projects[0]
    if path.suffix == ".kicad_pro":
        sch = path.with_suffix(".kicad_sch")
        if not sch.is_file():
            raise InputError(f"project has no root schematic {sch.name} beside it", str(path))
        return sch
    return path


def board_beside(sch: Path):
    """The routed geometry of the project's board (``<root name>.kicad_pcb`` beside the root
    schematic), or None when there is none. Its nets are matched to the schematic's by name."""
    pcb = sch.with_suffix(".kicad_pcb")
    return kicad_board.read_board(pcb) if pcb.is_file() else None


def kicad_cli() -> str | None:
    return shutil.which("kicad-cli")


def project_digest(sch: Path) -> str:
    """SHA-256 over every schematic in the project folder (name and content, sorted)."""
    h = hashlib.sha256()
    for f in sorted(sch.parent.glob("*.kicad_sch")):
        h.update(f.name.encode() + b"\0" + hashlib.sha256(read_bytes(f)).digest())
    return h.hexdigest()


def read(path: Path, timeout_s: float = 300.0, use_kicad_cli: bool = False) -> Design:
    sch = root_schematic(path)
    if not sch.is_file():
        raise InputError("no such schematic", str(sch))
    if use_kicad_cli:
        design = _export(path, sch, timeout_s)
    else:
        from . import kicad_schematic  # the engine loads only when a schematic is read
        design = kicad_schematic.read(sch)
    return dataclasses.replace(design, path=str(path), format=FORMAT, sha256=project_digest(sch),
                               board=board_beside(sch))


def _export(path: Path, sch: Path, timeout_s: float) -> Design:
    """The Design of KiCad's own netlist export (kicad-cli) of the schematic ``sch``."""
    cli = kicad_cli()
    if cli is None:
        raise InputError(f"reading a schematic needs kicad-cli, which is not installed: {EXPORT_HINT}",
                         str(path))
    with tempfile.TemporaryDirectory(prefix="netaudit-") as tmp:
        out = Path(tmp) / "export.net"
        try:
            # Run in the schematic's folder with its bare name, as KiCad's own editor names
            # the root sheet file (the netlist's Sheetfile of root-sheet parts).
            proc = subprocess.run(
                [cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o", str(out),
                 sch.name],
                capture_output=True, text=True, timeout=timeout_s, check=False,
                cwd=str(sch.resolve().parent))
        except subprocess.TimeoutExpired:
            raise InputError(f"kicad-cli took longer than {timeout_s:.0f} s to export the netlist",
                             str(sch)) from None
        if proc.returncode != 0 or not out.is_file():
            detail = (proc.stderr or proc.stdout or "").strip().splitlines()
            why = detail[-1] if detail else f"exit code {proc.returncode}"
            newer = _newer_than_cli(sch, cli)
            if newer:
                raise InputError(f"kicad-cli could not export the netlist ({why}): {newer}", str(sch))
            raise InputError(f"kicad-cli could not export the netlist ({why})", str(sch))
        data = read_bytes(out)
        return kicad_netlist.read(decode_text(data, out), out, "")


_GENERATOR = re.compile(r'\(generator_version\s+"?(\d+)(?:\.(\d+))?')


def _newer_than_cli(sch: Path, cli: str) -> str:
    """Why kicad-cli cannot read ``sch`` when the schematic comes from a newer KiCad, else ""."""
    try:
        with open(sch, "rb") as fh:
            head = fh.read(4096).decode("utf-8", "replace")
        proc = subprocess.run([cli, "--version"], capture_output=True, text=True, timeout=60,
                              check=False)
    except (OSError, subprocess.SubprocessError):
        return ""
    made = _GENERATOR.search(head)
    have = re.match(r"\s*(\d+)\.(\d+)", proc.stdout or "")
    if not made or not have or int(made.group(1)) <= int(have.group(1)):
        return ""
    made_by = f"{made.group(1)}.{made.group(2) or 0}"
    return (f"the schematic was saved by KiCad {made_by}, newer than this kicad-cli "
            f"({(proc.stdout or '').strip()}); export the netlist with KiCad {made_by} "
            "(File > Export > Netlist) and pass the .net file")
