"""Rules about voltage domains: pull-up level against each device's supply, rails of
unknown voltage, and how level translators are wired.

The pull-up level of a line is the Thévenin level of its fitted pull-ups to rails (the
line budget's ``rail_volts``), else the highest of their rails; a line with a pull-up to
a rail of unknown voltage has no level (rail-voltage-unknown says which rail to name).
Each device's I/O supply comes from netaudit.domains (``io_rail``, ``io_volts``).
"""

from __future__ import annotations

import json
import re

from ..domains import SAME_VOLTS_V, has_own_supply, norm_pin
from ..electrical.modes import get_mode
from ..results import Line, Severity
from ..topology.parts import is_fet
from . import CheckContext, finding, rule

# V_IH(max) = VDD(max) + 0.5 V or 5.5 V, whichever is lower: UM10204 Rev. 6 Table 9
# note [2] (Rev. 7 Table 10).
VIH_MAX_ABOVE_VDD_V = 0.5
VIH_MAX_CEILING_V = 5.5
_EPS_V = 1e-6


def vih_max_v(vdd: float) -> float:
    """Highest input voltage a device supplied at ``vdd`` accepts on SDA/SCL (UM10204)."""
    return min(vdd + VIH_MAX_ABOVE_VDD_V, VIH_MAX_CEILING_V)


def line_level(ctx: CheckContext, line: Line | None) -> float | None:
    """The voltage the line idles at, from its fitted pull-ups to rails; None when it has
    none, or when one of them goes to a rail of unknown voltage."""
    if line is None:
        return None
    volts = []
    for p in line.fitted_pullups:
        if not p.offboard and p.rail not in ctx.rails:
            continue  # to a signal: pullup-to-signal reports it, its level is not steady
        rail = ctx.rails.get(p.rail)
        if rail is None or rail.volts is None:
            return None
        volts.append(rail.volts)
    if not volts:
        return None
    b = line.budget
    return round(b.rail_volts if b is not None and b.rail_volts is not None else max(volts), 6)


def _judged(seg, d, design) -> bool:
    """Devices whose own input levels follow their supply: not connectors or FETs, not a
    translator or repeater (translator-wiring judges those), not a multiplexer on its
    channel side (its pass gates carry each channel's own level)."""
    if not has_own_supply(d, design) or d.role in ("translator", "repeater"):
        return False
    if d.role == "mux" and seg.upstream is not None and seg.upstream.ref == d.ref:
        return False
    return d.io_volts is not None and d.io_volts > 0


def _device_levels(ctx: CheckContext, seg, d):
    signals = {p.signal for p in d.pins}
    for line in seg.lines:
        if line.signal in signals:
            level = line_level(ctx, line)
            if level is not None:
                yield line, level


def _device_finding(rule_id, bus, seg, d, bad, **data):
    lines = [line for line, _lvl in bad]
    return finding(rule_id, bus=bus, segment=seg, line=lines[0].signal if len(lines) == 1 else None,
                   refs=[d.ref], nets=[n for line in lines for n in line.nets], io_rail=d.io_rail,
                   io_volts=d.io_volts, pullup_volts=round(max(lvl for _l, lvl in bad), 4),
                   by_line={line.signal: round(lvl, 4) for line, lvl in bad}, **data)


@rule("rail-overvoltage", Severity.ERROR)
def rail_overvoltage(ctx: CheckContext):
    """A line is pulled above what a device on it tolerates, given its I/O supply.

    What: the pull-up level of SDA or SCL is higher than the device's limit: its
    ``tolerant_volts`` (netaudit.yaml ``parts:`` or the catalog), else the bus
    specification's V_IH(max) = min(VDD + 0.5 V, 5.5 V), VDD being the device's I/O supply.
    Why: above that level the pin's protection diodes conduct into the device's supply;
    current flows through the pull-up into the lower rail, the part can be damaged or
    powered through its bus pins, and its inputs are outside their rating.
    Fix: pull the segment up to the device's I/O supply, or put a level translator between
    the device and the higher-voltage part of the bus; if the part is made to tolerate the
    higher level, say so with ``tolerant_volts`` in netaudit.yaml.
    Source: UM10204 Rev. 6 Table 9 note [2] (Rev. 7 Table 10): V_IH max = VDD(max) + 0.5 V
    or 5.5 V, whichever is lower.
    """
    for bus, seg in ctx.segments():
        for d in seg.devices:
            if not _judged(seg, d, ctx.design):
                continue
            info = ctx.parts.get(d.ref)
            tolerant = getattr(info, "tolerant_volts", None) if info is not None else None
            limit = tolerant if tolerant is not None else vih_max_v(d.io_volts)
            bad = [(line, lvl) for line, lvl in _device_levels(ctx, seg, d) if lvl > limit + _EPS_V]
            if bad:
                yield _device_finding("rail-overvoltage", bus, seg, d, bad, limit_volts=round(limit, 4),
                                      limit_source="tolerant_volts" if tolerant is not None
                                      else "V_IH max = min(VDD + 0.5 V, 5.5 V), UM10204 Rev. 6 Table 9")


@rule("rail-high-level-unmet", Severity.ERROR)
def rail_high_level_unmet(ctx: CheckContext):
    """The pull-up level is below the HIGH level a device on the line needs.

    What: the line's pull-up level is under the device's V_IH(min): 0.7 × its I/O supply
    in the I2C-bus modes, the fixed SMBus level in the SMBus modes (2.1 V for SMBus 2.0
    at 100 kHz, 1.35 V for the SMBus 3.x 400 kHz and 1 MHz classes). At or below its
    V_IL(max) (0.3 × VDD, or 0.8 V) the device reads the idle line as LOW.
    Why: the device never sees a valid HIGH: it may miss START/STOP conditions, read
    wrong data or hold the bus, depending on where its input threshold really is.
    Fix: pull the segment up to the device's supply, supply the device from the bus's
    rail, or put a level translator between the two voltage domains.
    Source: UM10204 Rev. 6 §3.1.2 and Table 9 (V_IL = 0.3 VDD, V_IH = 0.7 VDD); SMBus 2.0
    levels 0.8 V / 2.1 V via NXP AN4471 Table 2 (and UM10204 §4.2.1); SMBus 3.0 levels
    0.8 V / 1.35 V as listed in a Microchip MCU datasheet, Table 39-7.
    """
    for bus, seg in ctx.segments():
        mode = get_mode(bus.mode)
        for d in seg.devices:
            if not _judged(seg, d, ctx.design):
                continue
            vih, vil = mode.vih_min_v(d.io_volts), mode.vil_max_v(d.io_volts)
            bad = [(line, lvl) for line, lvl in _device_levels(ctx, seg, d) if lvl < vih - _EPS_V]
            if bad:
                low = max(lvl for _l, lvl in bad)
                yield _device_finding("rail-high-level-unmet", bus, seg, d, bad,
                                      vih_min_volts=round(vih, 4), vil_max_volts=round(vil, 4),
                                      reads_as="low" if low <= vil + _EPS_V else "undefined",
                                      levels="fixed SMBus levels" if mode.family == "smbus"
                                      else "0.3 VDD / 0.7 VDD")


# -- rail-voltage-unknown ------------------------------------------------------------

_PLAIN_KEY = re.compile(r"^[A-Za-z0-9_+.\-][A-Za-z0-9_+.\-/]*$")


def _yaml_key(net: str) -> str:
    return net if _PLAIN_KEY.match(net) and not net.startswith(("-", "/")) else json.dumps(net)


def rails_hint(net: str) -> str:
    """The netaudit.yaml lines that give a rail its voltage."""
    return f"rails:\n  {_yaml_key(net)}: <volts>"


def supply_pin_hint(ref: str) -> str:
    return f"parts:\n  - match: {{ref: {_yaml_key(ref)}}}\n    io_supply_pin: <pin name>"


@rule("rail-voltage-unknown", Severity.INFO)
def rail_voltage_unknown(ctx: CheckContext):
    """A rail a voltage check needs has no known voltage, or a device's supply is unknown.

    What: a pull-up rail, a device's I/O supply or a FET shifter's gate rail whose name
    carries no voltage (``HDMI_PWR``, ``VCC``) and that netaudit.yaml does not name; or a
    bus device whose supply pin could not be told (none found, several on rails of
    different voltage, or a configured ``io_supply_pin`` it does not have). The finding's
    data carries the lines to add to netaudit.yaml.
    Why: without the voltage, over-voltage, HIGH-level, translator and budget checks on
    that segment cannot be made; netaudit does not guess a rail's voltage.
    Fix: add the rail under ``rails:`` in netaudit.yaml with its voltage, or name the
    device's I/O supply pin with ``io_supply_pin`` under ``parts:``.
    Source: UM10204 Rev. 6 §3.1.2 (input levels relate to the device's VDD).
    """
    dom = ctx.domains
    for bus in ctx.buses:
        need: dict[str, dict] = {}

        def add(net, what, ref, seg):
            entry = need.setdefault(net, {"needed": set(), "refs": set(), "segs": []})
            entry["needed"].add(what)
            entry["refs"].add(ref)
            if seg not in entry["segs"]:
                entry["segs"].append(seg)

        for seg in bus.segments:
            for line in seg.lines:
                for p in line.fitted_pullups:
                    if p.offboard or p.rail in ctx.rails:
                        rail = ctx.rails.get(p.rail)
                        if rail is None or rail.volts is None:
                            add(p.rail, f"pull-up {p.ref}", p.ref, seg)
            for d in seg.devices:
                if not has_own_supply(d, ctx.design):
                    part = ctx.design.part(d.ref)
                    if d.role == "translator" and part is not None and is_fet(part):
                        gate = _fet_net(ctx, d.ref, "G")
                        rail = dom.rail_of_net(gate)
                        if rail is not None and rail.volts is None:
                            add(rail.net, f"gate of {d.ref}", d.ref, seg)
                    continue
                if d.io_rail is not None and d.io_volts is None:
                    rail = dom.rail_of_net(d.io_rail)
                    add(rail.net if rail is not None else d.io_rail, f"supply of {d.ref}", d.ref, seg)
        for net, entry in sorted(need.items()):
            segs = entry["segs"]
            yield finding("rail-voltage-unknown", bus=bus, segment=segs[0] if len(segs) == 1 else None,
                          refs=entry["refs"], nets=[net] + [n for s in segs for line in s.lines for n in line.nets],
                          kind="rail", rail=net, needed_by=sorted(entry["needed"]),
                          segments=[s.id for s in segs], config_hint=rails_hint(net))
        told: set[str] = set()
        for seg in bus.segments:
            for d in seg.devices:
                if d.ref in told or d.io_rail is not None or not has_own_supply(d, ctx.design):
                    continue
                s = dom.supply(d)
                if s.problem in (None, "side-unpowered"):
                    continue  # a translator's unpowered side is translator-wiring's
                told.add(d.ref)
                yield finding("rail-voltage-unknown", bus=bus, segment=seg, refs=[d.ref],
                              nets=[n for line in seg.lines for n in line.nets], kind="device-supply",
                              problem=s.problem, candidates=[list(c) for c in s.candidates],
                              config_hint=supply_pin_hint(d.ref))


# -- translator-wiring ---------------------------------------------------------------

def _fet_net(ctx: CheckContext, ref: str, pin_name: str) -> str | None:
    part = ctx.design.part(ref)
    for pin in part.pins:
        if norm_pin(pin.name) == pin_name:
            net = ctx.design.net_of(ref, pin.number)
            return None if not net or net.startswith("unconnected-(") else net
    return None


def _where(ctx: CheckContext) -> dict:
    out = {}
    for bus, seg in ctx.segments():
        for line in seg.lines:
            for n in line.nets:
                out[n] = (bus, seg, line)
    return out


def _side_rails(ctx: CheckContext, seg) -> set[str]:
    return {p.rail for line in seg.lines for p in line.fitted_pullups if p.offboard or p.rail in ctx.rails}


@rule("translator-wiring", Severity.ERROR)
def translator_wiring(ctx: CheckContext):
    """A level translator or repeater wired so it cannot translate.

    What: for a discrete N-channel MOSFET shifter (one FET per line): the gate not on the
    lower rail (or on no rail), or source and drain reversed (the source must be on the
    lower-voltage side, the drain on the higher). For an integrated two-sided part (sides
    from pin names SDA1/SDA2 or SDAA/SDAB with per-side supplies VREF1/VREF2, VCCA/VCCB):
    a side with no supply, a side whose pull-ups all go to a rail of another voltage than
    that side's supply, or side 1/A supplied above side 2/B. A side whose pull-ups go to
    several rails is left to pullup-rail-mismatch; a side with none to pullup-missing.
    Why: the gate voltage sets where the FET stops conducting; on the higher rail the low
    side is pulled above its supply, and with source and drain reversed the body diode
    joins the two sides. An integrated part compares each side with that side's supply;
    PCA9306-style parts need VREF1 to be the lower reference, and translators of the
    VCCA/VCCB kind expect VCCA ≤ VCCB.
    Fix: tie the FET gate to the lower supply, source to the low-voltage side, drain to
    the high-voltage side, with pull-ups on both sides to their own supply; power each
    side of an integrated part from the rail its pull-ups go to, lower rail on side 1/A.
    Source: NXP AN10441 §2.1 (gate to the lowest supply VDD1, sources to the lower-voltage
    section, drains to the higher; pull-ups on both sides; VDD2 ≥ VDD1); PCA9306 and
    TXS0102-style datasheets for side order (from memory, verify per part).
    """
    yield from _fet_shifters(ctx)
    yield from _integrated(ctx)


def _fet_shifters(ctx: CheckContext):
    dom = ctx.domains
    where = _where(ctx)
    seen = set()
    for _bus, seg in ctx.segments():
        for d in seg.devices:
            part = ctx.design.part(d.ref)
            if d.role != "translator" or d.ref in seen or part is None or not is_fet(part):
                continue
            seen.add(d.ref)
            s_net, d_net, g_net = (_fet_net(ctx, d.ref, x) for x in ("S", "D", "G"))
            if s_net not in where or d_net not in where:
                continue
            (_, s_seg, s_line), (bus, d_seg, d_line) = where[s_net], where[d_net]
            nets = list(s_line.nets) + list(d_line.nets) + ([g_net] if g_net else [])
            vs, vd = line_level(ctx, s_line), line_level(ctx, d_line)
            base = dict(bus=bus, segment=d_seg, line=d_line.signal, refs=[d.ref], nets=nets,
                        source_side=s_seg.id, drain_side=d_seg.id, source_volts=vs, drain_volts=vd,
                        gate_net=g_net)
            gate = dom.rail_of_net(g_net)
            if gate is None:
                yield finding("translator-wiring", problem="gate-not-on-rail", **base)
                continue
            if vs is None or vd is None:
                continue  # a side without pull-ups or with an unknown rail: reported by other rules
            if vs > vd + SAME_VOLTS_V:
                yield finding("translator-wiring", problem="source-drain-reversed", **base)
            low = min(vs, vd)
            if gate.volts is not None and abs(gate.volts - low) >= SAME_VOLTS_V:
                yield finding("translator-wiring", problem="gate-not-lower-rail", gate_rail=gate.net,
                              gate_volts=gate.volts, low_volts=low, high_volts=max(vs, vd), **base)


def _integrated(ctx: CheckContext):
    dom = ctx.domains
    by_ref: dict[str, list] = {}
    for bus, seg in ctx.segments():
        for d in seg.devices:
            part = ctx.design.part(d.ref)
            if d.role in ("translator", "repeater") and part is not None and not is_fet(part) \
                    and dom.side_supply_pins(part):
                by_ref.setdefault(d.ref, []).append((bus, seg, d))
    for ref, placed in sorted(by_ref.items()):
        sides = {}
        for bus, seg, d in placed:
            side = dom.side_of(d)
            supply = dom.supply(d)
            base = dict(bus=bus, segment=seg, refs=[ref], nets=[n for line in seg.lines for n in line.nets],
                        side=side)
            if supply.problem == "side-unpowered":
                yield finding("translator-wiring", problem="side-unpowered",
                              supply_pins=[list(c) for c in supply.candidates], **base)
                continue
            if supply.net is None:
                continue
            sides[side] = (bus, seg, supply)
            rails = _side_rails(ctx, seg)
            if len(rails) == 1:
                rail = rails.pop()
                same = dom.same_level(rail, supply.net)
                if same is False:
                    yield finding("translator-wiring", problem="side-pullup-rail", supply_pin=supply.pin,
                                  supply_net=supply.net, supply_volts=supply.volts, pullup_rail=rail,
                                  pullup_volts=ctx.rails[rail].volts if rail in ctx.rails else None, **base)
        if len(sides) == 2:
            (k_low, (_b, seg_low, s_low)), (k_high, (bus, seg_high, s_high)) = sorted(sides.items())
            if s_low.volts is not None and s_high.volts is not None and s_low.volts > s_high.volts + SAME_VOLTS_V:
                yield finding("translator-wiring", bus=bus, segment=None, refs=[ref],
                              nets=[n for s in (seg_low, seg_high) for line in s.lines for n in line.nets],
                              problem="sides-reversed", low_side=k_low, high_side=k_high,
                              low_side_pin=s_low.pin, high_side_pin=s_high.pin,
                              low_side_volts=s_low.volts, high_side_volts=s_high.volts)
