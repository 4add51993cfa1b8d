"""Segments and buses from paired lines: the parts that split a bus, and each bus's
segments walked out from the controller's, with their lines, pull-ups and devices.

Splitting (CONTRACT.md, topology semantics): a multiplexer or switch, a repeater/buffer
and a translator (integrated, or a discrete N-channel FET per line) split a bus into
segments; the groups of segments joined by splitters are the buses.
"""

from __future__ import annotations

import dataclasses
from collections import defaultdict
from dataclasses import dataclass
from typing import Mapping

from ..model import Design, Part
from ..results import Bus, Device, DevicePin, Line, PullUp, Rail, Segment, SeriesLink, Upstream
from .graphs import connected_groups
from .lines import SERIES_MAX_OHMS, Connectivity
from .names import net_base, net_signal, pin_signal, strip_markup
from .pairing import Pairing
from .parts import is_connector, looks_passive

CONTROLLER_MIN_PINS = 32  # a processor, FPGA or module, not a peripheral (common practice, no source)


@dataclass(frozen=True)
class _Splitter:
    """A part that splits a bus into segments: mux channel, translator or repeater."""

    ref: str
    kind: str                   # mux | translator | repeater
    channel: str | None
    upstream: str | None        # segment key known to be upstream by structure (mux)


Edge = tuple[str, str, _Splitter]   # (segment key, segment key, the part between them)


def build_buses(design: Design, rails: Mapping[str, Rail], conn: Connectivity, pairing: Pairing,
                roles: Mapping[str, str], default_mode: str) -> list[Bus]:
    """One Bus per group of segments joined by splitting parts. A segment's key is its data
    line; ``buses:`` entries name their bus, mode, extra capacitance and off-board pull-up."""
    splitters, edges = _splitting_parts(design, rails, conn, pairing, roles)
    split_kind = {sp.ref: sp.kind for _a, _b, sp in edges}   # splitting part -> its kind
    bus_lines = set(pairing.candidates)
    bus_config_of = {a: bc for a, _b, bc in pairing.forced if a in pairing.accepted}
    buses = []
    used_names: set[str] = set()
    seg_groups = connected_groups(pairing.accepted, ((a, b) for a, b, _sp in edges if a != b))
    for comp in sorted(seg_groups, key=lambda c: sorted(c)[0]):
        downstream = {b for a, b, sp in edges if sp.kind == "mux" and sp.upstream == a and b in comp}
        root = _pick_root(design, conn, comp - downstream or comp, pairing.accepted)
        order, parent = _walk(root, comp, edges)
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
            segments.append(_segment(design, conn, seg_ids[key], key, pairing.accepted[key], upstream,
                                     roles, split_kind, bc if key == root else None, bus_lines))
        segments = _mark_controller(design, segments, roles)
        extra = bc.extra_capacitance_f if bc else 0.0
        kind = "config" if bc else _evidence_kind(pairing.candidates, order, pairing.accepted)
        buses.append(Bus(name, mode, tuple(segments), kind, extra))
    return buses


def _splitting_parts(design: Design, rails: Mapping[str, Rail], conn: Connectivity, pairing: Pairing,
                     roles: Mapping[str, str]) -> tuple[dict[str, list], list[Edge]]:
    """The parts with bus pins on two or more segments, and the edges they make between
    segments: a multiplexer's channels hang below its upstream side; a translator or
    repeater joins its sides (translator when they are powered from different voltages);
    a discrete FET shifter is a translator. A processor-sized part splits nothing."""
    accepted, candidates = pairing.accepted, pairing.candidates
    seg_of_line: dict[str, str] = {}
    for sda, scl in accepted.items():
        seg_of_line[sda] = sda
        seg_of_line[scl] = sda
    paired = set(accepted) | set(accepted.values())
    splitters: dict[str, list] = defaultdict(list)   # ref -> [(segment key, PinSignal)]
    for ln in paired:
        for ref, _pin, _fn, sig in candidates[ln].pins:
            splitters[ref].append((seg_of_line[ln], sig))
    edges: list[Edge] = []
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
    for ref, ls, ld in pairing.fets:
        if ls in seg_of_line and ld in seg_of_line and seg_of_line[ls] != seg_of_line[ld]:
            edges.append((seg_of_line[ls], seg_of_line[ld], _Splitter(ref, "translator", None, None)))
    return splitters, edges


def _walk(root: str, comp: set[str], edges: list[Edge]) -> tuple[list[str], dict[str, tuple[str, _Splitter]]]:
    """The segments of ``comp`` breadth first from ``root``, and each one's (parent, splitter)."""
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
    return order, parent


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


def _segment(design, conn, sid, sda_ln, scl_ln, upstream, roles, split_kind, bc,
             all_bus_lines) -> Segment:
    sda = _line(design, conn, "sda", sda_ln, all_bus_lines)
    scl = _line(design, conn, "scl", scl_ln, all_bus_lines)
    if bc is not None and bc.offboard_pullup is not None:
        op = bc.offboard_pullup
        sda = _with_offboard(sda, op)
        scl = _with_offboard(scl, op)
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
