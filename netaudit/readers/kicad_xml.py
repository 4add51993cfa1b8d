"""KiCad XML netlists (``.xml``) and the generator-script intermediate XML.

The intermediate XML a schematic-editor generator script receives (also written by
``kicad-cli sch export python-bom``) has the same schema but leaves out parts excluded
from the bill of materials. It is told apart by its file name (``*.python-bom.xml``)
or by the caller; the content is read the same way.

Parsed safely: any document type declaration (where entity definitions live) is refused
before the parser sees it, so no entity expansion and no external entities.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from pathlib import Path

from ..errors import InputError
from ..model import Design, Net, Node, Part, Pin, Sheet
from .common import complete_nodes, legacy_overbar, pin_name
from .kicad_netlist import is_legacy

FORMAT = "kicad-xml"
FORMAT_BOM = "kicad-bom-xml"

_DOCTYPE = re.compile(r"<!(DOCTYPE|ENTITY)", re.IGNORECASE)


def looks_like(text: str) -> bool:
    start = text.lstrip()[:400]
    return start.startswith("<") and "<export" in start


def read(text: str, path: Path, digest: str, bom: bool | None = None) -> Design:
    m = _DOCTYPE.search(text)
    if m:
        line = text.count("\n", 0, m.start()) + 1
        column = m.start() - (text.rfind("\n", 0, m.start()) + 1) + 1
        raise InputError("XML document type or entity declarations are not accepted "
                         "(KiCad never writes them)", str(path), line, column)
    try:
        root = ET.fromstring(text)
    except ET.ParseError as exc:
        line, column = exc.position
        raise InputError(f"malformed XML ({_reason(exc)})", str(path), line, column + 1) from None
    if root.tag != "export":
        raise InputError(f"not a KiCad XML netlist: root element is <{root.tag}>", str(path), 1, 1)
    if bom is None:
        bom = path.name.endswith(".python-bom.xml")

    design = root.find("design")
    sheets = tuple(_sheet(s) for s in (design.findall("sheet") if design is not None else []))
    root_sheet = sheets[0] if sheets else Sheet("/")

    legacy = is_legacy(root.get("version", ""))  # KiCad 5: see kicad_netlist for the differences

    libpins: dict[tuple[str, str], tuple[Pin, ...]] = {}
    for lp in root.iterfind("libparts/libpart"):
        lib = lp.get("lib", "")
        pins = tuple(Pin(p.get("num", ""), pin_name(p.get("name", ""), legacy), p.get("type", ""))
                     for p in lp.iterfind("pins/pin"))
        names = [lp.get("part", "")] + [a.text or "" for a in lp.iterfind("aliases/alias")]
        for name in names:
            libpins.setdefault((lib, name), pins)

    sheet_files = {s.path: s.file for s in sheets}
    parts = [_part(c, libpins, sheet_files) for c in root.iterfind("components/comp")]
    nets = []
    for n in root.iterfind("nets/net"):
        name = n.get("name", "")
        nodes = tuple(Node(d.get("ref", ""), d.get("pin", ""),
                           pin_name(d.get("pinfunction", ""), legacy), d.get("pintype", ""))
                      for d in n.iterfind("node"))
        nets.append(Net(legacy_overbar(name) if legacy else name, nodes,
                        n.get("code", ""), n.get("class", "")))
    return Design(
        path=str(path), format=FORMAT_BOM if bom else FORMAT, sha256=digest,
        title=root_sheet.title, revision=root_sheet.revision,
        tool=_text(design, "tool"), source=_text(design, "source"),
        parts=tuple(parts), nets=complete_nodes(parts, nets), sheets=sheets,
    )


def _reason(exc: ET.ParseError) -> str:
    return str(exc).split(":")[0]


def _text(node, tag: str) -> str:
    if node is None:
        return ""
    found = node.find(tag)
    return (found.text or "") if found is not None else ""


def _sheet(node) -> Sheet:
    tb = node.find("title_block")
    return Sheet(path=node.get("name", "/"), file=_text(tb, "source"),
                 title=_text(tb, "title"), revision=_text(tb, "rev"))


def _part(c, libpins, sheet_files) -> Part:
    fields = tuple((f.get("name", ""), f.text or "") for f in c.iterfind("fields/field"))
    props = {p.get("name", ""): p.get("value", "") for p in c.iterfind("property")}
    ls = c.find("libsource")
    lib = ls.get("lib", "") if ls is not None else ""
    lib_part = ls.get("part", "") if ls is not None else ""
    sp = c.find("sheetpath")
    sheet_path = sp.get("names", "/") if sp is not None else "/"
    return Part(
        ref=c.get("ref", ""), value=_text(c, "value"), footprint=_text(c, "footprint"),
        lib=lib, lib_part=lib_part,
        description=ls.get("description", "") if ls is not None else "",
        fields=fields, dnp="dnp" in props, exclude_from_bom="exclude_from_bom" in props,
        sheet_path=sheet_path, sheet_file=props.get("Sheetfile") or sheet_files.get(sheet_path, ""),
        pins=libpins.get((lib, lib_part), ()),
    )
