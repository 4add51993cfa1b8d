"""What touches what on one sheet: KiCad's rules for joining items into connected groups.

Rules, each checked against ``kicad-cli sch export netlist`` (KiCad 9.0.8) on hand-drawn
sheets in ``fixtures/schematics``:

* Items join where their connection points coincide exactly: wire and bus ends, pin tips,
  label anchors, sheet-pin anchors, junctions, no-connect flags, bus-entry ends.
* A wire joins only wires, a bus only buses; any other item at a point joins both.
* A wire end on the middle of another wire, a pin tip on the middle of a wire, and
  wires crossing without a junction do not connect; overlapping collinear wires do not
  connect either.
* A junction on the middle of a wire, or a bus entry ending on the middle of a wire, is
  refused: KiCad's editor splits the wire there when it saves (so files it saves never
  hold one), while kicad-cli 9.0.8 keeps only the part of the wire from its start to that
  point, dropping what hangs on the rest. The two KiCad tools disagree, so the reader
  names the place and stops. A junction on the middle of a bus is refused likewise.
* A label (local, global, hierarchical or net-class flag) on the middle of a wire or bus
  connects to it, unless a pin, another label, a sheet pin or a no-connect flag sits
  exactly at the label; a label on two or more lines connects to all of them. A sheet pin
  on the middle of one wire connects to it.
* A pin of electrical type "not connected" connects to nothing.
* A bus entry's end that lies on a bus (end or middle) connects to nothing (the entry
  belongs to the net side); its other end connects like a wire end.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ...errors import InputError
from .model import LibPin, SheetFile
from .sheetfile import where

WIRE, BUS, PIN, LABEL, SHEETPIN, JUNCTION, NOCONNECT, ENTRY = range(8)


@dataclass
class PlacedPin:
    symbol: int                   # index into SheetFile.symbols
    pin: LibPin
    x: int
    y: int


@dataclass
class Group:
    """One connected group of items on a sheet (KiCad's "subgraph" before names)."""

    pins: list[PlacedPin] = field(default_factory=list)
    labels: list[int] = field(default_factory=list)        # indices into SheetFile.labels
    sheet_pins: list[tuple[int, int]] = field(default_factory=list)  # (sheet, pin) indices
    no_connect: bool = False
    wires: int = 0
    buses: int = 0
    entries: int = 0


def placed_pins(sf: SheetFile, units: dict[int, int] | None = None) -> list[PlacedPin]:
    """Every pin of every placed symbol at its sheet position, for the chosen units."""
    out: list[PlacedPin] = []
    for i, sym in enumerate(sf.symbols):
        lib = sf.libs.get(sym.lib_name or sym.lib_id)
        if lib is None:
            raise InputError(f"symbol {sym.prop('Reference')} ({sym.lib_id}) has no library "
                             "symbol embedded in the schematic; use --use-kicad-cli",
                             sf.path, *where(sf, sym.uuid))
        unit = units.get(i, sym.unit) if units else sym.unit
        x1, y1, x2, y2 = sym.matrix
        for p in lib.pins:
            if (p.unit and p.unit != unit) or (p.style and p.style != sym.style):
                continue
            out.append(PlacedPin(i, p, x1 * p.x + y1 * p.y + sym.x, x2 * p.x + y2 * p.y + sym.y))
    return out


def _on_segment(px: int, py: int, s: tuple[int, int, int, int], interior: bool) -> bool:
    x1, y1, x2, y2 = s
    if px < min(x1, x2) - 1 or px > max(x1, x2) + 1 or py < min(y1, y2) - 1 \
            or py > max(y1, y2) + 1:
        return False
    if interior and ((px == x1 and py == y1) or (px == x2 and py == y2)):
        return False
    dx, dy = x2 - x1, y2 - y1
    if dx == 0 or dy == 0:
        return True
    cross = (px - x1) * dy - (py - y1) * dx
    return cross * cross <= dx * dx + dy * dy   # within 1 internal unit of the line


class _Lines:
    """Segments of one kind with lookup by the points they pass through."""

    def __init__(self, segments: list[tuple[int, int, int, int]]):
        self.segments = list(segments)
        self._index()

    def _index(self) -> None:
        self.horizontal: dict[int, list[int]] = {}
        self.vertical: dict[int, list[int]] = {}
        self.other: list[int] = []
        for i, (x1, y1, x2, y2) in enumerate(self.segments):
            if y1 == y2:
                self.horizontal.setdefault(y1, []).append(i)
            elif x1 == x2:
                self.vertical.setdefault(x1, []).append(i)
            else:
                self.other.append(i)

    def through(self, x: int, y: int, interior: bool) -> list[int]:
        """Segments passing through (x, y); with ``interior`` only those not ending there."""
        segs = self.segments
        found = [i for i in self.horizontal.get(y, ()) if _on_segment(x, y, segs[i], interior)]
        found += [i for i in self.vertical.get(x, ()) if _on_segment(x, y, segs[i], interior)]
        found += [i for i in self.other if _on_segment(x, y, segs[i], interior)]
        return found


def connect(sf: SheetFile, pins: list[PlacedPin]) -> list[Group]:
    """The connected groups of one sheet file."""
    entries = sf.bus_entries
    wires = _Lines(sf.wires)
    buses = _Lines(sf.buses)
    for (x, y), uuid in zip(sf.junctions, sf.junction_uuids):
        if wires.through(x, y, True) or buses.through(x, y, True):
            line = "wire" if wires.through(x, y, True) else "bus"
            raise InputError(f"a junction sits on the middle of a {line} at ({x / 1e4:g}, "
                             f"{y / 1e4:g}) mm; KiCad's editor splits the line "
                             "there on saving but kicad-cli 9 reads such a file differently: open "
                             "and save the sheet in KiCad, or use --use-kicad-cli",
                             sf.path, *where(sf, uuid))
    for e, uuid in zip(entries, sf.bus_entry_uuids):
        for x, y in ((e[0], e[1]), (e[2], e[3])):
            if wires.through(x, y, True) and not buses.through(x, y, False):
                raise InputError(f"a bus entry ends on the middle of a wire at ({x / 1e4:g}, "
                                 f"{y / 1e4:g}) mm; KiCad's editor splits the wire there on "
                                 "saving but kicad-cli 9 reads such a file differently: open and "
                                 "save the sheet in KiCad, or use --use-kicad-cli",
                                 sf.path, *where(sf, uuid))

    kind: list[int] = []
    ref: list = []
    at: dict[tuple[int, int], list[int]] = {}

    def add(k: int, r, points) -> int:
        i = len(kind)
        kind.append(k)
        ref.append(r)
        for p in points:
            at.setdefault(p, []).append(i)
        return i

    for s in wires.segments:
        add(WIRE, s, ((s[0], s[1]), (s[2], s[3])))
    n_wires = len(kind)
    for s in buses.segments:
        add(BUS, s, ((s[0], s[1]), (s[2], s[3])))
    for p in pins:
        add(PIN, p, ((p.x, p.y),))
    label_ids = [add(LABEL, i, ((lb.x, lb.y),)) for i, lb in enumerate(sf.labels)]
    sheet_pin_ids: list[tuple[int, int, int]] = []
    for si, sheet in enumerate(sf.sheets):
        for pi, sp in enumerate(sheet.pins):
            sheet_pin_ids.append((add(SHEETPIN, (si, pi), ((sp.x, sp.y),)), si, pi))
    for j in sf.junctions:
        add(JUNCTION, j, (j,))
    for n in sf.no_connects:
        add(NOCONNECT, n, (n,))
    entry_ends: list[tuple[int, tuple[int, int]]] = []
    for e in entries:
        i = add(ENTRY, e, ())
        entry_ends.append((i, (e[0], e[1])))
        entry_ends.append((i, (e[2], e[3])))

    parent = list(range(len(kind)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    def union(a: int, b: int) -> None:
        ra, rb = find(a), find(b)
        if ra != rb:
            parent[rb] = ra

    # Bus entries: an end on a bus touches nothing; the other end is a connection point.
    for i, p in entry_ends:
        if buses.through(p[0], p[1], False):
            continue
        at.setdefault(p, []).append(i)

    for items in at.values():
        if len(items) < 2:
            continue
        w = [i for i in items if kind[i] == WIRE or kind[i] == ENTRY]
        b = [i for i in items if kind[i] == BUS]
        others = [i for i in items if kind[i] not in (WIRE, BUS, ENTRY)
                  and not (kind[i] == PIN and ref[i].pin.type == "no_connect")]
        if others:
            first = others[0]
            for i in others[1:] + w + b:
                union(first, i)
        else:
            for group in (w, b):
                for i in group[1:]:
                    union(group[0], i)

    # Labels and sheet pins on the middle of a line.
    blockers = {PIN, LABEL, SHEETPIN, NOCONNECT}
    for li, lb in zip(label_ids, sf.labels):
        lines = [n_wires + s for s in buses.through(lb.x, lb.y, False)] + \
                wires.through(lb.x, lb.y, False)
        if len(lines) >= 2:
            for s in lines:
                union(li, s)
            continue
        if any(kind[i] in blockers and i != li for i in at.get((lb.x, lb.y), ())):
            continue
        if lines:
            union(li, lines[0])
    for si, shi, pi in sheet_pin_ids:
        sp = sf.sheets[shi].pins[pi]
        if any(kind[i] in blockers and i != si for i in at.get((sp.x, sp.y), ())):
            continue
        bus_hits = buses.through(sp.x, sp.y, False)
        wire_hits = wires.through(sp.x, sp.y, False)
        if len(bus_hits) > 1 or (not bus_hits and len(wire_hits) > 1):
            raise InputError(f"sheet pin {sp.name} sits on the middle of several crossing "
                             "lines, where KiCad's choice of line is not defined; move it to "
                             "a line end or use --use-kicad-cli", sf.path, *where(sf, sp.uuid))
        if bus_hits:
            union(si, n_wires + bus_hits[0])
        elif wire_hits:
            union(si, wire_hits[0])

    groups: dict[int, Group] = {}
    for i, k in enumerate(kind):
        if k == JUNCTION:
            continue
        g = groups.get(find(i))
        if g is None:
            g = groups[find(i)] = Group()
        if k == PIN:
            g.pins.append(ref[i])
        elif k == LABEL:
            g.labels.append(ref[i])
        elif k == SHEETPIN:
            g.sheet_pins.append(ref[i])
        elif k == NOCONNECT:
            g.no_connect = True
        elif k == WIRE:
            g.wires += 1
        elif k == BUS:
            g.buses += 1
        elif k == ENTRY:
            g.entries += 1
    out = []
    for g in groups.values():
        if g.wires and g.buses:
            raise InputError("a wire and a bus are joined directly (through a label, pin or "
                             "junction at their meeting point); KiCad's result there is not "
                             "defined: use a bus entry, or --use-kicad-cli",
                             sf.path, *_place(sf, g))
        if g.pins or g.labels or g.sheet_pins:
            out.append(g)
    return out


def _place(sf: SheetFile, g: Group):
    if g.labels:
        return where(sf, sf.labels[g.labels[0]].uuid)
    if g.pins:
        return where(sf, sf.symbols[g.pins[0].symbol].uuid)
    return ()
