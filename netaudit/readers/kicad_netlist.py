"""KiCad S-expression netlists (``.net``): version "E" (KiCad 6-9) and "D" (KiCad 5).

KiCad 5 files (version "D" and older) differ in ways the reader smooths over, so both give
the same model: nodes carry no pin function (taken from the library part's pins); a pin
with no name is written ``~`` (read as ``""``); overbars are toggled by ``~`` (``~RESET``,
converted to KiCad 6's ``~{RESET}`` in pin and net names); a library part may list aliases,
and a component placed through an alias names the alias, not the part.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ..model import Design, Net, Node, Part, Pin, Sheet
from . import sexpr
from .common import complete_nodes, legacy_overbar, pin_name, unescape_kicad

FORMAT = "kicad-netlist"


def looks_like(text: str) -> bool:
    return text.lstrip()[:40].replace(" ", "").startswith("(export")


def read(text: str, path: Path, digest: str) -> Design:
    tree = sexpr.parse(text, str(path))
    if sexpr.head(tree) != "export":
        raise InputError("not a KiCad netlist: the file does not start with (export",
                         str(path), 1, 1)
    design = sexpr.child(tree, "design") or ["design"]
    sheets = tuple(_sheet(s) for s in sexpr.children(design, "sheet"))
    root = sheets[0] if sheets else Sheet("/")

    legacy = is_legacy(sexpr.value(tree, "version"))

    libpins: dict[tuple[str, str], tuple[Pin, ...]] = {}
    libparts = sexpr.child(tree, "libparts")
    if libparts is not None:
        for lp in sexpr.children(libparts, "libpart"):
            lib = sexpr.value(lp, "lib")
            pins_node = sexpr.child(lp, "pins")
            pins: tuple[Pin, ...] = ()
            if pins_node is not None:
                pins = tuple(Pin(sexpr.value(p, "num"), pin_name(sexpr.value(p, "name"), legacy),
                                 sexpr.value(p, "type"))
                             for p in sexpr.children(pins_node, "pin"))
            names = [sexpr.value(lp, "part")]
            aliases = sexpr.child(lp, "aliases")
            if aliases is not None:
                names += [a[1] for a in sexpr.children(aliases, "alias")
                          if len(a) > 1 and isinstance(a[1], str)]
            for name in names:
                libpins.setdefault((lib, name), pins)

    # The tree is this reader's own: each section is emptied as it is read, so the memory
    # of its lists goes back while the model grows (a 50k-part netlist's tree is ~250 MB).
    nets = []
    nets_node = sexpr.child(tree, "nets")
    if nets_node is not None:
        for i, n in enumerate(nets_node):
            if type(n) is list and n and n[0] == "net":
                nets.append(_net(n, legacy))
            nets_node[i] = None

    sheet_files = {s.path: s.file for s in sheets}
    parts = []
    comps = sexpr.child(tree, "components")
    if comps is not None:
        for i, c in enumerate(comps):
            if type(c) is list and c and c[0] == "comp":
                parts.append(_part(c, libpins, sheet_files))
            comps[i] = None

    return Design(
        path=str(path), format=FORMAT, sha256=digest,
        title=root.title, revision=root.revision,
        tool=sexpr.value(design, "tool"), source=sexpr.value(design, "source"),
        parts=tuple(parts), nets=complete_nodes(parts, nets), sheets=sheets,
    )


def _atoms(item: list) -> dict[str, str]:
    """``(node (ref "U1") (pin "3") ...)`` -> ``{"ref": "U1", "pin": "3", ...}``: the first
    atom of each child list, first occurrence winning (as :func:`sexpr.value` reads them:
    the children are walked last to first, so an earlier one overwrites a later one)."""
    return {c[0]: c[1] for c in item[:0:-1]
            if type(c) is list and len(c) > 1 and type(c[1]) is str and type(c[0]) is str}


def _net(n: list, legacy: bool) -> Net:
    """One ``(net (code ..) (name ..) (class ..) (node ..) ...)``. A node's fields are read
    as :func:`_atoms` reads them (first occurrence wins), written out: this loop runs for
    every pin of the design."""
    nodes = []
    for d in n[1:]:
        if type(d) is not list or not d or d[0] != "node":
            continue
        ref = pin = fn = kind = ""
        for c in d[:0:-1]:  # last to first: an earlier occurrence overwrites a later one
            if type(c) is list and len(c) > 1 and type(c[1]) is str:
                key = c[0]
                if key == "ref":
                    ref = c[1]
                elif key == "pin":
                    pin = c[1]
                elif key == "pinfunction":
                    fn = c[1]
                elif key == "pintype":
                    kind = c[1]
        if legacy:
            fn = pin_name(fn, legacy)
        elif fn == "~":
            fn = ""
        nodes.append(Node(ref, pin, fn, kind))
    name = unescape_kicad(sexpr.value(n, "name"))
    return Net(legacy_overbar(name) if legacy else name, tuple(nodes),
               sexpr.value(n, "code"), sexpr.value(n, "class"))


def is_legacy(version: str) -> bool:
    """True for netlists written by KiCad 5 or older (format versions before "E")."""
    return len(version) == 1 and version.isalpha() and version.upper() < "E"


def _sheet(node: list) -> Sheet:
    tb = sexpr.child(node, "title_block") or ["title_block"]
    return Sheet(path=sexpr.value(node, "name", "/"), file=sexpr.value(tb, "source"),
                 title=sexpr.value(tb, "title"), revision=sexpr.value(tb, "rev"))


def _part(c: list, libpins: dict, sheet_files: dict[str, str]) -> Part:
    """One ``(comp ...)``, read in a single pass over its children."""
    atoms: dict[str, str] = {}
    fields: list[tuple[str, str]] = []
    props: dict[str, str] = {}
    libsource: dict[str, str] = {}
    sheet_path = "/"
    for ch in c[1:]:
        if type(ch) is not list or not ch or type(ch[0]) is not str:
            continue  # ((a) b): a list where a keyword belongs; KiCad never writes one
        key = ch[0]
        if key == "fields":
            for f in ch[1:]:
                if type(f) is list and f and f[0] == "field":
                    name = _atoms(f).get("name", "")
                    text = next((x for x in f[1:] if isinstance(x, str)), "")
                    fields.append((name, text))
        elif key == "property":
            pa = _atoms(ch)
            props[pa.get("name", "")] = pa.get("value", "")
        elif key == "libsource":
            if not libsource:
                libsource = _atoms(ch)
        elif key == "sheetpath":
            sheet_path = _atoms(ch).get("names", "/")
        elif len(ch) > 1 and type(ch[1]) is str and key not in atoms:
            atoms[key] = ch[1]
    lib, lib_part = libsource.get("lib", ""), libsource.get("part", "")
    return Part(  # positional (ref, value, footprint, lib, lib_part, description, fields,
        # dnp, exclude_from_bom, sheet_path, sheet_file, pins): called once per part
        atoms.get("ref", ""), atoms.get("value", ""), atoms.get("footprint", ""), lib, lib_part,
        libsource.get("description", ""), tuple(fields) if fields else (), "dnp" in props,
        "exclude_from_bom" in props, sheet_path,
        props.get("Sheetfile") or sheet_files.get(sheet_path, ""), libpins.get((lib, lib_part), ()))
