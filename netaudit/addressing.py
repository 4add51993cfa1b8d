"""Each device's bus address, read from the config, a symbol field or the catalog and its
address-select (strap) pins; and the address domains those addresses live in.

Where an address comes from, strongest first (``Device.address_source``):

``config`` / ``config-straps``
    a netaudit.yaml ``parts:`` rule, fixed or read from the straps;
``symbol-field``
    the symbol field ``I2C_ADDR`` (:data:`ADDRESS_FIELD`) holding ``0x48`` or ``48h``: the
    7-bit address, set per placed part (10-bit addresses go in netaudit.yaml);
``catalog`` / ``catalog-straps``
    the part catalog (netaudit/catalog), fixed or read from the straps.

Reading a strap (facts of the trade, common practice, no source unless named): the net on
an address pin, after fitted 0 ohm links, is ground (low, ``GND``), a supply rail of any
other voltage, known or not (high, ``VDD``), a bus line of the device's own segment (``SDA``
or ``SCL``, for parts with multi-level address pins), or reaches exactly one of those
through fitted resistors. A pin on no net, alone on its net, or reaching nothing but parts
that are not fitted, test points and capacitors is floating (``OPEN``). A net driven by
another part, or pulled to several levels, cannot be read.

Address domains (CONTRACT.md topology semantics): a translator or repeater splits a bus
into electrical segments but not its address space; a multiplexer channel is a domain of
its own made of the channel and everything upstream of the multiplexer, and channels never
see one another. netaudit works with *zones*: the root segment or a mux channel's segment,
together with the segments reached from it through translators and repeaters. A zone's
domain is the zone and its ancestor zones. A multiplexer's own address lives in its
upstream zone. 10-bit addresses (UM10204 Rev. 6 section 3.1.11) are kept in their own
space: they never collide with 7-bit ones here (a 7-bit device at 0x78-0x7B, the 10-bit
prefix, is reported as a reserved address instead).
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass
from typing import Iterable, Mapping

from .catalog.loader import PinTiesAddress
from .config import FixedAddress, PinBitsAddress, PinTieAddress
from .errors import InputError
from .model import Design, Part
from .results import Bus, Device, Rail, Segment
from .topology.lines import Connectivity
from .topology.names import strip_markup
from .topology.parts import looks_passive

ADDRESS_FIELD = "I2C_ADDR"
ADDRESSED_ROLES = ("target", "mux")          # roles whose address must be known
_FIELD_VALUE = re.compile(r"^\s*(?:0[xX](?P<hex>[0-9A-Fa-f]{1,2})|(?P<h>[0-9A-Fa-f]{1,2})[hH])\s*$")


# ----------------------------------------------------------------------------- results

@dataclass(frozen=True)
class Strap:
    """How one address-select pin is tied."""

    pin: str                      # the pin name the address form uses (A0, ADDR, SA0)
    numbers: tuple[str, ...]      # the part's pin numbers carrying it
    net: str | None               # the pin's net (None: on no net)
    tie: str | None               # GND | VDD | SDA | SCL | OPEN; None when it cannot be read
    via: tuple[str, ...] = ()     # resistors the tie goes through
    floating: bool = False        # left open
    why: str = ""                 # why it cannot be read, or how an open pin was read


@dataclass(frozen=True)
class Resolution:
    """A device's address and how it was worked out."""

    ref: str
    address: int | None = None
    ten_bit: bool = False
    source: str | None = None
    span: int = 1                 # consecutive addresses answered from ``address``
    straps: tuple[Strap, ...] = ()
    reason: str | None = None     # when unknown: no-entry | strap-floating | strap-unresolved | pin-missing
    candidates: tuple[int, ...] = ()   # addresses an open strap could give

    @property
    def occupied(self) -> frozenset[tuple[bool, int]]:
        """Every (ten_bit, address) the device answers."""
        if self.address is None:
            return frozenset()
        return frozenset((self.ten_bit, self.address + i) for i in range(self.span))

    @property
    def floating(self) -> tuple[Strap, ...]:
        """Straps left open where the part gives open no meaning of its own."""
        return tuple(s for s in self.straps if s.floating)


def format_address(address: int | None, ten_bit: bool = False) -> str | None:
    if address is None:
        return None
    return f"0x{address:03X}" if ten_bit else f"0x{address:02X}"


# ------------------------------------------------------------------------- the field

def field_address(part: Part, design_path: str = "") -> int | None:
    """The 7-bit address in the part's ``I2C_ADDR`` field; None when there is none."""
    text = part.field(ADDRESS_FIELD).strip()
    if not text:
        return None
    m = _FIELD_VALUE.match(text)
    if m is None:
        raise InputError(f"part {part.ref}: field {ADDRESS_FIELD} is '{text}'; write the 7-bit "
                         "address as 0x48 or 48h", design_path or None)
    value = int(m.group("hex") or m.group("h"), 16)
    if value > 0x7F:
        raise InputError(f"part {part.ref}: field {ADDRESS_FIELD} is '{text}', above 0x7F; write "
                         f"the 7-bit address (0x{value >> 1:02X} if '{text}' is the 8-bit write "
                         "address; 10-bit addresses go in netaudit.yaml)", design_path or None)
    return value


# ---------------------------------------------------------------------------- straps

def strap_form(address) -> tuple[int, dict[str, dict[str, int]]] | None:
    """Any pin-dependent address form as ``(base, {pin: {tie: offset}})``; None if fixed."""
    if isinstance(address, PinBitsAddress):
        return address.base, {pin: {"GND": 0, "VDD": 1 << bit} for pin, bit in address.pins.items()}
    if isinstance(address, PinTieAddress):
        return 0, {address.pin: dict(address.by_tie)}
    if isinstance(address, PinTiesAddress):
        return address.base, {pin: dict(t) for pin, t in address.ties.items()}
    return None


def _pin_key(name: str) -> str:
    return strip_markup(name).upper().replace(" ", "")


def pins_named(part: Part, name: str) -> tuple[str, ...]:
    """Numbers of the part's pins called ``name``, or with ``name`` as one of the
    ``/``-separated alternatives (``SDO/SA0`` answers to ``SA0``)."""
    want = _pin_key(name)
    exact = [p.number for p in part.pins if _pin_key(p.name) == want]
    if exact:
        return tuple(exact)
    return tuple(p.number for p in part.pins if want in _pin_key(p.name).split("/"))


class Resolver:
    """Reads straps and works out addresses for one design."""

    def __init__(self, design: Design, rails: Mapping[str, Rail], parts: Mapping,
                 conn: Connectivity | None = None):
        self.design = design
        self.parts = parts
        self.conn = conn if conn is not None else Connectivity(design, rails)

    # -- one pin
    def strap(self, part: Part, pin: str, bus_lines: Mapping[str, str], resistor_coded: bool) -> Strap:
        numbers = pins_named(part, pin)
        nets = sorted({self.design.net_of(part.ref, n) or "" for n in numbers})
        if len(nets) > 1:
            return Strap(pin, numbers, None, None, why="pins of this name sit on different nets")
        net = nets[0] or None
        if net is None or self.design.net(net) is None or len(self.design.net(net).nodes) <= 1 \
                or net.startswith("unconnected-("):
            return Strap(pin, numbers, net, "OPEN", floating=True)
        conn = self.conn
        group = conn.group_of[net]
        rail = conn.rail_of.get(group)
        if rail is not None:
            return Strap(pin, numbers, net, "GND" if rail.volts == 0.0 else "VDD")
        line = conn.line_of[group]
        if line in bus_lines:
            return Strap(pin, numbers, net, bus_lines[line])
        ties, vias, others = set(), [], []
        for r, _near, far in conn.resistors_leaving(line):
            if not r.fitted:
                continue
            far_rail = conn.rail_of.get(far)
            if far_rail is not None:
                ties.add("GND" if far_rail.volts == 0.0 else "VDD")
                vias.append(r.ref)
            elif conn.line_of.get(far) in bus_lines:
                ties.add(bus_lines[conn.line_of[far]])
                vias.append(r.ref)
            else:
                others.append(r.ref)
        if len(ties) == 1 and not others:
            if resistor_coded:
                return Strap(pin, numbers, net, None, tuple(sorted(vias)),
                             why=f"tied through {', '.join(sorted(vias))}: this part reads the resistor value")
            return Strap(pin, numbers, net, ties.pop(), tuple(sorted(vias)))
        if ties or others:
            return Strap(pin, numbers, net, None, tuple(sorted(vias + others)),
                         why="pulled to several levels or to a signal through "
                             + ", ".join(sorted(vias + others)))
        drivers = sorted({node.ref for n in conn.line_nets(line) for node in self.design.net(n).nodes
                          if node.ref != part.ref and self._drives(node.ref)})
        if drivers:
            return Strap(pin, numbers, net, None, why="driven by " + ", ".join(drivers))
        return Strap(pin, numbers, net, "OPEN", floating=True)

    def _drives(self, ref: str) -> bool:
        other = self.design.part(ref)
        return other is not None and other.fitted and not looks_passive(other)

    # -- one device
    def resolve(self, dev: Device, segments: Iterable[Segment]) -> Resolution:
        part = self.design.part(dev.ref)
        info = self.parts.get(dev.ref)
        if part is None or dev.role in ("controller", "connector", "passive"):
            return Resolution(dev.ref, reason="not-addressed")
        address, origin = None, None
        if info is not None and info.address is not None and info.address_origin == "config":
            address, origin = info.address, "config"
        else:
            value = field_address(part, self.design.path)
            if value is not None:
                return Resolution(dev.ref, value, False, "symbol-field")
            if info is not None and info.address is not None:
                address, origin = info.address, "catalog"
        if address is None:
            return Resolution(dev.ref, reason="no-entry" if dev.role in ADDRESSED_ROLES else "not-addressed")
        span = (info.address_span or 1) if origin == "catalog" else 1
        if isinstance(address, FixedAddress):
            return Resolution(dev.ref, address.value, address.ten_bit, origin, span)
        base, table = strap_form(address)
        bus_lines: dict[str, str] = {}
        for seg in segments:
            for line in seg.lines:
                if line.nets:
                    bus_lines[self.conn.line_id(line.nets[0])] = line.signal.upper()
        coded = bool(info.resistor_coded)
        straps = []
        for pin in table:
            if not pins_named(part, pin):
                straps.append(Strap(pin, (), None, None, why="the symbol has no pin of this name"))
                continue
            straps.append(self.strap(part, pin, bus_lines, coded))
        return self._combine(dev.ref, base, table, straps, info, f"{origin}-straps", span)

    def _combine(self, ref, base, table, straps, info, source, span) -> Resolution:
        read = []
        for s in straps:
            if s.tie == "OPEN" and "OPEN" in table[s.pin]:
                s = dataclasses.replace(s, floating=False, why="open: a state this pin has")
            elif s.tie == "OPEN" and info.open_pins == "low" and "GND" in table[s.pin]:
                s = dataclasses.replace(s, tie="GND", why="open; reads low (internal pull-down)")
            read.append(s)
        straps = tuple(read)
        if any(not s.numbers for s in straps):
            return Resolution(ref, source=source, straps=straps, reason="pin-missing")
        bad = [s for s in straps if s.tie is None or (s.tie != "OPEN" and s.tie not in table[s.pin])]
        if bad:
            straps = tuple(dataclasses.replace(s, tie=None, why=s.why or f"tied to {s.tie}, not a "
                                               "state this pin has") if s in bad else s for s in straps)
            return Resolution(ref, source=source, straps=straps, reason="strap-unresolved")
        if any(s.floating for s in straps if s.tie == "OPEN"):
            return Resolution(ref, source=source, straps=straps, reason="strap-floating",
                              candidates=_candidates(base, table, straps))
        value = base + sum(table[s.pin][s.tie] for s in straps)
        return Resolution(ref, value, False, source, span, straps)


def _candidates(base, table, straps) -> tuple[int, ...]:
    """Every address the open pins could give, the others as read."""
    options = [base]
    for s in straps:
        offsets = list(table[s.pin].values()) if s.tie == "OPEN" and s.floating else [table[s.pin][s.tie]]
        options = [o + off for o in options for off in sorted(set(offsets))]
    return tuple(sorted(set(options)))


# ------------------------------------------------------------------- the pipeline step

def resolve_buses(design: Design, buses: tuple[Bus, ...], rails: Mapping[str, Rail],
                  parts: Mapping, conn: Connectivity | None = None) -> dict[tuple[str, str], Resolution]:
    """A Resolution for every device of every bus, keyed by (bus name, ref).
    Pass the topology's ``conn`` to reuse its connectivity instead of building it again."""
    resolver = Resolver(design, rails, parts, conn)
    out: dict[tuple[str, str], Resolution] = {}
    for bus in buses:
        on: dict[str, list[Segment]] = {}
        first: dict[str, Device] = {}
        for seg in bus.segments:
            for dev in seg.devices:
                on.setdefault(dev.ref, []).append(seg)
                first.setdefault(dev.ref, dev)
        for ref, dev in first.items():
            out[(bus.name, ref)] = resolver.resolve(dev, on[ref])
    return out


def assign_addresses(buses: tuple[Bus, ...], resolved: Mapping[tuple[str, str], Resolution],
                     parts: Mapping) -> tuple[Bus, ...]:
    """Buses with each device's address, address source and maximum mode filled in from
    the resolutions of :func:`resolve_buses`."""
    out = []
    for bus in buses:
        segs = []
        for seg in bus.segments:
            devices = []
            for dev in seg.devices:
                r = resolved[(bus.name, dev.ref)]
                info = parts.get(dev.ref)
                devices.append(dataclasses.replace(
                    dev, address=r.address, address_10bit=r.ten_bit,
                    address_source=r.source if r.address is not None else None,
                    max_mode=(info.max_mode if info is not None and info.max_mode else dev.max_mode)))
            segs.append(dataclasses.replace(seg, devices=tuple(devices)))
        out.append(dataclasses.replace(bus, segments=tuple(segs)))
    return tuple(out)


# ------------------------------------------------------------------------------ domains

@dataclass(frozen=True)
class Zone:
    """Segments that share one address space: a head segment (the root, or a mux channel)
    and those reached from it through translators and repeaters."""

    id: str                        # the head segment's id
    segments: tuple[str, ...]
    parent: str | None             # the zone upstream of the mux, None for the root zone
    mux: str | None = None         # the mux whose channel heads this zone
    channel: str | None = None


@dataclass(frozen=True)
class AddressDomain:
    """What a controller sees with one mux channel (per level) switched on."""

    id: str                        # the id of its innermost zone
    bus: str
    zones: tuple[str, ...]         # innermost first, root last
    segments: tuple[str, ...]
    devices: tuple[Device, ...]    # each device once, in its home zone


def _parent_segments(bus: Bus) -> dict[str, str | None]:
    parent: dict[str, str | None] = {}
    for seg in bus.segments:
        if seg.upstream is None:
            continue
        ref = seg.upstream.ref
        holders = [t for t in bus.segments if t is not seg and any(d.ref == ref for d in t.devices)
                   and (t.upstream is None or t.upstream.ref != ref)]
        parent[seg.id] = holders[0].id if holders else None
    return parent


def zones(bus: Bus) -> tuple[dict[str, Zone], dict[str, str]]:
    """The bus's zones by id, and the zone of every segment."""
    parent = _parent_segments(bus)
    zone_of: dict[str, str] = {}

    def head(sid: str, seen: frozenset = frozenset()) -> str:
        if sid in zone_of:
            return zone_of[sid]
        seg = next(s for s in bus.segments if s.id == sid)
        up = parent.get(sid)
        if seg.upstream is None or seg.upstream.kind == "mux" or up is None or up in seen:
            zone_of[sid] = sid
        else:
            zone_of[sid] = head(up, seen | {sid})
        return zone_of[sid]

    for seg in bus.segments:
        head(seg.id)
    out: dict[str, Zone] = {}
    for seg in bus.segments:
        zid = zone_of[seg.id]
        if zid not in out:
            lead = next(s for s in bus.segments if s.id == zid)
            up = parent.get(zid)
            is_channel = lead.upstream is not None and lead.upstream.kind == "mux" and up is not None
            out[zid] = Zone(zid, (), zone_of[up] if is_channel else None,
                            lead.upstream.ref if is_channel else None,
                            lead.upstream.channel if is_channel else None)
        out[zid] = dataclasses.replace(out[zid], segments=out[zid].segments + (seg.id,))
    return out, zone_of


def home_zones(bus: Bus) -> dict[str, str]:
    """The zone each device's address lives in: a mux's upstream zone, otherwise the zone
    of the first segment the device is on. Connectors are left out."""
    _zones, zone_of = zones(bus)
    home: dict[str, str] = {}
    for seg in bus.segments:
        for dev in seg.devices:
            if dev.role == "connector" or dev.ref in home:
                continue
            if seg.upstream is not None and seg.upstream.kind == "mux" and seg.upstream.ref == dev.ref:
                continue  # a mux's own channel: its address is upstream
            home[dev.ref] = zone_of[seg.id]
    for seg in bus.segments:   # a device seen only on channels of its own (not expected)
        for dev in seg.devices:
            if dev.role != "connector" and dev.ref not in home:
                home[dev.ref] = zone_of[seg.id]
    return home


def chain(zone_map: Mapping[str, Zone], zid: str) -> tuple[str, ...]:
    """The zone and its ancestors, innermost first."""
    out = []
    while zid is not None and zid not in out:
        out.append(zid)
        zid = zone_map[zid].parent
    return tuple(out)


def address_domains(buses: Iterable[Bus]) -> list[AddressDomain]:
    """One domain per zone: the zone plus everything upstream of it."""
    out = []
    for bus in buses:
        zone_map, _zone_of = zones(bus)
        home = home_zones(bus)
        first: dict[str, Device] = {}
        for seg in bus.segments:
            for dev in seg.devices:
                first.setdefault(dev.ref, dev)
        for zid in zone_map:
            links = chain(zone_map, zid)
            devices = tuple(first[ref] for ref in sorted(home) if home[ref] in links)
            segments = tuple(s for z in reversed(links) for s in zone_map[z].segments)
            out.append(AddressDomain(zid, bus.name, links, segments, devices))
    return out


COLLISION_RULES = ("address-collision", "mux-address-overlap")


def address_map(audit) -> list[dict]:
    """Every address domain of an Audit as plain data, for the reports: its segments, the
    addresses of its targets and multiplexers (and of any other device that has one), and
    the collision findings among them."""
    out = []
    by_bus: dict[str, list] = {}
    for f in audit.findings:
        if f.rule in COLLISION_RULES:
            by_bus.setdefault(f.bus, []).append(f)
    for dom in audit.address_domains:
        devices = [d for d in dom.devices if d.role in ADDRESSED_ROLES or d.address is not None]
        refs = {d.ref for d in devices}
        collisions = [{"rule": f.rule, "refs": list(f.refs),
                       "addresses": list(f.data.get("addresses", [])), "waived": f.waived}
                      for f in by_bus.get(dom.bus, ()) if set(f.refs) <= refs]
        out.append({
            "id": dom.id, "bus": dom.bus, "zones": list(dom.zones), "segments": list(dom.segments),
            "devices": [{"ref": d.ref, "address": format_address(d.address, d.address_10bit),
                         "address_source": d.address_source}
                        for d in sorted(devices, key=lambda d: (d.address is None, d.address_10bit,
                                                                d.address or 0, d.ref))],
            "collisions": sorted(collisions, key=lambda c: (c["rule"], c["refs"])),
        })
    return out
