"""KiCad boards (``.kicad_pcb``, KiCad 6 to 9; KiCad 10's net names in tracks are read too).

Two things come out of a board file:

* a :class:`~netaudit.model.Design` built from its footprints and pads (reference, value,
  properties, ``dnp`` and ``exclude_from_bom`` attributes; each pad's net, pin function and
  pin type), so a board alone can be audited;
* a :class:`~netaudit.model.Board`: per net the track length per copper layer and width
  (segments, and arcs measured along the arc through start, mid and end), the vias with
  their pad diameter, drill and layers, and the stackup from ``(setup (stackup ...))``.

A board without a stackup gets board-level defaults and says so in ``Board.notes``.
Footprints marked ``board_only`` (logos, fiducials added on the board) are not schematic
parts and are left out of the parts, as a schematic netlist leaves them out.
The file is read with :mod:`netaudit.readers.sexpr`; nothing is written.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

from ..errors import InputError
from ..model import Board, Design, Net, Node, Part, Pin, Sheet, Stackup, StackupLayer, TrackRun, Via
from . import sexpr
from .common import decode_text, read_bytes, sha256, unescape_kicad

FORMAT = "kicad-board"
MM = 1e-3
UM = 1e-6

# Board-level defaults where the file has no stackup (common practice, no source):
DEFAULT_THICKNESS_M = 1.6 * MM
DEFAULT_COPPER_M = 35 * UM
DEFAULT_EPSILON_R = 4.5          # FR-4 (REFERENCES §4.5)

_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\Z")


def looks_like(text: str) -> bool:
    return text.lstrip()[:20].replace(" ", "").startswith("(kicad_pcb")


def read_file(path: Path) -> Design:
    data = read_bytes(path)
    text = decode_text(data, path)
    if not text.strip():
        raise InputError("empty file", str(path), 1, 1)
    return read(text, path, sha256(data))


def read_board(path: Path) -> Board:
    """Only the routed geometry of the board at ``path``."""
    return read_file(path).board  # type: ignore[return-value]


def read(text: str, path: Path, digest: str) -> Design:
    tree = sexpr.parse(text, str(path))
    where = _Where(text, str(path))
    if sexpr.head(tree) != "kicad_pcb":
        raise InputError("not a KiCad board: the file does not start with (kicad_pcb", str(path), 1, 1)
    table: dict[str, str] = {}
    items: dict[str, list] = {"segment": [], "arc": [], "via": [], "footprint": [], "zone": []}
    general = setup = title_block = layers = None
    version = generator_version = ""
    for item in tree[1:]:
        if type(item) is not list or not item or type(item[0]) is not str:
            continue  # ((a) b): a list where a keyword belongs; KiCad never writes one
        key = item[0]
        if key in items:
            items[key].append(item)
        elif key == "module":                      # KiCad 5 name of a footprint
            items["footprint"].append(item)
        elif key == "net" and len(item) >= 3 and type(item[1]) is str and type(item[2]) is str:
            table[item[1]] = unescape_kicad(item[2])
        elif key == "general":
            general = item
        elif key == "setup":
            setup = item
        elif key == "layers":
            layers = item
        elif key == "title_block":
            title_block = item
        elif key == "version" and len(item) > 1:
            version = item[1]
        elif key == "generator_version" and len(item) > 1:
            generator_version = item[1]

    notes: list[str] = []
    thickness_m = DEFAULT_THICKNESS_M
    if general is not None and sexpr.child(general, "thickness") is not None:
        thickness_m = _number(sexpr.value(general, "thickness"), where, "thickness") * MM
    stackup_node = sexpr.child(setup, "stackup") if setup is not None else None
    if stackup_node is not None and sexpr.children(stackup_node, "layer"):
        stackup = _stackup(stackup_node, where, notes)
    else:
        stackup = _assumed_stackup(_copper_names(layers), thickness_m, general is not None)
        notes.append(stackup.note)

    board = Board(
        path=str(path), thickness_m=thickness_m, stackup=stackup,
        runs=_runs(items["segment"], items["arc"], table, where),
        vias=_vias(items["via"], table, where),
        plane_clearance_m=_plane_clearance(items["zone"], table, where),
        notes=tuple(notes))
    parts, nets, sheets = _parts_and_nets(items["footprint"], table, where)
    tb = title_block or ["title_block"]
    tool = f"Pcbnew {generator_version}" if generator_version else f"Pcbnew (file format {version})"
    return Design(path=str(path), format=FORMAT, sha256=digest, title=sexpr.value(tb, "title"),
                  revision=sexpr.value(tb, "rev"), tool=tool, source=Path(path).name,
                  parts=parts, nets=nets, sheets=sheets, board=board)


# -- places and numbers ------------------------------------------------------------------

class _Where:
    """Names the place of a bad item: the first place its leading tokens appear in the text."""

    def __init__(self, text: str, path: str) -> None:
        self.text, self.path = text, path

    def error(self, message: str, *tokens: str) -> InputError:
        pattern = r"\(\s*" + r"\s+".join('"?' + re.escape(t) + '"?' for t in tokens)
        match = re.search(pattern, self.text) if tokens else None
        if match is None:
            return InputError(message, self.path)
        line, column = sexpr.position(self.text, match.start())
        return InputError(message, self.path, line, column)

    def item_error(self, message: str, item: list) -> InputError:
        """An error about ``item``, placed at its own ``(uuid ...)`` (or ``tstamp``) when it
        has one, else at the first item of its kind."""
        for c in item[1:]:
            if type(c) is list and len(c) > 1 and c[0] in ("uuid", "tstamp"):
                return self.error(message, c[0], c[1])
        return self.error(message, item[0])


def _number(text, where: _Where, key: str) -> float:
    if isinstance(text, str):
        try:
            value = float(text)
        except ValueError:
            value = math.nan
        if math.isfinite(value) and _NUMBER.match(text):
            return value
    raise where.error(f"({key} ...) needs a number, not {text!r}", key, str(text))


def _xy(node: list | None, where: _Where, owner: str) -> tuple[float, float]:
    if node is None or len(node) < 3:
        raise where.error(f"{owner} without {node[0] if node else 'start/end'} coordinates", owner)
    return _number(node[1], where, node[0]), _number(node[2], where, node[0])


def _net_name(token, table: dict[str, str]) -> str:
    """KiCad 6-9 write a track's net as its number in the board's net table; KiCad 10
    writes the name. Net 0 (and the empty name) is no net."""
    if token in table:
        return table[token]
    if token == "0" and not table:
        return ""
    return unescape_kicad(token) if isinstance(token, str) else ""


# -- tracks and vias ---------------------------------------------------------------------

def _runs(segments: list, arcs: list, table: dict[str, str], where: _Where) -> tuple[TrackRun, ...]:
    totals: dict[tuple[str, str, float], list] = {}
    for kind, group in (("segment", segments), ("arc", arcs)):
        for item in group:
            start = mid = end = None
            width = layer = net = None
            for c in item[1:]:
                if type(c) is not list or len(c) < 2:
                    continue
                k = c[0]
                if k == "start":
                    start = c
                elif k == "end":
                    end = c
                elif k == "mid":
                    mid = c
                elif k == "width":
                    width = c[1]
                elif k == "layer":
                    layer = c[1]
                elif k == "net":
                    net = c[1]
            name = _net_name(net, table) if net is not None else ""
            if not name:
                continue  # a track on no net carries no signal of ours
            if start is None or end is None or width is None or layer is None:
                missing = [n for n, v in (("start", start), ("end", end), ("width", width),
                                          ("layer", layer)) if v is None]
                raise where.item_error(f"{kind} on net {name!r} has no {', '.join(missing)}", item)
            x1, y1 = _xy(start, where, kind)
            x2, y2 = _xy(end, where, kind)
            if kind == "arc":
                if mid is None:
                    raise where.item_error(f"arc on net {name!r} has no mid point", item)
                length = arc_length(x1, y1, *_xy(mid, where, kind), x2, y2)
            else:
                length = math.hypot(x2 - x1, y2 - y1)
            key = (name, layer, _number(width, where, "width"))
            entry = totals.get(key)
            if entry is None:
                totals[key] = [length, 1]
            else:
                entry[0] += length
                entry[1] += 1
    return tuple(TrackRun(net, layer, w * MM, total * MM, count)
                 for (net, layer, w), (total, count) in sorted(totals.items()))


def arc_length(x1: float, y1: float, xm: float, ym: float, x2: float, y2: float) -> float:
    """Length of the arc from (x1, y1) through (xm, ym) to (x2, y2): radius x swept angle.

    KiCad writes ``mid`` as the arc's midpoint and sweeps start -> mid and mid -> end each
    by the shorter turn (an angle in (-180°, 180°]), as its own arc length does; a ``mid``
    off the middle is read the same way. Three points on a line give their straight distance.
    """
    d = 2.0 * (x1 * (ym - y2) + xm * (y2 - y1) + x2 * (y1 - ym))
    if abs(d) < 1e-12:
        return math.hypot(x2 - x1, y2 - y1)
    s1, sm, s2 = x1 * x1 + y1 * y1, xm * xm + ym * ym, x2 * x2 + y2 * y2
    cx = (s1 * (ym - y2) + sm * (y2 - y1) + s2 * (y1 - ym)) / d
    cy = (s1 * (x2 - xm) + sm * (x1 - x2) + s2 * (xm - x1)) / d
    a1 = math.atan2(y1 - cy, x1 - cx)
    am = math.atan2(ym - cy, xm - cx)
    a2 = math.atan2(y2 - cy, x2 - cx)
    sweep = _half_turn(am - a1) + _half_turn(a2 - am)
    return math.hypot(x1 - cx, y1 - cy) * abs(sweep)


def _half_turn(angle: float) -> float:
    """``angle`` brought into (-pi, pi]."""
    while angle <= -math.pi:
        angle += 2.0 * math.pi
    while angle > math.pi:
        angle -= 2.0 * math.pi
    return angle


def _vias(vias: list, table: dict[str, str], where: _Where) -> tuple[Via, ...]:
    groups: dict[tuple, int] = {}
    for item in vias:
        size = drill = net = None
        layers: tuple = ()
        for c in item[1:]:
            if type(c) is not list or len(c) < 2:
                continue
            k = c[0]
            if k == "size":
                size = c[1]
            elif k == "drill":
                drill = c[1]
            elif k == "layers":
                layers = tuple(c[1:3])
            elif k == "net":
                net = c[1]
        name = _net_name(net, table) if net is not None else ""
        if not name:
            continue
        if size is None or len(layers) != 2:
            raise where.item_error(f"via on net {name!r} has no {'size' if size is None else 'two layers'}",
                                   item)
        d = _number(size, where, "size")
        h = _number(drill, where, "drill") if drill is not None else 0.0
        key = (name, layers, d, h)
        groups[key] = groups.get(key, 0) + 1
    return tuple(Via(net, layers, d * MM, h * MM, n) for (net, layers, d, h), n in sorted(groups.items()))


def _plane_clearance(zones: list, table: dict[str, str], where: _Where) -> float | None:
    """The clearance of the board's largest copper zone on a net (by outline area): the gap
    its main plane leaves round a via. Net-class clearances (kept in the project file since
    KiCad 7) can widen it; they are not read."""
    best: tuple[float, float] | None = None   # (area, -clearance)
    for zone in zones:
        net = sexpr.child(zone, "net")
        if net is None or len(net) < 2 or not _net_name(net[1], table):
            continue
        pads = sexpr.child(zone, "connect_pads")
        clearance = sexpr.child(pads, "clearance") if pads is not None else None
        if clearance is None or len(clearance) < 2:
            continue
        gap = _number(clearance[1], where, "clearance") * MM
        if gap <= 0:
            continue
        area = _outline_area(sexpr.child(zone, "polygon"))
        if best is None or (area, -gap) > best:
            best = (area, -gap)
    return -best[1] if best else None


def _outline_area(polygon: list | None) -> float:
    """Shoelace area of a zone outline's straight corners (arcs taken as chords), in mm²."""
    pts = sexpr.child(polygon, "pts") if polygon is not None else None
    xy = [(float(c[1]), float(c[2])) for c in (pts or [])[1:]
          if isinstance(c, list) and c and c[0] == "xy" and len(c) >= 3
          and _NUMBER.match(c[1]) and _NUMBER.match(c[2])]
    return abs(sum(x1 * y2 - x2 * y1 for (x1, y1), (x2, y2) in zip(xy, xy[1:] + xy[:1]))) / 2.0


# -- stackup -------------------------------------------------------------------------------

def _stackup(node: list, where: _Where, notes: list[str]) -> Stackup:
    out: list[StackupLayer] = []
    for layer in sexpr.children(node, "layer"):
        name = layer[1] if len(layer) > 1 and isinstance(layer[1], str) else ""
        kind_text = sexpr.value(layer, "type").lower()
        if kind_text == "copper":
            kind = "copper"
        elif kind_text in ("core", "prepreg") or name.startswith("dielectric"):
            kind = "dielectric"
        elif "mask" in kind_text:
            kind = "mask"
        else:
            continue  # silkscreen, paste: no thickness in KiCad's own sum
        # A dielectric may hold several sub-layers: each (thickness ...) starts a new one.
        subs: list[dict] = []
        for c in layer[1:]:
            if type(c) is not list or len(c) < 2:
                continue
            if c[0] == "thickness":
                subs.append({"thickness": _number(c[1], where, "thickness") * MM})
            elif c[0] in ("epsilon_r", "material") and subs:
                subs[-1][c[0]] = _number(c[1], where, "epsilon_r") if c[0] == "epsilon_r" else c[1]
        if not subs:
            if kind == "copper":
                notes.append(f"stackup layer {name} gives no thickness; assumed 35 µm copper "
                             "(common practice, no source)")
                subs = [{"thickness": DEFAULT_COPPER_M}]
            else:
                if kind == "dielectric":
                    notes.append(f"stackup layer {name} gives no thickness; left out")
                continue
        for sub in subs:
            er = sub.get("epsilon_r")
            if kind == "dielectric" and er is None:
                notes.append(f"stackup layer {name} gives no εr; assumed FR-4 εr 4.5 "
                             "(common practice, no source)")
                er = DEFAULT_EPSILON_R
            out.append(StackupLayer(name, kind, sub["thickness"], er, sub.get("material", "")))
    return Stackup(tuple(out))


def _copper_names(layers: list | None) -> list[str]:
    names = []
    for entry in (layers or [])[1:]:
        if isinstance(entry, list) and len(entry) >= 2 and isinstance(entry[1], str) \
                and entry[1].endswith(".Cu"):
            names.append(entry[1])

    def order(name: str) -> tuple[int, int]:
        if name == "F.Cu":
            return (0, 0)
        if name == "B.Cu":
            return (2, 0)
        digits = re.sub(r"\D", "", name)
        return (1, int(digits) if digits else 0)
    return sorted(set(names), key=order) or ["F.Cu", "B.Cu"]


def _assumed_stackup(copper: list[str], thickness_m: float, from_file: bool) -> Stackup:
    n = len(copper)
    gap = (thickness_m - n * DEFAULT_COPPER_M) / max(n - 1, 1)
    layers: list[StackupLayer] = []
    for i, name in enumerate(copper):
        layers.append(StackupLayer(name, "copper", DEFAULT_COPPER_M))
        if i < n - 1 or n == 1:
            layers.append(StackupLayer(f"dielectric {i + 1}", "dielectric", gap, DEFAULT_EPSILON_R, "FR4"))
    board = (f"{thickness_m / MM:g} mm (the file's board thickness)"
             if from_file and abs(thickness_m - DEFAULT_THICKNESS_M) > 1e-9 else "1.6 mm")
    note = (f"no stackup in the board file; assumed FR-4 εr 4.5, {board}, 35 µm copper, "
            f"{n} copper layers evenly spaced (common practice, no source)")
    return Stackup(tuple(layers), assumed=True, note=note)


# -- footprints: the parts and nets of a board read on its own ---------------------------

_SKIP_FIELDS = {"reference", "value", "sheetname", "sheetfile"}


def _parts_and_nets(footprints: list, table: dict[str, str], where: _Where):
    parts: list[Part] = []
    nodes: dict[str, dict[tuple[str, str], Node]] = {name: {} for name in table.values() if name}
    sheets: dict[str, str] = {}
    for fp in footprints:
        attrs: set[str] = set()
        props: list[tuple[str, str]] = []
        ref = value = sheet_path = sheet_file = ""
        pads = []
        for c in fp[1:]:
            if type(c) is not list or not c:
                continue
            k = c[0]
            if k == "property" and len(c) >= 3 and isinstance(c[2], str):
                props.append((c[1], c[2]))
            elif k == "fp_text" and len(c) >= 3 and c[1] in ("reference", "value"):
                if c[1] == "reference":
                    ref = c[2]
                else:
                    value = c[2]
            elif k == "attr":
                attrs.update(a for a in c[1:] if isinstance(a, str))
            elif k == "sheetname" and len(c) > 1:
                sheet_path = c[1]
            elif k == "sheetfile" and len(c) > 1:
                sheet_file = c[1]
            elif k == "pad":
                pads.append(c)
        for name, text in props:
            low = name.lower()
            if low == "reference":
                ref = text
            elif low == "value":
                value = text
            elif low == "sheetname" and not sheet_path:
                sheet_path = text
            elif low == "sheetfile" and not sheet_file:
                sheet_file = text
        if not ref or "board_only" in attrs:
            continue
        if sheet_path and not sheet_path.startswith("/"):
            sheet_path = "/" + sheet_path + "/"       # KiCad 7 writes the sheet's name alone
        sheet_path = sheet_path or "/"
        sheets.setdefault(sheet_path, sheet_file)
        pins: dict[str, Pin] = {}
        for pad in pads:
            number = pad[1] if len(pad) > 1 and isinstance(pad[1], str) else ""
            if not number:
                continue  # mechanical pads carry no pin
            net = function = kind = ""
            for c in pad[2:]:
                if type(c) is list and len(c) >= 2:
                    if c[0] == "net":
                        net = unescape_kicad(c[2]) if len(c) >= 3 else _net_name(c[1], table)
                    elif c[0] == "pinfunction":
                        function = c[1]
                    elif c[0] == "pintype":
                        kind = c[1]
            pins.setdefault(number, Pin(number, function, kind))
            if net:
                nodes.setdefault(net, {}).setdefault((ref, number), Node(ref, number, function, kind))
        fields = tuple((n, t) for n, t in props
                       if n.lower() not in _SKIP_FIELDS and not n.startswith("ki_"))
        description = next((t for n, t in props if n.lower() == "description"), "")
        lib_id = fp[1] if len(fp) > 1 and isinstance(fp[1], str) else ""
        parts.append(Part(ref=ref, value=value, footprint=lib_id, description=description,
                          fields=fields, dnp="dnp" in attrs,
                          exclude_from_bom="exclude_from_bom" in attrs,
                          sheet_path=sheet_path, sheet_file=sheet_file, pins=tuple(pins.values())))
    codes = {name: code for code, name in table.items()}
    nets = tuple(Net(name, tuple(found.values()), codes.get(name, ""))
                 for name, found in nodes.items() if found)
    sheet_list = tuple(Sheet(p, f) for p, f in sorted(sheets.items()))
    return tuple(parts), nets, sheet_list
