"""KiCad schematics read without KiCad: the same Design as KiCad's own netlist export.

``read(path)`` takes a root ``.kicad_sch`` (or the ``.kicad_pro`` or folder around it),
follows the sheet hierarchy, works out connectivity and net names the way KiCad does (see
``readers/schematic``), and returns the Design that reading ``kicad-cli sch export
netlist`` of the same files would give: same nets (names and pins), same parts (fields,
values, not-fitted and BOM flags, sheet path and file). KiCad 6 to 9 formats.

Where a construct is not understood the reader stops with an InputError naming the file
and place and suggesting ``--use-kicad-cli``, rather than guess a net.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from ..model import Design, Net, Node, Sheet
from .common import read_bytes, unescape_kicad
from .schematic.build import Engine
from .schematic.hierarchy import Hierarchy
from .schematic.naming import name_nets
from .schematic.parts import make_parts
from .schematic.project import expand_vars, load_project

FORMAT = "kicad-schematic"
TOOL = "netaudit schematic reader"
# The last file format version each KiCad release writes (the (version N) line).
_RELEASES = ((20211123, "6.0"), (20230121, "7.0"), (20231120, "8.0"), (20250114, "9.0"))


def read(sch: Path) -> Design:
    """Read the design whose root schematic is ``sch``."""
    project = load_project(sch.with_suffix(".kicad_pro"))
    hierarchy = Hierarchy(sch)
    # Bus aliases come from the schematics. KiCad 9 does not read aliases kept in the
    # project file (checked with kicad-cli 9.0.8: fixtures/schematics/bus_alias_project).
    project.bus_aliases = hierarchy_aliases(hierarchy)
    engine = Engine(hierarchy, project)
    engine.place_symbols()
    engine.build_subs()
    named = name_nets(engine)
    parts = make_parts(engine)
    nets = _nets(engine, named)
    sheets = tuple(
        Sheet(path=i.names, file=Path(i.file.path).name,
              title=expand_vars(i.file.title, project.text_vars),
              revision=expand_vars(i.file.revision, project.text_vars))
        for i in hierarchy.instances)
    root = sheets[0]
    return Design(path=str(sch), format=FORMAT, sha256=digest(hierarchy),
                  title=root.title, revision=root.revision, tool=tool_name(hierarchy),
                  source=str(sch),
                  parts=parts, nets=nets, sheets=sheets)


def tool_name(hierarchy: Hierarchy) -> str:
    """Who made the Design, and the KiCad release whose file format the sheets use."""
    newest = max(sf.version for sf in hierarchy.files.values())
    release = next((name for last, name in _RELEASES if newest <= last), _RELEASES[-1][1])
    return f"{TOOL} (KiCad {release} files)"


def hierarchy_aliases(hierarchy: Hierarchy) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for sf in hierarchy.files.values():
        for name, members in sf.bus_aliases.items():
            out.setdefault(name, members)
    return out


def digest(hierarchy: Hierarchy) -> str:
    h = hashlib.sha256()
    for path in sorted(hierarchy.files, key=str):
        h.update(path.name.encode() + b"\0" + hashlib.sha256(read_bytes(path)).digest())
    return h.hexdigest()


def _nets(engine: Engine, named) -> tuple[Net, ...]:
    out = []
    for name, subs in named.items():
        nodes: dict[tuple[str, str], object] = {}
        count = 0
        nc = False
        for sub in subs:
            nc |= sub.nc_flag
            for pp, use in sub.pins:
                si = use.si
                if not si.sym.on_board or si.inst.excluded_from_board:
                    continue
                key = (si.ref, pp.pin.number)
                if key not in nodes:
                    nodes[key] = use
                    count += 1
        stacked = count > 1 and _stacked(nodes.values())
        kept = []
        for (ref, number), use in sorted(nodes.items()):
            if ref.startswith("#"):
                continue
            ptype = use.type + ("+no_connect" if nc and (count == 1 or stacked) else "")
            kept.append(Node(ref, number, use.function, ptype))
        if kept:
            out.append(Net(unescape_kicad(name), tuple(kept)))
    return tuple(out)


def _stacked(uses) -> bool:
    """True when every pin of a net is the same pin drawn several times: one symbol, one
    place, one name (KiCad then marks them all not connected, like a single pin)."""
    uses = list(uses)
    first = uses[0]
    return all(u.si is first.si and (u.pp.x, u.pp.y) == (first.pp.x, first.pp.y)
               and u.function == first.function for u in uses[1:])
