"""One ``.kicad_sch`` file into plain records (see ``model``), reading only what a
netlist needs: library pins, placed symbols and their fields, wires, buses, junctions,
no-connect flags, labels, sheets with their pins, bus entries and bus aliases."""

from __future__ import annotations

from pathlib import Path

from ...errors import InputError
from ..common import decode_text, read_bytes
from .. import sexpr
from .model import (Instance, Label, LibPin, LibSymbol, Property, SheetFile, SheetPin,
                    SheetRef, Symbol, mandatory_field)

# File format versions (the (version N) line) of the KiCad releases this reader knows.
OLDEST_VERSION = 20200310          # first S-expression schematics (KiCad 6 development)
NEWEST_VERSION = 20250114          # KiCad 9.0
LABEL_KINDS = {"label": "local", "global_label": "global", "hierarchical_label": "hier",
               "netclass_flag": "directive", "directive_label": "directive"}
# Top-level items that never touch connectivity.
_IGNORED = frozenset({
    "generator", "generator_version", "paper", "page", "text", "text_box", "polyline",
    "rectangle", "circle", "arc", "bezier", "image", "sheet_instances", "embedded_fonts",
    "embedded_files", "group", "rule_area", "table", "lib_name"})
_MIRROR_X = (1, 0, 0, -1)          # incremental transforms as KiCad composes them
_MIRROR_Y = (-1, 0, 0, 1)
_ROT_CCW = (0, 1, -1, 0)
_ROT_CW = (0, -1, 1, 0)
_NORMAL = (1, 0, 0, -1)            # library Y up -> sheet Y down


_LIMIT_MM = 214_748.0              # KiCad keeps coordinates in 32-bit internal units


def to_iu(text: str) -> int:
    """Millimetres as written in the file -> internal units, rounded as KiCad rounds."""
    mm = float(text)
    if not -_LIMIT_MM <= mm <= _LIMIT_MM:     # also refuses nan
        raise ValueError(f"coordinate {text} out of range")
    v = mm * 10_000.0
    return int(v + 0.5) if v >= 0 else -int(-v + 0.5)


def load(path: Path) -> SheetFile:
    text = decode_text(read_bytes(path), path)
    tree = sexpr.parse(text, str(path))
    if not tree or tree[0] != "kicad_sch":
        raise InputError("not a KiCad schematic (the file does not start with (kicad_sch)",
                         str(path), 1, 1)
    return parse_tree(tree, path, text)


def parse_tree(tree: list, path: Path, text: str = "") -> SheetFile:
    version = 0
    for item in tree[1:]:
        if isinstance(item, list) and item and item[0] == "version":
            version = _int(item, path, text)
            break
    if version < OLDEST_VERSION:
        raise InputError(f"schematic format version {version} is older than KiCad 6; "
                         "open and save it with KiCad 6 or newer, or use --use-kicad-cli",
                         str(path), 1, 1)
    if version > NEWEST_VERSION:
        made_by = ""
        for item in tree[1:]:
            if isinstance(item, list) and len(item) > 1 and item[0] == "generator_version":
                made_by = f"KiCad {item[1]} "
        raise InputError(f"schematic saved by {made_by}(format version {version}), newer than "
                         "KiCad 9, the newest this reader knows; use --use-kicad-cli with a "
                         "matching KiCad, or pass a netlist exported by it", str(path), 1, 1)
    sf = SheetFile(path=str(path), version=version, uuid="", text=text)
    for item in tree[1:]:
        if not isinstance(item, list) or not item or not isinstance(item[0], str):
            continue
        try:
            _item(sf, item, path, text)
        except (ValueError, TypeError, IndexError, AttributeError, OverflowError) as exc:
            uuid = _value(item, "uuid") if isinstance(item, list) else ""
            raise InputError(f"unreadable ({item[0]} ...) item: {exc}", str(path),
                             *_line_of(text, uuid)) from None
    return sf


def _item(sf: SheetFile, item: list, path: Path, text: str) -> None:
    head = item[0]
    if head == "wire" or head == "bus":
        pts = _points(item)
        for a, b in zip(pts, pts[1:]):
            (sf.wires if head == "wire" else sf.buses).append((a[0], a[1], b[0], b[1]))
    elif head == "symbol":
        sf.symbols.append(_symbol(item, path, text))
    elif head == "junction":
        sf.junctions.append(_at(item)[:2])
        sf.junction_uuids.append(_value(item, "uuid"))
    elif head in LABEL_KINDS:
        x, y, _ = _at(item)
        sf.labels.append(Label(LABEL_KINDS[head], _str(item, 1), x, y,
                               _value(item, "shape"), _value(item, "uuid")))
    elif head == "no_connect":
        sf.no_connects.append(_at(item)[:2])
    elif head == "bus_entry":
        x, y, _ = _at(item)
        size = _child(item, "size")
        dx, dy = (to_iu(size[1]), to_iu(size[2])) if size and len(size) > 2 else (0, 0)
        sf.bus_entries.append((x, y, x + dx, y + dy))
        sf.bus_entry_uuids.append(_value(item, "uuid"))
    elif head == "lib_symbols":
        for lib in item[1:]:
            if isinstance(lib, list) and lib and lib[0] == "symbol":
                ls = _lib_symbol(lib, path, text)
                sf.libs[ls.name] = ls
    elif head == "sheet":
        sf.sheets.append(_sheet(item))
    elif head == "uuid":
        sf.uuid = _str(item, 1)
    elif head == "title_block":
        sf.title = _value(item, "title")
        sf.revision = _value(item, "rev")
        sf.company = _value(item, "company")
    elif head == "bus_alias":
        members = _child(item, "members") or ["members"]
        sf.bus_aliases[_str(item, 1)] = [m for m in members[1:] if isinstance(m, str)]
    elif head == "symbol_instances":
        for p in item[1:]:
            if isinstance(p, list) and p and p[0] == "path":
                sf.legacy_instances[_str(p, 1)] = Instance(
                    _value(p, "reference"), _int_value(p, "unit", 1),
                    _value_or_none(p, "value"), _value_or_none(p, "footprint"))
    elif head == "sheet_instances":
        for p in item[1:]:
            if isinstance(p, list) and p and p[0] == "path":
                sf.legacy_pages[_str(p, 1)] = _value(p, "page")
    elif head == "version" or head in _IGNORED:
        return
    else:
        raise InputError(f"unknown schematic item ({head} ...) at the top level; "
                         "use --use-kicad-cli", str(path), *_line_of(text, "(" + head))


# -- items ---------------------------------------------------------------------------

def _symbol(item: list, path: Path, text: str) -> Symbol:
    lib_id = lib_name = uuid = ""
    x = y = 0
    angle = 0
    mirror = ""
    unit = 1
    style = 1
    in_bom = on_board = True
    dnp = False
    props: list[Property] = []
    alternates: dict[str, str] = {}
    instances: dict[str, Instance] = {}
    for c in item[1:]:
        if not isinstance(c, list) or not c:
            continue
        h = c[0]
        if h == "property":
            private = len(c) > 3 and c[1] == "private"
            off = 2 if private else 1
            name = _str(c, off)
            if name == "Sim.Enable":   # KiCad 7's simulation switch, now a symbol flag
                continue
            ident = _child(c, "id")
            legacy_id = int(ident[1]) if ident is not None and len(ident) > 1 else None
            props.append(Property(name, _str(c, off + 1), private, legacy_id))
        elif h == "lib_id":
            lib_id = _str(c, 1)
        elif h == "at":
            x, y = to_iu(c[1]), to_iu(c[2])
            angle = int(float(c[3])) if len(c) > 3 else 0
        elif h == "mirror":
            mirror = _str(c, 1)
        elif h == "unit":
            unit = int(c[1])
        elif h in ("convert", "body_style"):
            style = int(c[1])
        elif h == "in_bom":
            in_bom = _yes(c)
        elif h == "on_board":
            on_board = _yes(c)
        elif h == "dnp":
            dnp = _yes(c)
        elif h == "uuid":
            uuid = _str(c, 1)
        elif h == "lib_name":
            lib_name = _str(c, 1)
        elif h == "pin":
            alt = _child(c, "alternate")
            if alt is not None and len(alt) > 1:
                alternates[_str(c, 1)] = alt[1]
        elif h == "instances":
            for project in c[1:]:
                if not isinstance(project, list) or not project or project[0] != "project":
                    continue
                for p in project[2:]:
                    if isinstance(p, list) and p and p[0] == "path":
                        instances[_str(p, 1)] = Instance(
                            _value(p, "reference"), _int_value(p, "unit", unit),
                            _value_or_none(p, "value"), _value_or_none(p, "footprint"))
    if angle not in (0, 90, 180, 270):
        raise InputError(f"symbol {lib_id} is rotated by {angle} degrees; KiCad allows "
                         "only 0, 90, 180 and 270", str(path), *_line_of(text, uuid))
    return Symbol(uuid, lib_id, lib_name, x, y, orientation(angle, mirror), unit, style,
                  in_bom, on_board, dnp, props, alternates, instances)


def orientation(angle: int, mirror: str) -> tuple[int, int, int, int]:
    """The library-to-sheet matrix for a rotation (degrees, counter-clockwise on screen)
    and mirror ("x" flips about the horizontal axis, "y" about the vertical), composed in
    the order KiCad applies them: rotation first, then mirror."""
    m = _NORMAL
    steps = {0: (), 90: (_ROT_CCW,), 180: (_ROT_CCW, _ROT_CCW), 270: (_ROT_CW,)}[angle]
    for t in steps:
        m = _compose(m, t)
    if mirror == "x":
        m = _compose(m, _MIRROR_X)
    elif mirror == "y":
        m = _compose(m, _MIRROR_Y)
    return m


def _compose(m, t):
    x1, y1, x2, y2 = m
    tx1, ty1, tx2, ty2 = t
    return (x1 * tx1 + x2 * ty1, y1 * tx1 + y2 * ty1, x1 * tx2 + x2 * ty2, y1 * tx2 + y2 * ty2)


def _lib_symbol(item: list, path: Path, text: str) -> LibSymbol:
    name = _str(item, 1)
    ls = LibSymbol(name)
    base = name.split(":", 1)[-1]
    units = set()
    for c in item[2:]:
        if not isinstance(c, list) or not c:
            continue
        h = c[0]
        if h == "power":
            ls.power = "local" if len(c) > 1 and c[1] == "local" else "global"
        elif h == "property":
            pname, pvalue = _str(c, 1), _str(c, 2)
            ident = _child(c, "id")
            legacy_id = int(ident[1]) if ident is not None and len(ident) > 1 else None
            if pname == "ki_description" or mandatory_field(pname, legacy_id) == "description":
                ls.description = pvalue.strip()   # KiCad trims a library description
            elif pname == "Reference":
                ls.reference = pvalue
        elif h == "pin_names":
            ls.pin_names_hidden = _hidden(c)
        elif h == "symbol":
            unit, style = _unit_style(_str(c, 1), base)
            units.add(unit)
            for p in c[2:]:
                if isinstance(p, list) and p and p[0] == "pin":
                    ls.pins.append(_lib_pin(p, unit, style))
        elif h == "pin":       # a pin straight in the symbol: common to all units
            ls.pins.append(_lib_pin(c, 0, 0))
        elif h == "extends":
            raise InputError(f"embedded library symbol {name} extends another symbol, which "
                             "KiCad never writes into a schematic; use --use-kicad-cli",
                             str(path), *_line_of(text, f'(symbol "{name}"'))
        elif h in ("duplicate_pin_numbers_are_jumpers", "jumper_pin_groups"):
            if _yes(c) or h == "jumper_pin_groups":
                raise InputError(f"library symbol {name} joins pins as jumpers, which this "
                                 "reader does not follow; use --use-kicad-cli",
                                 str(path), *_line_of(text, f'(symbol "{name}"'))
    ls.unit_count = max([u for u in units if u > 0], default=1)
    return ls


def _unit_style(sub: str, base: str) -> tuple[int, int]:
    """``R_1_2`` -> unit 1, body style 2 (the sub-symbol naming KiCad writes)."""
    parts = sub.rsplit("_", 2)
    try:
        return int(parts[-2]), int(parts[-1])
    except (ValueError, IndexError):
        return 0, 0


def _lib_pin(p: list, unit: int, style: int) -> LibPin:
    ptype = p[1] if len(p) > 1 and isinstance(p[1], str) else "unspecified"
    x = y = 0
    number = name = ""
    hidden = False
    alternates: dict[str, str] = {}
    for c in p[2:]:
        if isinstance(c, str):
            if c == "hide":
                hidden = True
            continue
        if not c:
            continue
        h = c[0]
        if h == "at":
            x, y = to_iu(c[1]), to_iu(c[2])
        elif h == "name":
            name = _str(c, 1)
        elif h == "number":
            number = _str(c, 1)
            if number == "~":          # KiCad shows "~" as no number
                number = ""
        elif h == "hide":
            hidden = _yes(c)
        elif h == "alternate":
            alternates[_str(c, 1)] = _str(c, 2)
    return LibPin(number, name.replace(" ", "_"), ptype, x, y, hidden, unit, style, alternates)


def _sheet(item: list) -> SheetRef:
    uuid = name = file = ""
    pins: list[SheetPin] = []
    in_bom = on_board = True
    dnp = False
    x = y = 0
    pages: dict[str, str] = {}
    for c in item[1:]:
        if not isinstance(c, list) or not c:
            continue
        h = c[0]
        if h == "instances":
            for project in c[1:]:
                if isinstance(project, list) and project and project[0] == "project":
                    for p in project[2:]:
                        if isinstance(p, list) and p and p[0] == "path":
                            pages[_str(p, 1)] = _value(p, "page")
        elif h == "property":
            pname = _str(c, 1)
            if pname in ("Sheetname", "Sheet name"):
                name = _str(c, 2)
            elif pname in ("Sheetfile", "Sheet file"):
                file = _str(c, 2)
        elif h == "pin":
            px, py, _ = _at(c)
            pins.append(SheetPin(_str(c, 1), _str(c, 2), px, py, _value(c, "uuid")))
        elif h == "uuid":
            uuid = _str(c, 1)
        elif h == "at":
            x, y = to_iu(c[1]), to_iu(c[2])
        elif h == "in_bom":
            in_bom = _yes(c)
        elif h == "on_board":
            on_board = _yes(c)
        elif h == "dnp":
            dnp = _yes(c)
    return SheetRef(uuid, name, file, pins, in_bom, on_board, dnp, x, y, pages)


# -- small helpers -------------------------------------------------------------------

def _points(item: list) -> list[tuple[int, int]]:
    pts = _child(item, "pts") or []
    return [(to_iu(p[1]), to_iu(p[2])) for p in pts[1:] if isinstance(p, list) and p[0] == "xy"]


def _at(item: list) -> tuple[int, int, int]:
    at = _child(item, "at")
    if at is None or len(at) < 3:
        return 0, 0, 0
    return to_iu(at[1]), to_iu(at[2]), (int(float(at[3])) if len(at) > 3 else 0)


def _child(item: list, name: str):
    for c in item[1:]:
        if isinstance(c, list) and c and c[0] == name:
            return c
    return None


def _value(item: list, name: str, default: str = "") -> str:
    c = _child(item, name)
    if c is None or len(c) < 2 or not isinstance(c[1], str):
        return default
    return c[1]


def _value_or_none(item: list, name: str) -> str | None:
    c = _child(item, name)
    if c is None:
        return None
    return c[1] if len(c) > 1 and isinstance(c[1], str) else ""


def _int_value(item: list, name: str, default: int) -> int:
    v = _value(item, name)
    try:
        return int(v)
    except ValueError:
        return default


def _str(item: list, index: int) -> str:
    if len(item) > index and isinstance(item[index], str):
        return item[index]
    return ""


def _int(item: list, path: Path, text: str) -> int:
    try:
        return int(item[1])
    except (IndexError, ValueError, TypeError):
        raise InputError("unreadable (version ...) line", str(path),
                         *_line_of(text, "(version")) from None


def _yes(c: list) -> bool:
    return len(c) < 2 or c[1] == "yes"


def _hidden(c: list) -> bool:
    for x in c[1:]:
        if x == "hide":
            return True
        if isinstance(x, list) and x and x[0] == "hide":
            return _yes(x)
    return False


def _line_of(text: str, needle: str) -> tuple[int, int] | tuple[()]:
    """Line and column of the first ``needle`` in the file text, for error messages."""
    if not text or not needle:
        return ()
    i = text.find(needle)
    if i < 0:
        return ()
    line = text.count("\n", 0, i) + 1
    return line, i - (text.rfind("\n", 0, i) + 1) + 1


def where(sf: SheetFile, needle: str) -> tuple[int, int] | tuple[()]:
    """Line and column of an item (found by its uuid or text) in a loaded sheet file."""
    return _line_of(sf.text, needle)
