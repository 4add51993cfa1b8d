"""KiCad projects and schematics (``.kicad_pro``, root ``.kicad_sch``, a folder).

By default the schematics are read by netaudit's own reader (``kicad_schematic``), which
needs no KiCad installed and gives the Design KiCad's netlist export would give. With
``use_kicad_cli`` the netlist is exported by KiCad's own ``kicad-cli`` and read with the
netlist reader. Both routes give the same Design (path, format and digest included).

The design files and their folder are only read. kicad-cli creates and deletes a lock file
(``~NAME.kicad_pro.lck``) beside the project it opens, so it is run on a copy in a
temporary folder: the project's schematics, project file and library tables (subfolders
included), and the sheets the schematics name by a relative path outside the folder, all
in the same layout relative to one another.
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
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


def board_beside(sch: Path) -> Design | None:
    """The project's board (``<root name>.kicad_pcb`` beside the root schematic) as read on
    its own, or None when there is none. Its nets are matched to the schematic's by name."""
    pcb = sch.with_suffix(".kicad_pcb")
    return kicad_board.read_file(pcb) if pcb.is_file() else None


def kicad_cli() -> str | None:
    return shutil.which("kicad-cli")


def project_digest(sch: Path, board: Design | None = None) -> str:
    """SHA-256 over the files a project's Design comes from (:func:`project_files`: the
    schematics in the folder and its subfolders, sheets named from outside it, the project
    file, whose text variables can change values, and the library tables) and the board
    read with them. Each file counts by its path from the project folder and the SHA-256
    of its bytes, sorted by path, the board last: a changed byte in any of them changes
    the digest."""
    folder = sch.resolve().parent
    named = sorted((Path(os.path.relpath(where, folder)).as_posix(), source)
                   for where, source in project_files(sch).items())
    h = hashlib.sha256()
    for name, source in named:
        h.update(name.encode() + b"\0" + hashlib.sha256(read_bytes(source)).digest())
    if board is not None:
        h.update(Path(board.path).name.encode() + b"\0" + bytes.fromhex(board.sha256))
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
    board = board_beside(sch)
    return dataclasses.replace(design, path=str(path), format=FORMAT, sha256=project_digest(sch, board),
                               board=board.board if board is not None else None)


def _export(path: Path, sch: Path, timeout_s: float) -> Design:
    """The Design of KiCad's own netlist export (kicad-cli) of the schematic ``sch``, made
    from a copy of the project in a temporary folder."""
    cli = kicad_cli()
    if cli is None:
        raise InputError(f"reading a schematic needs kicad-cli, which is not installed: {EXPORT_HINT}",
                         str(path))
    folder = sch.resolve().parent
    with tempfile.TemporaryDirectory(prefix="netaudit-") as tmp:
        out = Path(tmp) / "export.net"
        work = working_copy(sch, Path(tmp) / "project")
        try:
            # Run in the schematic's folder with its bare name, as KiCad's own editor names
            # the root sheet file (the netlist's Sheetfile of root-sheet parts).
            proc = subprocess.run(
                [cli, "sch", "export", "netlist", "--format", "kicadsexpr", "-o", str(out),
                 sch.name],
                capture_output=True, text=True, timeout=timeout_s, check=False,
                cwd=str(work))
        except subprocess.TimeoutExpired:
            raise InputError(f"kicad-cli took longer than {timeout_s:.0f} s to export the netlist",
                             str(sch)) from None
        if proc.returncode != 0 or not out.is_file():
            detail = (proc.stderr or proc.stdout or "").strip().splitlines()
            why = detail[-1].replace(str(work), str(folder)) if detail else f"exit code {proc.returncode}"
            newer = _newer_than_cli(sch, cli)
            if newer:
                raise InputError(f"kicad-cli could not export the netlist ({why}): {newer}", str(sch))
            raise InputError(f"kicad-cli could not export the netlist ({why})", str(sch))
        data = read_bytes(out)
        design = kicad_netlist.read(decode_text(data, out), out, "")
    # The schematic the export came from, as kicad-cli names it when run in the project folder.
    return dataclasses.replace(design, source=str(folder / sch.name))


# What kicad-cli reads of a project besides its sheets: the project file (text variables,
# net classes) and the library tables. Folders of backups, version control and the like
# are left out.
_PROJECT_FILES = (".kicad_sch", ".kicad_pro", "-lib-table")
_SKIPPED_FOLDER = re.compile(r"^\.|-backups$|^__pycache__$|^node_modules$")
_SHEET_FILE = re.compile(r'\(property\s+"Sheet ?file"\s+"((?:[^"\\]|\\.)*)"')


def working_copy(sch: Path, dest: Path) -> Path:
    """Copy what kicad-cli reads of the project of ``sch`` (:func:`project_files`) under
    ``dest``, keeping the files' layout relative to one another; return the copy of the
    schematic's folder."""
    folder = sch.resolve().parent
    files = project_files(sch)
    base = Path(os.path.commonpath([folder, *(f.parent for f in files)]))
    for where, source in files.items():
        target = dest / where.relative_to(base)
        target.parent.mkdir(parents=True, exist_ok=True)
        try:
            shutil.copyfile(source, target)
        except OSError as exc:
            raise InputError(f"cannot read: {exc.strerror or exc}", str(source)) from None
    work = dest / folder.relative_to(base)
    work.mkdir(parents=True, exist_ok=True)
    return work


def project_files(sch: Path) -> dict[Path, Path]:
    """The files of the project of ``sch``: where each is (as a path from the schematic's
    folder, resolved) -> the file to read.

    Every schematic, project file and library table in the folder and its subfolders,
    and every sheet a schematic names by a relative path leading out of the folder
    (followed sheet by sheet, as KiCad resolves them: from the naming sheet's folder). A
    sheet named by an absolute path is left out."""
    folder = sch.resolve().parent
    files: dict[Path, Path] = {folder / sch.name: sch.resolve()}   # where it is -> what to read
    for here, dirs, names in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not _SKIPPED_FOLDER.search(d))
        for name in names:
            f = Path(here) / name
            if name.endswith(_PROJECT_FILES) and f.is_file():
                files.setdefault(f, f)
    todo = [f for f in files if f.suffix == ".kicad_sch"]
    seen = set(todo)
    while todo:
        sheet = todo.pop()
        text = read_bytes(files[sheet]).decode("utf-8", "replace")
        for m in _SHEET_FILE.finditer(text):
            name = re.sub(r"\\(.)", r"\1", m.group(1)).replace("\\", "/")
            if not name or os.path.isabs(name):
                continue
            child = Path(os.path.normpath(sheet.parent / name))
            if child not in seen and child.is_file():
                seen.add(child)
                files.setdefault(child, child)
                todo.append(child)
    return files


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
