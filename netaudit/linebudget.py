"""Each bus line's electrical figures: equivalent pull-up, capacitance, window, rise time.

This step gathers the numbers from the Design and the config (which pull-ups, which
capacitors, which trace lengths) and leaves all arithmetic to the pure functions in
``electrical/``. What is not included in an estimate is said in the line's notes.
"""

from __future__ import annotations

import dataclasses
import re
from typing import Mapping

from .config import Config
from .electrical.budget import edge_time, pullup_window, thevenin
from .electrical.modes import get_mode
from .electrical.traces import (DEFAULT_PLANE_CLEARANCE_M, RoutedCapacitance,
                                 routed_capacitance)
from .model import Board, Design
from .results import Bus, Line, LineBudget, Rail, Segment
from .topology.lines import Connectivity
from .units import part_value

_CAP_REF = re.compile(r"^C\d")


def budget_buses(design: Design, buses: tuple[Bus, ...], rails: Mapping[str, Rail],
                 parts: Mapping, config: Config, *, conn: Connectivity | None = None) -> tuple[Bus, ...]:
    """Fill each line's budget. ``conn`` is the design's connectivity as bus finding built it
    (``Topology.conn``); without it one is built here from ``design`` and ``rails``."""
    if conn is None:
        conn = Connectivity(design, rails)
    caps = _capacitors_by_net(design, conn)
    out = []
    for bus in buses:
        segs = []
        for i, seg in enumerate(bus.segments):
            extra = bus.extra_capacitance_f if i == 0 else 0.0   # the cable hangs on the bus's own segment
            lines = {line.signal: _line_budget(design, bus, seg, line, rails, parts, config, caps, extra)
                     for line in seg.lines}
            segs.append(dataclasses.replace(seg, sda=lines.get("sda"), scl=lines.get("scl")))
        out.append(dataclasses.replace(bus, segments=tuple(segs)))
    return tuple(out)


def _capacitors_by_net(design: Design, conn: Connectivity) -> dict[str, list[tuple[str, float | None]]]:
    """Fitted two-pin capacitors from a net to a rail (ground included): net -> [(ref, farads)].

    A rail is reached as pull-ups reach it: through fitted 0 ohm links (the nets of one
    ``Connectivity`` group are one net electrically), so a capacitor whose far end is
    linked to ground by a 0 ohm resistor loads the line like one placed on ground.
    """
    group_of, rail_of = conn.group_of, conn.rail_of
    out: dict[str, list] = {}
    for part in design.parts:
        if not _CAP_REF.match(part.ref) or not part.fitted:
            continue
        nets = [design.net_of(part.ref, p.number) for p in part.pins] or \
               [design.net_of(part.ref, "1"), design.net_of(part.ref, "2")]
        nets = [n for n in nets if n]
        if len(nets) != 2:
            continue
        a, b = nets
        a_rail = group_of.get(a, a) in rail_of
        b_rail = group_of.get(b, b) in rail_of
        if a_rail == b_rail:
            continue
        farads = part_value(part.value, part.fields, "F")
        out.setdefault(b if a_rail else a, []).append((part.ref, farads))
    return out


def _line_budget(design, bus: Bus, seg: Segment, line: Line, rails, parts, config: Config,
                 caps, extra_f: float) -> Line:
    mode = get_mode(bus.mode)
    notes: list[str] = []

    # Equivalent pull-up: fitted pull-ups to rails of known voltage, Thevenin-combined.
    sources = []
    for p in line.fitted_pullups:
        if not p.offboard and p.rail not in rails:
            continue  # to a signal: pullup-to-signal reports it; no steady supply to count
        volts = rails[p.rail].volts if p.rail in rails else None
        if p.ohms is None or p.ohms <= 0:
            notes.append(f"pull-up {p.ref}: value unreadable, left out")
            continue
        if volts is None or volts <= 0:
            notes.append(f"pull-up {p.ref}: rail {p.rail} has no known voltage, left out")
            continue
        sources.append((p.ohms, volts))
    vdd_ref = max((v for _r, v in sources), default=None)
    if sources:
        # Pull-downs to ground pull against them: they join the Thevenin source at 0 V.
        for p in line.pulldowns:
            if p.fitted and p.ohms:
                sources.append((p.ohms, 0.0))
    r_th = v_th = None
    if sources:
        r_th, v_th = thevenin(sources)

    # Capacitance: device pins, capacitors, routing, extra.
    pin_f = 0.0
    connectors = 0
    for dev in seg.devices:
        on_line = [pn for pn in dev.pins if pn.signal == line.signal]
        if dev.role == "connector":
            connectors += 1
            continue
        info = parts.get(dev.ref)
        each = (info.pin_capacitance_f if info and info.pin_capacitance_f else None) \
            or config.defaults.pin_capacitance_f
        pin_f += each * len(on_line)
    cap_f = 0.0
    for net in line.nets:
        for ref, farads in caps.get(net, ()):
            if farads is None:
                notes.append(f"capacitor {ref}: value unreadable, left out")
            else:
                cap_f += farads
    routing_f = vias_f = 0.0
    routed_m = None
    traced = 0
    for net in line.nets:
        t = config.traces.get(net)
        if t is None:
            continue
        traced += 1
        routing_f += t.capacitance_f if t.capacitance_f is not None else t.length_m * config.defaults.trace_f_per_m
    if design.board is not None:
        on_board = [net for net in line.nets if net not in config.traces]
        routed = routed_capacitance(design.board, on_board)
        routing_f += routed.tracks_farads
        vias_f = routed.vias_farads
        routed_m = sum(design.board.routed_length_m(net) for net in line.nets)
        notes.extend(_board_notes(design.board, routed, on_board, traced, line.signal.upper()))
    elif not traced:
        notes.append("routing not included: no trace data (add traces: to netaudit.yaml or audit the board)")
    if connectors and not extra_f:
        notes.append("off-board load beyond the connector not included (set extra_capacitance_pf)")
    cb = pin_f + cap_f + routing_f + vias_f + extra_f
    parts_f = {"pins": pin_f, "routing": routing_f, "vias": vias_f, "capacitors": cap_f, "extra": extra_f}

    # Window and rise time.
    rp_min = rp_max = rise = None
    suggestions: tuple[float, ...] = ()
    pick = None
    if vdd_ref is not None and cb > 0:
        weakest = _weakest_sink(seg, parts)
        # Rp(min) at the Thevenin level: a driver holding the line at V_OL sinks
        # (V_th - V_OL) / R_th, which is what UM10204 section 7.1 Eq. (2) limits.
        if v_th > mode.sink(v_th)[0]:
            window = pullup_window(v_th, cb, mode, iol_a=weakest)
            rp_min, rp_max = window.rp_min, window.rp_max
            suggestions, pick = window.suggestions, window.pick
        lo, hi = mode.edge_thresholds_v(vdd_ref)
        rise = edge_time(r_th, v_th, lo, hi, cb)
        if rise is None:
            notes.append(f"the line settles at {v_th:.2f} V and never reaches the high threshold {hi:.2f} V")
    elif vdd_ref is None:
        notes.append("no fitted pull-up to a rail of known voltage: window and rise time not worked out")
    budget = LineBudget(rp_ohms=r_th, rail_volts=v_th, rp_min_ohms=rp_min, rp_max_ohms=rp_max,
                        capacitance_farads=cb, rise_time_s=rise, rise_time_max_s=mode.rise_time_max_s,
                        capacitance_parts=parts_f, routed_length_m=routed_m, notes=tuple(notes),
                        suggestions_ohms=suggestions, pick_ohms=pick)
    return dataclasses.replace(line, budget=budget)


def _board_notes(board: Board, routed: RoutedCapacitance, nets: list[str], traced: int,
                 label: str) -> list[str]:
    """What the routed capacitance of a line is made of and assumed, in words."""
    gap = board.plane_clearance_m
    gap_text = (f"{gap * 1e3:g} mm, the clearance of the board's largest copper zone" if gap else
                f"{DEFAULT_PLANE_CLEARANCE_M * 1e3:g} mm assumed, no zones on the board")
    vias = f"{routed.via_count} via{'s' if routed.via_count != 1 else ''}"
    notes = [f"{label} routed on the board: {routed.length_m * 1e3:.1f} mm of track "
             f"({routed.tracks_farads * 1e12:.1f} pF), {vias} ({routed.vias_farads * 1e12:.1f} pF)",
             "routing capacitance from the board: outer layers as microstrip over the next "
             "dielectric, inner layers as stripline between their neighbours (IPC-2141), vias after "
             f"Johnson & Graham with a plane gap of {gap_text}; pads and solder mask not included"]
    notes += list(board.notes)
    if traced:
        notes.append("nets with a traces: entry in netaudit.yaml use it instead of the board's routing")
    notes += [f"net {net} has no tracks on the board" for net in nets
              if not board.runs_of(net) and not board.vias_of(net)]
    notes += [f"routing approximate, outside the formula's range: {text}" for text in routed.approximate]
    notes += list(routed.notes)
    return notes


def _weakest_sink(seg: Segment, parts) -> float | None:
    ratings = [parts[d.ref].sink_current_a for d in seg.devices
               if d.ref in parts and parts[d.ref].sink_current_a]
    return min(ratings) if ratings else None
