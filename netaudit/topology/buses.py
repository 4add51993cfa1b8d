"""Find every two-wire bus: lines, pairing, segments, devices and pull-ups.

Evidence, strongest first: ``buses:`` in netaudit.yaml; pin functions of devices
(``SDA``, ``I2C1_SCL``, ``SDAA``, mux channels ``SD0``/``SC0``); net names (``/I2C_SDA``,
``AUX_TYPE_C.SDA``). A data line is paired with its clock line through the parts they
share (a part's ``SDA1`` pairs with its ``SCL1``) and through partner names
(``/SDA_A`` with ``/SCL_A``). Multi-function pins (``PB7/SDA``) alone make no bus unless
something else on the line (another device, a pull-up to a rail) says it is one.

Splitting (CONTRACT.md, topology semantics): a multiplexer or switch, a repeater/buffer
and a translator (integrated, or a discrete N-channel FET per line) split a bus into
segments; the groups of segments joined by splitters are the buses.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from typing import Mapping

from ..errors import InputError
from ..model import Design, Part
from ..results import Bus, Device, DevicePin, Line, PullUp, Rail, Segment, SeriesLink, Upstream
from .graphs import connected_groups, max_weight_pairs
from .lines import SERIES_MAX_OHMS, Connectivity
from .names import net_base, net_signal, partner_names, pin_signal, strip_markup
from .parts import is_connector, is_fet, looks_passive

CONTROLLER_MIN_PINS = 32  # a processor, FPGA or module, not a peripheral (common practice, no source)


@dataclass
class _Evidence:
    """What speaks for one line being a data or clock line, and how strongly."""

    sda: float = 0.0
    scl: float = 0.0
    strong: bool = False          # a dedicated bus pin or a bus-like net name
    pins: list = field(default_factory=list)   # (ref, pin, function, PinSignal)
    named: bool = False
    forced: str | None = None     # from config

    @property
    def signal(self) -> str | None:
        if self.forced:
            return self.forced
        if self.sda > self.scl:
            return "sda"
        if self.scl > self.sda:
            return "scl"
        return None


@dataclass(frozen=True)
class UnpairedLine:
    """A line that looks like SDA or SCL but found no partner line."""

    signal: str
    nets: tuple[str, ...]
    refs: tuple[str, ...]


@dataclass(frozen=True)
class UnconnectedPin:
    """A device's SDA or SCL pin left on no net (or alone on its net)."""

    ref: str
    pin: str
    function: str
    signal: str


@dataclass(frozen=True)
class Topology:
    """What bus finding produced, for the checks."""

    buses: tuple[Bus, ...]
    unpaired: tuple[UnpairedLine, ...]
    unconnected: tuple[UnconnectedPin, ...]
    rails: Mapping[str, Rail]
    line_of_net: Mapping[str, str]       # net -> line id, for bus lines only
    conn: Connectivity                   # 0 ohm groups, series joins, resistors: built once, shared


@dataclass(frozen=True)
class _Splitter:
    """A part that splits a bus into segments: mux channel, translator or repeater."""

    ref: str
    kind: str                   # mux | translator | repeater
    channel: str | None
    upstream: str | None        # segment key known to be upstream by structure (mux)


def find_buses(design: Design, rails: Mapping[str, Rail], *,
               roles: Mapping[str, str] | None = None,
               bus_configs=(), default_mode: str = "fast") -> Topology:
    roles = dict(roles or {})
    conn = Connectivity(design, rails)
    evidence: dict[str, _Evidence] = defaultdict(_Evidence)

    # 1. Evidence per line, from pin functions and net names.
    unconnected: list[UnconnectedPin] = []
    for net in design.nets:
        line = conn.line_id(net.name)
        single = len(net.nodes) == 1 or net.name.startswith("unconnected-(")
        for node in net.nodes:
            sig = pin_signal(node.pin_function)
            if sig is None:
                continue
            part = design.part(node.ref)
            if part is not None and (looks_passive(part) or is_connector(part)) and not sig.channel:
                weight = 0.5  # a connector pin named SDA is evidence, but weak
            else:
                weight = 2.0 if sig.dedicated else 1.0
            if single:
                if part is not None and not looks_passive(part) and not is_connector(part):
                    unconnected.append(UnconnectedPin(node.ref, node.pin, node.pin_function, sig.signal))
                continue
            ev = evidence[line]
            ev.pins.append((node.ref, node.pin, node.pin_function, sig))
            setattr(ev, sig.signal, getattr(ev, sig.signal) + weight)
            if sig.dedicated and weight >= 2.0:
                ev.strong = True
        name_sig = net_signal(net.name)
        if name_sig and not single:
            ev = evidence[line]
            setattr(ev, name_sig, getattr(ev, name_sig) + 2.0)
            ev.strong = ev.named = True
    # Pins a part has but that sit on no net at all are unconnected too.
    for part in design.parts:
        if looks_passive(part) or is_connector(part):
            continue
        for pin in part.pins:
            sig = pin_signal(pin.name)
            if sig is not None and sig.dedicated and design.net_of(part.ref, pin.number) is None:
                unconnected.append(UnconnectedPin(part.ref, pin.number, pin.name, sig.signal))

    # 2. Config buses force their lines.
    forced_pairs: list[tuple[str, str, object]] = []
    for bc in bus_configs:
        ends = {}
        for signal in ("sda", "scl"):
            lines = set()
            for net in getattr(bc, signal):
                if design.net(net) is None:
                    raise InputError(f"buses: bus '{bc.name}' names {signal} net '{net}', which is not in "
                                     "the design", getattr(bc, "source", None) or "netaudit.yaml",
                                     getattr(bc, "line", None))
                line_id = conn.line_id(net)
                if conn.is_rail_line(line_id):
                    raise InputError(f"buses: bus '{bc.name}' names {signal} net '{net}', which is a "
                                     "supply rail (by its name, a rails: entry or a 0 ohm link to one)",
                                     getattr(bc, "source", None) or "netaudit.yaml",
                                     getattr(bc, "line", None))
                lines.add(line_id)
            for ln in lines:
                evidence[ln].forced = signal
                evidence[ln].strong = True
            ends[signal] = sorted(lines)[0]
        forced_pairs.append((ends["sda"], ends["scl"], bc))

    # 3. Discrete FET shifters carry a line's signal to the other side.
    fets = []
    for part in design.parts:
        if not is_fet(part):
            continue
        pins = {p.name.upper(): p.number for p in part.pins}
        ns, nd = design.net_of(part.ref, pins["S"]), design.net_of(part.ref, pins["D"])
        if not ns or not nd:
            continue
        ls, ld = conn.line_id(ns), conn.line_id(nd)
        if ls == ld or conn.is_rail_line(ls) or conn.is_rail_line(ld):
            continue
        es, ed = evidence.get(ls), evidence.get(ld)
        sig = (es.signal if es else None) or (ed.signal if ed else None)
        if sig is None:
            continue
        for ln in (ls, ld):
            ev = evidence[ln]
            if ev.signal is None:
                setattr(ev, sig, getattr(ev, sig) + 1.0)
        fets.append((part.ref, ls, ld))

    candidates = {ln: ev for ln, ev in evidence.items()
                  if ev.signal is not None and not conn.is_rail_line(ln)}

    # 4. Pair data lines with clock lines.
    weights: dict[tuple[tuple[str, str], tuple[str, str]], float] = {}
    def bump(a: str, b: str, w: float) -> None:
        edge = (("sda", a), ("scl", b))
        weights[edge] = weights.get(edge, 0.0) + w

    by_part: dict[str, dict[str, dict[str, set]]] = defaultdict(lambda: defaultdict(lambda: {"sda": set(), "scl": set()}))
    for ln, ev in candidates.items():
        for ref, _pin, _fn, sig in ev.pins:
            by_part[ref][sig.key][sig.signal].add(ln)
    for ref, keys in by_part.items():
        for key, sides in keys.items():
            for a in sides["sda"]:
                for b in sides["scl"]:
                    if a != b and candidates.get(a) and candidates[a].signal == "sda" \
                            and candidates.get(b) and candidates[b].signal == "scl":
                        bump(a, b, 3.0)
    for ln, ev in candidates.items():
        if ev.signal != "sda":
            continue
        for net in conn.line_nets(ln):
            for partner in partner_names(net):
                if design.net(partner) is not None:
                    other = conn.line_id(partner)
                    if other in candidates and candidates[other].signal == "scl":
                        bump(ln, other, 4.0)
    parts_on: dict[str, set[str]] = defaultdict(set)
    for ln in candidates:
        for net in conn.line_nets(ln):
            n = design.net(net)
            for node in n.nodes:
                parts_on[node.ref].add(ln)
    for ref, lines in parts_on.items():
        part = design.part(ref)
        if part is None or looks_passive(part) or len(lines) > 16:
            continue
        sdas = [x for x in lines if candidates[x].signal == "sda"]
        scls = [x for x in lines if candidates[x].signal == "scl"]
        if len(sdas) * len(scls) <= 4:
            for a in sdas:
                for b in scls:
                    bump(a, b, 1.0)
    for a, b, _bc in forced_pairs:
        bump(a, b, 1000.0)

    matching = max_weight_pairs(weights)
    pairs: dict[str, str] = {}
    for u, v in matching:
        (su, lu), (_, lv) = u, v
        sda, scl = (lu, lv) if su == "sda" else (lv, lu)
        pairs[sda] = scl

    def strong_enough(sda: str, scl: str) -> bool:
        if candidates[sda].strong or candidates[scl].strong:
            return True
        # Only multi-function pins (PB7/SDA): a bus needs a second part that names a bus pin
        # on the lines, or pull-ups to a rail on both lines; an LED, a button or a single
        # strap resistor on a port pin is not a bus.
        talkers = {ref for ln in (sda, scl) for ref, *_ in candidates[ln].pins}
        if len(talkers) >= 2:
            return True
        pulled = 0
        for ln in (sda, scl):
            if any(r.fitted and conn.rail_of.get(far) is not None and conn.rail_of[far].volts != 0.0
                   for r, _near, far in conn.resistors_leaving(ln)):
                pulled += 1
        return pulled == 2

    accepted = {sda: scl for sda, scl in pairs.items() if strong_enough(sda, scl)}
    paired = set(accepted) | set(accepted.values())
    unpaired = []
    for ln, ev in sorted(candidates.items()):
        if ln in paired or not ev.strong:
            continue
        refs = tuple(sorted({ref for ref, *_ in ev.pins}))
        unpaired.append(UnpairedLine(ev.signal, conn.line_nets(ln), refs))

    # 5. Segments and the parts that split them.
    seg_of_line: dict[str, str] = {}
    for sda, scl in accepted.items():
        seg_of_line[sda] = sda
        seg_of_line[scl] = sda
    splitters: dict[str, list] = defaultdict(list)   # ref -> [(segment key, PinSignal)]
    for ln in paired:
        for ref, _pin, _fn, sig in candidates[ln].pins:
            splitters[ref].append((seg_of_line[ln], sig))
    edges: list[tuple[str, str, _Splitter]] = []
    for ref, hits in splitters.items():
        segs = {s for s, _ in hits}
        part = design.part(ref)
        if len(segs) < 2 or part is None or is_connector(part) or looks_passive(part):
            continue
        role = roles.get(ref)
        if role in ("controller", "target") or (role is None and len(part.pins) >= CONTROLLER_MIN_PINS):
            continue  # a processor with several bus ports sits on several buses; it splits none
        channel_of = {s: sig.channel for s, sig in hits if sig.channel is not None}
        if not channel_of and (len(segs) >= 3 or role == "mux"):
            # SDA/SCL upstream with SDA0/SCL0, SDA1/SCL1 ... downstream: a multiplexer.
            channel_of = {s: sig.key for s, sig in hits if sig.key}
            ups = [s for s, sig in hits if not sig.key]
        else:
            ups = [s for s, sig in hits if sig.channel is None]
        if channel_of:
            up = ups[0] if ups else None
            for seg, ch in sorted(channel_of.items()):
                if seg != up:
                    edges.append((up or seg, seg, _Splitter(ref, "mux", ch, up)))
        else:
            kind = roles.get(ref) if roles.get(ref) in ("translator", "repeater") else _side_kind(design, part, rails, conn)
            ordered = sorted(segs, key=lambda s: min(sig.key for t, sig in hits if t == s))
            for seg in ordered[1:]:
                edges.append((ordered[0], seg, _Splitter(ref, kind, None, None)))
    for ref, ls, ld in fets:
        if ls in seg_of_line and ld in seg_of_line and seg_of_line[ls] != seg_of_line[ld]:
            edges.append((seg_of_line[ls], seg_of_line[ld], _Splitter(ref, "translator", None, None)))

    # 6. Buses: connected groups of segments, oriented from the controller's segment.
    bus_config_of = {}
    for a, _b, bc in forced_pairs:
        if a in accepted:
            bus_config_of[a] = bc
    buses = []
    used_names: set[str] = set()
    seg_groups = connected_groups(accepted, ((a, b) for a, b, _sp in edges if a != b))
    for comp in sorted(seg_groups, key=lambda c: sorted(c)[0]):
        downstream = {b for a, b, sp in edges if sp.kind == "mux" and sp.upstream == a and b in comp}
        root = _pick_root(design, conn, comp - downstream or comp, accepted)
        parent: dict[str, tuple[str, _Splitter]] = {}
        order = [root]
        seen = {root}
        adjacency = defaultdict(list)
        for a, b, sp in edges:
            if a in comp:
                adjacency[a].append((b, sp))
                adjacency[b].append((a, sp))
        i = 0
        while i < len(order):
            cur = order[i]
            i += 1
            for nxt, sp in sorted(adjacency[cur], key=lambda t: t[0]):
                if nxt not in seen:
                    seen.add(nxt)
                    parent[nxt] = (cur, sp)
                    order.append(nxt)
        bc = next((bus_config_of[s] for s in order if s in bus_config_of), None)
        name = bc.name if bc else _bus_name(conn, root, used_names)
        used_names.add(name)
        mode = (bc.mode if bc and bc.mode else None) or default_mode
        seg_ids: dict[str, str] = {root: name}
        segments = []
        for key in order:
            upstream = None
            if key in parent:
                par, sp = parent[key]
                side = f".ch{sp.channel}" if sp.channel is not None else f".{_side_label(splitters[sp.ref], key)}"
                sid = f"{seg_ids[par]}/{sp.ref}{side}"
                while sid in seg_ids.values():
                    sid += "'"
                seg_ids[key] = sid
                upstream = Upstream(sp.ref, sp.kind, sp.channel)
            segments.append(_segment(design, conn, seg_ids[key], key, accepted[key], upstream,
                                     roles, splitters, edges, bc if key == root else None,
                                     set(candidates)))
        segments = _mark_controller(design, segments, roles)
        extra = bc.extra_capacitance_f if bc else 0.0
        buses.append(Bus(name, mode, tuple(segments), "config" if bc else _evidence_kind(candidates, order, accepted), extra))

    line_of_net = {}
    for sda, scl in accepted.items():
        for ln in (sda, scl):
            for net in conn.line_nets(ln):
                line_of_net[net] = ln
    return Topology(tuple(sorted(buses, key=lambda b: b.name)), tuple(unpaired),
                    tuple(sorted(set(unconnected), key=lambda u: (u.ref, u.pin))), rails, line_of_net, conn)


def _evidence_kind(candidates, keys, accepted) -> str:
    for key in keys:
        for ln in (key, accepted[key]):
            if any(sig.dedicated for *_x, sig in candidates[ln].pins):
                return "pin-function"
    return "net-name"


def _side_label(hits, seg) -> str:
    keys = sorted({sig.key for s, sig in hits if s == seg})
    return keys[0] if keys and keys[0] else "side"


def _side_kind(design: Design, part: Part | None, rails, conn) -> str:
    """Translator when the part's two sides are powered from rails of different voltage."""
    if part is None:
        return "repeater"
    volts = set()
    for pin in part.pins:
        if pin.type in ("power_in", "power_out") or \
                strip_markup(pin.name).upper().startswith(("VREF", "VCC", "VDD", "VL")):
            net = design.net_of(part.ref, pin.number)
            if net:
                rail = supply_rail_of(conn, net)
                if rail is not None and rail.volts:
                    volts.add(rail.volts)
    return "translator" if len(volts) > 1 else "repeater"


def supply_rail_of(conn: Connectivity, net: str) -> Rail | None:
    """The rail a supply pin's net is, or reaches through one resistor (a reference pin
    fed through a resistor, as PCA9306-style translators are wired)."""
    group = conn.group_of[net]
    rail = conn.rail_of.get(group)
    if rail is not None and rail.volts is not None:
        return rail
    for r, _near, far in conn.resistors_leaving(conn.line_of[group]):
        if r.fitted and far in conn.rail_of and conn.rail_of[far].volts:
            return conn.rail_of[far]
    return rail


def _pick_root(design: Design, conn: Connectivity, keys: set[str], accepted: dict[str, str]) -> str:
    """The segment the controller sits on: the one with a processor-sized part, else the one
    with the largest connector (a module socket or host connector), else the largest part."""
    def score(key: str) -> tuple:
        big = con = other = 0
        for ln in (key, accepted[key]):
            for net in conn.line_nets(ln):
                for node in design.net(net).nodes:
                    part = design.part(node.ref)
                    if part is None or looks_passive(part):
                        continue
                    n = len(part.pins)
                    if is_connector(part):
                        con = max(con, n)
                    elif n >= CONTROLLER_MIN_PINS:
                        big = max(big, n)
                    else:
                        other = max(other, n)
        return (big, con, other, -len(key), key)
    return max(sorted(keys), key=score)


def _bus_name(conn: Connectivity, root: str, used: set[str]) -> str:
    nets = [n for n in conn.line_nets(root) if net_signal(n) == "sda"] or \
        [n for n in conn.line_nets(root) if not n.startswith("Net-(")] or list(conn.line_nets(root))
    base = strip_markup(net_base(sorted(nets, key=lambda n: (len(n), n))[0]))
    stem = base
    for token in ("SDA", "sda"):
        stem = stem.replace(token, "")
    stem = stem.strip("_.- ")
    if not stem or stem.startswith("Net-("):
        stem = "I2C"
    name, n = stem, 2
    while name in used:
        name = f"{stem}-{n}"
        n += 1
    return name


def _line(design: Design, conn: Connectivity, signal: str, ln: str, candidates_lines: set[str]) -> Line:
    pullups, pulldowns = [], []
    for r, near, far in conn.resistors_leaving(ln):
        rail = conn.rail_of.get(far)
        if rail is not None:
            if rail.volts == 0.0:
                pulldowns.append(PullUp(r.ref, r.ohms, rail.net, r.fitted, r.part.sheet_path,
                                        r.part.sheet_file, False, near))
                continue
            pullups.append(PullUp(r.ref, r.ohms, rail.net, r.fitted, r.part.sheet_path,
                                  r.part.sheet_file, False, near))
            continue
        far_line = conn.line_of.get(far)
        if not r.fitted or far_line in candidates_lines:
            continue
        if r.ohms is not None and r.ohms <= SERIES_MAX_OHMS:
            continue
        named = [n for n in conn.members[far] if not n.startswith("Net-(")] or list(conn.members[far])
        pullups.append(PullUp(r.ref, r.ohms, named[0], True, r.part.sheet_path, r.part.sheet_file,
                              False, near))
    series = [SeriesLink(r.ref, r.ohms, tuple(sorted((r.a, r.b))), r.fitted)
              for r in conn.series_in(ln) + conn.zero_links_in(ln)]
    return Line(signal, conn.line_nets(ln), tuple(sorted(pullups, key=lambda p: (p.ref, p.net))),
                tuple(sorted(series, key=lambda s: (s.ref, s.nets))),
                pulldowns=tuple(sorted(pulldowns, key=lambda p: (p.ref, p.net))))


def _segment(design, conn, sid, sda_ln, scl_ln, upstream, roles, splitters, edges, bc,
             all_bus_lines) -> Segment:
    sda = _line(design, conn, "sda", sda_ln, all_bus_lines)
    scl = _line(design, conn, "scl", scl_ln, all_bus_lines)
    if bc is not None and bc.offboard_pullup is not None:
        op = bc.offboard_pullup
        sda = _with_offboard(sda, op)
        scl = _with_offboard(scl, op)
    split_kind = {sp.ref: sp.kind for _a, _b, sp in edges}
    pins_by_ref: dict[str, list[DevicePin]] = defaultdict(list)
    for line in (sda, scl):
        for net in line.nets:
            for node in design.net(net).nodes:
                part = design.part(node.ref)
                if part is None or looks_passive(part):
                    continue
                if not part.fitted and not (is_connector(part) and not part.dnp):
                    continue  # not on the board (a connector left off the BOM, like an edge connector, is)
                if node.pin_type == "passive" and not is_connector(part) and node.ref not in split_kind \
                        and pin_signal(node.pin_function) is None:
                    continue  # protection or filtering, not a device
                pins_by_ref[node.ref].append(DevicePin(node.ref, node.pin, node.pin_function, net, line.signal))
    devices = []
    for ref, pins in sorted(pins_by_ref.items()):
        part = design.part(ref)
        if ref in roles:
            role = roles[ref]
        elif ref in split_kind:
            role = split_kind[ref]
        elif is_connector(part):
            role = "connector"
        else:
            role = "target"
        devices.append(Device(ref, part.value, role, tuple(sorted(pins, key=lambda p: (p.signal, p.pin)))))
    return Segment(sid, sda, scl, tuple(devices), upstream)


def _with_offboard(line: Line, op) -> Line:
    import dataclasses
    extra = PullUp("off-board", op.ohms, op.rail, True, "", "", True, line.nets[0] if line.nets else "")
    return dataclasses.replace(line, pullups=line.pullups + (extra,))


def _mark_controller(design: Design, segments: list[Segment], roles: Mapping[str, str]) -> list[Segment]:
    """Mark processor-sized parts as the bus's controllers, unless config or catalog said.

    A processor, FPGA or module reaches the bus through general-purpose or multi-function
    pins (``GPIO8``, ``IO22``, ``PB7/I2C1_SDA``, ``I2C1_SDA``), a peripheral through pins
    named plainly ``SDA``/``SCL``; both need many pins (common practice, no source).
    Without such a part, the largest part is taken; without a part of processor size,
    no controller is marked (it may sit on another board).
    """
    import dataclasses
    if any(d.role == "controller" for s in segments for d in s.devices):
        return segments
    sized = {}
    for seg in segments:
        for d in seg.devices:
            if d.role == "target" and d.ref not in roles:
                n = len(design.part(d.ref).pins)
                if n >= CONTROLLER_MIN_PINS:
                    general = any(_general_purpose(p.function) for p in d.pins)
                    sized[d.ref] = (general, n)
    if not sized:
        return segments
    chosen = {ref for ref, (general, _n) in sized.items() if general}
    if not chosen:
        chosen = {max(sorted(sized), key=lambda r: sized[r][1])}
    return [dataclasses.replace(s, devices=tuple(dataclasses.replace(d, role="controller") if d.ref in chosen else d
                                                 for d in s.devices)) for s in segments]


def _general_purpose(function: str) -> bool:
    sig = pin_signal(function)
    if sig is not None:
        return not sig.dedicated or bool(sig.key) and function.upper().startswith(("I2C", "TWI", "IIC"))
    return True  # GPIO8, IO22, IOB_23: a pin that is not named for the bus
