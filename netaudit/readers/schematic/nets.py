"""Net names and membership as KiCad's connection graph works them out.

Follows KiCad's own order of decisions, each checked on hand-drawn sheets and on real
designs against ``kicad-cli sch export netlist`` (KiCad 9.0.8):

1. Each connected group on each sheet instance picks a driver: global label, power pin,
   local label, hierarchical label, sheet pin, then an ordinary pin, in that order of
   strength; among equals the name that is not a ``-Pad`` name, then the smallest name.
2. On one sheet instance, groups sharing a label or power name are one net.
3. A sheet pin joins the group in the sheet below that holds the hierarchical label of
   the same name; along such chains the strongest driver names the whole chain (a global
   or power name beats everything; a strong label beats a weak pin or sheet-pin name;
   then higher priority; then the shorter sheet path; then the smaller name).
4. Groups named alike are one net (global labels and power names join across sheets).
5. A group driven only by one pin, with no label, is ``unconnected-(REF-PIN-PadN)``.
6. A net named like a member of a bus on the same sheet is that bus member; along the
   hierarchy the member takes the name the bus takes (matched by position in a vector,
   by member name in a group). See ``naming``.

Where KiCad's outcome depends on an internal processing order (two different global
names joined through the hierarchy, for instance), reading stops with an InputError.
"""

from __future__ import annotations

from ...errors import InputError
from .buses import parse_bus
from .connect import Group, PlacedPin

NONE, PIN, SHEET_PIN, HIER, LOCAL, LOCAL_POWER, POWER, GLOBAL = range(8)
K_PIN, K_LABEL, K_SHEETPIN = range(3)


class Driver:
    __slots__ = ("kind", "prio", "_name", "item", "power_symbol", "shape", "_namer")

    def __init__(self, kind, prio, name, item, power_symbol=False, shape="", namer=None):
        self.kind = kind
        self.prio = prio
        self._name = name             # GetNameForDriver: escaped, without sheet path
        self.item = item
        self.power_symbol = power_symbol
        self.shape = shape
        self._namer = namer           # ordinary pins: their name is worked out when needed

    @property
    def name(self) -> str:
        if self._name is None:
            self._name = self._namer()
        return self._name


class Sub:
    """A connected group on one sheet instance (KiCad's subgraph)."""

    __slots__ = ("inst", "groups", "drivers", "driver", "strong", "no_connect", "nc_flag",
                 "pins", "hier_pins", "hier_ports", "absorbed", "name", "bare", "suffix",
                 "multiple", "promoted", "order", "bus")

    def __init__(self, inst, group: Group, order: int):
        self.inst = inst
        self.groups = [group]
        self.drivers: list[Driver] = []
        self.driver: Driver | None = None
        self.strong = False
        self.no_connect = False
        self.nc_flag = group.no_connect
        self.pins: list[tuple[PlacedPin, object]] = []     # (pin, PinInfo)
        self.hier_pins: list[Driver] = []
        self.hier_ports: list[Driver] = []
        self.absorbed: Sub | None = None
        self.name = ""
        self.bare = ""
        self.suffix = ""
        self.multiple = False
        self.promoted = False
        self.order = order
        self.bus = None               # BusDef when the driver names a bus

    def full_name(self, driver: Driver | None = None, bare: str | None = None) -> str:
        d = driver or self.driver
        b = self.bare if bare is None else bare
        if d is None:
            return ""
        if d.kind == K_PIN or (d.kind == K_LABEL and d.prio == GLOBAL):
            return b
        return self.inst.names + b


def resolve(sub: Sub, aliases: dict | None = None) -> None:
    """Choose the driver of a group (KiCad's ResolveDrivers)."""
    highest = -1
    candidates: list[Driver] = []
    strong: list[Driver] = []
    for d in sub.drivers:
        if d.prio == PIN and not d.item.in_netlist:
            continue
        if d.prio >= HIER:
            strong.append(d)
        if d.prio > highest:
            candidates = [d]
            highest = d.prio
        elif d.prio == highest:
            candidates.append(d)
    sub.strong = highest >= HIER
    sub.multiple = len(strong) > 1
    if len(candidates) > 1:
        candidates.sort(key=_candidate_key)
    sub.driver = candidates[0] if candidates else None
    if sub.strong:
        sub.drivers = strong
    sub.bare = sub.driver.name if sub.driver else ""
    sub.name = sub.full_name()
    sub.bus = None
    if sub.driver is not None and sub.driver.kind != K_PIN and ("[" in sub.bare or "{" in sub.bare):
        sub.bus = bus_of(sub.bare, aliases or {}, sub)


def bus_of(name: str, aliases: dict, sub: Sub):
    try:
        return parse_bus(name, aliases)
    except ValueError as exc:
        raise InputError(f"{exc}; use --use-kicad-cli", sub.inst.file.path) from None


def kind_of(name: str, aliases: dict) -> str:
    """"net", "vector" or "group": the kind of connection a driver name stands for."""
    if "[" not in name and "{" not in name:
        return "net"
    try:
        bus = parse_bus(name, aliases)
    except ValueError:
        return "group"
    return "net" if bus is None else bus.kind


def sub_kind(sub: Sub) -> str:
    return "net" if sub.bus is None else sub.bus.kind


def _candidate_key(d: Driver):
    return (not d.power_symbol if d.kind == K_PIN else 0,
            0 if d.kind != K_SHEETPIN or d.shape == "output" else 1,
            "-Pad" in d.name, d.name)      # names compare by code point, as wxString does


def local_merge(subs: list[Sub], aliases: dict) -> list[Sub]:
    """Join strongly driven groups of one sheet instance that share a name of the same
    kind (net, vector bus or bus group), KiCad's processSubGraphs (step 2)."""
    by_inst: dict[int, list[Sub]] = {}
    for s in subs:
        by_inst.setdefault(s.inst.index, []).append(s)
    out: list[Sub] = []
    for group in by_inst.values():
        strong = [s for s in group if s.strong and s.driver is not None]
        parent = {id(s): s for s in strong}

        def find(s: Sub) -> Sub:
            while parent[id(s)] is not s:
                parent[id(s)] = parent[id(parent[id(s)])]
                s = parent[id(s)]
            return s

        owner: dict[tuple[str, str], Sub] = {}
        for s in strong:
            kind = sub_kind(s)
            names = {s.bare}
            if not s.promoted:
                names.update(d.name for d in s.drivers
                             if (d.kind == K_LABEL or (d.kind == K_PIN and d.prio >= LOCAL_POWER))
                             and kind_of(d.name, aliases) == kind)
            for n in names:
                o = owner.get((kind, n))
                if o is None:
                    owner[(kind, n)] = s
                else:
                    ra, rb = find(o), find(s)
                    if ra is not rb:
                        if rb.order < ra.order:
                            ra, rb = rb, ra
                        parent[id(rb)] = ra
        merged: dict[int, Sub] = {}
        for s in group:
            if id(s) not in parent:
                out.append(s)
                continue
            root = find(s)
            if root is s:
                out.append(s)
                continue
            root.groups += s.groups
            root.drivers += s.drivers
            root.pins += s.pins
            root.hier_pins += s.hier_pins
            root.hier_ports += s.hier_ports
            root.nc_flag |= s.nc_flag
            root.no_connect |= s.no_connect
            s.absorbed = root
            merged[id(root)] = root
        for root in merged.values():
            _restore_drivers(root)
            resolve(root, aliases)
    out.sort(key=lambda s: s.order)
    return out


def _restore_drivers(sub: Sub) -> None:
    """After a merge the driver list is every strong driver of the parts (weak ones were
    already dropped from strongly driven groups)."""
    seen = set()
    unique = []
    for d in sub.drivers:
        if id(d) not in seen:
            seen.add(id(d))
            unique.append(d)
    sub.drivers = unique


def weak_names(subs: list[Sub]) -> None:
    """Weakly driven groups whose name is already taken get ``_1``, ``_2``... and a sheet
    pin with a name of its own becomes a strong driver (KiCad's processSubGraphs)."""
    taken: dict[str, list[Sub]] = {}
    for s in subs:
        taken.setdefault(s.name, []).append(s)
    for s in subs:
        if s.strong or s.driver is None:
            continue
        vec = taken.get(s.name, [])
        if len(vec) > 1:
            suffix = 1
            while True:
                new = f"{s.name}_{suffix}"
                suffix += 1
                if new not in taken:
                    break
            vec.remove(s)
            s.suffix = f"_{suffix - 1}"
            s.bare = s.driver.name + s.suffix
            s.name = new
            taken[new] = [s]
        elif s.driver.kind == K_SHEETPIN:
            bare_taken = any(c.inst is s.inst for c in taken.get(s.bare, ()))
            if not bare_taken:
                s.strong = True
                s.promoted = True


def neighbors(subs: list[Sub], aliases: dict) -> list[tuple[Sub, object, Sub]]:
    """(bus group, member key, net group) for each net on the same sheet instance named
    like a member of a bus there: the net belongs to that bus member."""
    by_inst: dict[int, list[Sub]] = {}
    for s in subs:
        by_inst.setdefault(s.inst.index, []).append(s)
    out = []
    for group in by_inst.values():
        nets: dict[str, list[Sub]] = {}
        for s in group:
            if s.bus is not None or not s.strong:
                continue
            names = {s.bare}
            if s.multiple:
                names.update(d.name for d in s.drivers
                             if d.kind == K_LABEL or (d.kind == K_PIN and d.prio >= LOCAL_POWER))
            for n in names:
                nets.setdefault(n, []).append(s)
        for s in group:
            if s.bus is None or not s.strong:
                continue
            buses = [s.bus]
            if s.multiple:
                for d in s.drivers:
                    if d is not s.driver and d.kind == K_LABEL and d.name != s.bare:
                        other = bus_of(d.name, aliases, s)
                        if other is not None and other.kind == s.bus.kind:
                            buses.append(other)
            for bus in buses:
                for m in bus.members:
                    for n in nets.get(m.bare, ()):
                        out.append((s, m.key, n))
    return out


def hierarchy_links(subs: list[Sub], instances) -> dict[int, list[Sub]]:
    """Sheet pin <-> hierarchical label links between groups (by index in ``subs``)."""
    index = {id(s): i for i, s in enumerate(subs)}
    by_inst: dict[int, list[Sub]] = {}
    for s in subs:
        by_inst.setdefault(s.inst.index, []).append(s)
    child_of: dict[tuple[int, str], int] = {}
    for inst in instances:
        if inst.parent is not None:
            child_of[(inst.parent, inst.sheet.uuid)] = inst.index
    links: dict[int, list[Sub]] = {i: [] for i in range(len(subs))}
    for s in subs:
        for pin in s.hier_pins:
            sheet_uuid, _ = pin.item
            child = child_of.get((s.inst.index, sheet_uuid))
            if child is None:
                continue
            for c in by_inst.get(child, ()):
                if not c.strong or not c.hier_ports:
                    continue
                if any(port.name == pin.name for port in c.hier_ports):
                    links[index[id(s)]].append(c)
                    links[index[id(c)]].append(s)
    return links


def chain_best(chain: list[Sub], names: dict[int, str] | None = None) -> Sub:
    """The group whose name a hierarchy chain takes (KiCad's propagateToNeighbors).

    ``names`` overrides the current name of some groups (by ``id``), as when a bus has
    already renamed a net to its member name."""
    names = names or {}
    globals_ = {names.get(id(s), s.name) for s in chain if s.driver.prio >= POWER}
    if len(globals_) > 1:
        s = chain[0]
        raise InputError("the nets " + ", ".join(sorted(globals_)) + " are joined through "
                         "sheet pins and hierarchical labels; KiCad's choice of name there "
                         "depends on its internal order: use --use-kicad-cli",
                         s.inst.file.path)
    start = min(chain, key=lambda s: s.order)
    key = lambda s: (names.get(id(s), s.name), s.order)
    results = {id(_best(start, order, names)) for order in
               (sorted(chain, key=key), sorted(chain, key=key, reverse=True))}
    if len(results) > 1:
        shown = ", ".join(sorted({names.get(id(s), s.name) for s in chain}))
        raise InputError(f"nets {shown} are joined through the sheet hierarchy in a way whose "
                         "resulting name depends on KiCad's internal order: use --use-kicad-cli",
                         start.inst.file.path)
    return _best(start, chain, names)


def _best(start: Sub, chain: list[Sub], names: dict[int, str]) -> Sub:
    best = start
    highest = start.driver.prio
    best_strong = highest >= HIER
    best_name = names.get(id(start), start.name)
    if highest >= POWER:
        return best
    for c in chain:
        if c is start:
            continue
        p = c.driver.prio
        strong = p >= HIER
        shorter = c.inst.depth < best.inst.depth
        as_good = c.inst.depth <= best.inst.depth
        name = names.get(id(c), c.name)
        if p >= POWER or (not best_strong and strong) or (p > highest and strong) or \
                (p == highest and strong and shorter) or \
                (best_strong == strong and as_good and p == highest and name < best_name):
            best, highest, best_strong, best_name = c, p, strong, name
    return best
