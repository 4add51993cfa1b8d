"""Readers: each design format becomes the same :class:`~netaudit.model.Design`.

``read_design(path)`` chooses the reader by the file's content where it can, and by its
suffix only for KiCad's schematic and project files. Readers only read.

Projects and schematics are read by netaudit's own schematic reader unless KiCad's
``kicad-cli`` export is asked for: ``read_design(path, use_kicad_cli=True)``.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ..model import Design
from . import kicad_board, kicad_netlist, kicad_xml
from .common import decode_text, read_bytes, sha256

PROJECT_SUFFIXES = {".kicad_pro", ".kicad_sch"}
def read_design(path: str | Path, use_kicad_cli: bool = False) -> Design:
    """Read any supported design file or project folder into a Design.

    ``use_kicad_cli`` (projects and schematics only): export the netlist with KiCad's
    ``kicad-cli`` instead of reading the schematics with netaudit's own reader."""
    p = Path(path)
    if p.is_dir() or p.suffix in PROJECT_SUFFIXES:
        if not p.exists():
            raise InputError("no such file or folder", str(p))
        from . import kicad_project  # with the schematic engine: only when a project is read
        return kicad_project.read(p, use_kicad_cli=use_kicad_cli)
    if p.suffix == ".kicad_pcb":
        return kicad_board.read_file(p)
    data = read_bytes(p)
    text = decode_text(data, p)
    if not text.strip():
        raise InputError("empty file", str(p), 1, 1)
    digest = sha256(data)
    if kicad_netlist.looks_like(text):
        return kicad_netlist.read(text, p, digest)
    if kicad_xml.looks_like(text):
        return kicad_xml.read(text, p, digest)
    if kicad_board.looks_like(text):
        return kicad_board.read(text, p, digest)
    if text.lstrip().startswith("(kicad_sch") or text.lstrip().startswith("(kicad_pcb"):
        raise InputError("a KiCad schematic or board with an unexpected suffix; rename it "
                         ".kicad_sch or pass the project", str(p), 1, 1)
    if text.lstrip().startswith("("):
        return kicad_netlist.read(text, p, digest)  # let the parser say where it goes wrong
    if text.lstrip().startswith("<"):
        return kicad_xml.read(text, p, digest)
    raise InputError("not a KiCad netlist, XML netlist, schematic or project", str(p), 1, 1)
