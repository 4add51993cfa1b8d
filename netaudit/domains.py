"""Voltage domains: which rail supplies each bus device's I/O, and which rails are switched.

A step over the Buses, run after the line budgets and before the checks. It fills each
Device's ``io_rail`` (the net its chosen supply pin sits on) and ``io_volts`` (that net's
voltage: its own, the rail a fitted 0 ohm link joins it to, or the rail a reference pin
reaches through one resistor, as PCA9306-style translators are wired). Nothing is guessed:
a device whose supply pin cannot be told stays ``None`` and the rail-voltage-unknown rule
reports it.

Which pin, strongest first (facts of the trade, common practice, no source):
1. ``io_supply_pin`` from netaudit.yaml or the catalog (one-sided parts);
2. on a two-sided part (translator, repeater), the supply pin of the segment's side:
   ``VREF1``/``VREF2``, ``VCCA``/``VCCB``, ``V_{CC(A)}`` ... matched to ``SDA1``/``SDAB``;
3. an I/O supply pin (``VDDIO``, ``VIO``, ``VL``, ``VCCIO``, ``IOVDD``, ``VLOGIC`` ...);
4. the plain core supply (``VDD``, ``VCC``, ``VS``, ``V+``, ``3V3``), then any other
   ``VDD…``/``VCC…`` pin. Pins of charger and USB inputs (``VBUS``, ``VIN``, ``VBAT``),
   references, PLL and programming supplies are never taken for the logic supply.
Within one step, pins on different rails of different (or unknown) voltage leave the
supply undecided: an FPGA's bus pin may sit in any of its I/O banks.

Switched rails: a rail named as switched (``…_SW``, ``…_SWITCHED``), the output of a
regulator or load switch whose enable input is driven by a signal, or the far side of a
transistor whose base or gate is driven by a signal. A device on such a rail is noted in
its segment's line notes (UM10204 Rev. 6 §5.1 and Table 9 note [9]: a switched-off
Fast-mode device must leave SDA and SCL floating), which the text and JSON reports show.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass
from functools import lru_cache
from typing import Mapping

from .model import Design, Part
from .results import Bus, Device, LineBudget, Rail, Segment
from .topology.segments import supply_rail_of
from .topology.lines import Connectivity
from .topology.names import is_io_supply_pin, pin_signal, strip_markup
from .topology.parts import is_connector, is_fet, looks_passive
from .topology.rails import is_ground_name

SAME_VOLTS_V = 0.05   # two rails closer than this are one level (common practice, no source)

_NOT_LOGIC = re.compile(r"PLL|VPP|BUS|CONN|BAT|REF|CORE|REG|VIN|CHG|LED|PGM|PROG")
_CORE = re.compile(r"^(?:[AD]?V(?:DD|CC)[A-Z0-9]*|V(?:S|A|D)\d*|V\+|VPLUS|\+?\d+V\d*)$")
_PLAIN = re.compile(r"^(?:VDD|VCC|VS|VA|VD|V\+|VPLUS|\+?\d+V\d*)$")
_SIDE_SUPPLY = re.compile(r"^(?:VREF|VCC|VDD|VCCIO|VDDIO|VIO|VL)(?P<key>[AB12])$")
_ENABLE = re.compile(r"^(?:EN|ENA|ENABLE|EN\d|ON|CE|SHDN|SHDNB|NSHDN|ENB|ONOFF|CTRL)$")
_SWITCHED_NAME = re.compile(r".[_.\-](?:SW|SWITCHED)$")
_SEQUENCING = re.compile(r"^(?:N|X)?(?:RESET|RST|SYSRESET|SYSRST|PG|PGOOD|POK|PWRGD|PWROK|POWERGOOD)[BN]?$")


def _sequencing(name: str) -> bool:
    """A reset or power-good signal: power-up sequencing, not a rail switched at run time."""
    return any(_SEQUENCING.match(t) for t in re.split(r"[^A-Z0-9]+", strip_markup(name).upper()) if t)


_NOT_PIN_NAME_CHARS = re.compile(r"[^A-Z0-9+]")


@lru_cache(maxsize=1 << 16)  # pin names repeat across a design's parts
def norm_pin(name: str) -> str:
    """A pin name reduced to capitals, digits and '+': ``V_{CC(A)}`` -> ``VCCA``."""
    return _NOT_PIN_NAME_CHARS.sub("", strip_markup(name).upper())


@lru_cache(maxsize=1 << 16)
def _is_io_pin(name: str) -> bool:
    n = norm_pin(name)
    if n.startswith("VREF") or re.match(r"^V(?:CC|DD)[AB12]$", n):
        return False  # a reference or a translator side's supply; VDDA is an analog supply
    return is_io_supply_pin(strip_markup(name)) or is_io_supply_pin(n)


@dataclass(frozen=True)
class Supply:
    """The supply chosen for a device (on one segment), or why none was."""

    pin: str | None = None              # pin name used
    net: str | None = None              # the net that pin sits on
    rail: Rail | None = None            # the rail that net is, or reaches
    how: str = ""                       # config | side | io-pin | core
    problem: str | None = None          # none-found | ambiguous | config-pin-missing | side-unpowered
    candidates: tuple[tuple[str, str], ...] = ()   # (pin, net) looked at when undecided

    @property
    def volts(self) -> float | None:
        return self.rail.volts if self.rail is not None else None


class Domains:
    """Supply lookups for one design, built once per audit and shared with the voltage rules."""

    def __init__(self, design: Design, rails: Mapping[str, Rail], parts: Mapping,
                 conn: Connectivity | None = None):
        self.design = design
        self.rails = rails
        self.parts = parts
        self.conn = conn if conn is not None else Connectivity(design, rails)
        self._switched: dict[str, str] | None = None
        self._resistors_by_ref: dict[str, list] = {}
        for r in self.conn.resistors:
            self._resistors_by_ref.setdefault(r.ref, []).append(r)

    # -- nets and rails ------------------------------------------------------------
    def is_ground(self, net: str) -> bool:
        rail = self.rail_of_net(net)
        return (rail is not None and rail.volts == 0.0) or is_ground_name(net)

    def rail_of_net(self, net: str | None) -> Rail | None:
        """The rail a net is (joined by fitted 0 ohm links), or reaches through one resistor."""
        if not net or net not in self.conn.group_of:
            return None
        return supply_rail_of(self.conn, net)

    def same_level(self, a: str, b: str) -> bool | None:
        """Whether two nets sit at one level: True, False, or None when it cannot be told."""
        if self.conn.group_of.get(a) == self.conn.group_of.get(b):
            return True
        ra, rb = self.rail_of_net(a), self.rail_of_net(b)
        if ra is not None and rb is not None and ra.net == rb.net:
            return True
        va, vb = (ra.volts if ra else None), (rb.volts if rb else None)
        if va is None or vb is None:
            return None
        return abs(va - vb) < SAME_VOLTS_V

    def _connected(self, part: Part, pin) -> str | None:
        net = self.design.net_of(part.ref, pin.number)
        if not net or net.startswith("unconnected-(") or net not in self.conn.group_of:
            return None
        return net

    # -- sides of two-sided parts ----------------------------------------------------
    def side_supply_pins(self, part: Part) -> dict[str, list]:
        """Per-side supply pins of a translator or repeater: ``{"1": [VREF1 pin], ...}``,
        for the side keys its own bus pins use (``SDA1``/``SDA2``, ``SDAA``/``SDAB``)."""
        keys = set()
        for pin in part.pins:
            sig = pin_signal(pin.name)
            if sig is not None and sig.key and sig.channel is None:
                keys.add(sig.key.upper())
        if len(keys) < 2:
            return {}
        out: dict[str, list] = {}
        for pin in part.pins:
            m = _SIDE_SUPPLY.match(norm_pin(pin.name))
            if m and m.group("key") in keys:
                out.setdefault(m.group("key"), []).append(pin)
        return out

    @staticmethod
    def side_of(device: Device) -> str | None:
        """The side key of a device's bus pins on one segment ("1", "B"), if one."""
        keys = {sig.key.upper() for sig in (pin_signal(p.function) for p in device.pins)
                if sig is not None and sig.channel is None}
        return keys.pop() if len(keys) == 1 else None

    # -- the supply of a device ------------------------------------------------------
    def supply(self, device: Device) -> Supply:
        part = self.design.part(device.ref)
        if part is None:
            return Supply(problem="none-found")
        if device.role in ("translator", "repeater"):
            sides = self.side_supply_pins(part)
            if sides:
                side = self.side_of(device)
                pins = sides.get(side or "", [])
                got = self._choose(part, pins, "side")
                if got.net is None and got.problem != "ambiguous":
                    return Supply(problem="side-unpowered",
                                  candidates=tuple((p.name, self.design.net_of(part.ref, p.number) or "")
                                                   for p in pins))
                return got
        info = self.parts.get(device.ref)
        wanted = getattr(info, "io_supply_pin", None) if info is not None else None
        if wanted:
            key = norm_pin(wanted)
            pins = [p for p in part.pins if norm_pin(p.name) == key or p.number == wanted]
            got = self._choose(part, pins, "config") if pins else Supply(problem="none-found")
            if got.net is not None or got.problem == "ambiguous":
                return got
            if info.source == "config":
                # The user named the pin: say it is not there rather than pick another.
                return Supply(problem="config-pin-missing", candidates=((wanted, ""),))
            # A catalog entry's pin name may be spelled differently by this symbol: fall
            # back to the pins' own names.
        supplies = [p for p in part.pins if p.type not in ("power_out", "output", "no_connect")
                    and not _NOT_LOGIC.search(norm_pin(p.name))]
        tiers = (("io-pin", [p for p in supplies if _is_io_pin(p.name)]),
                 ("core", [p for p in supplies if _PLAIN.match(norm_pin(p.name))]),
                 ("core", [p for p in supplies if _CORE.match(norm_pin(p.name))]))
        for how, pins in tiers:
            got = self._choose(part, pins, how)
            if got.net is not None or got.problem == "ambiguous":
                return got
        return Supply(problem="none-found")

    def _choose(self, part: Part, pins, how: str) -> Supply:
        """One supply from candidate pins: all on one rail, or all at one known voltage."""
        live = []
        for pin in pins:
            net = self._connected(part, pin)
            if net is not None and not self.is_ground(net):
                live.append((pin, net))
        if not live:
            return Supply(problem="none-found")
        groups: dict[str, list] = {}
        for pin, net in live:
            groups.setdefault(self.conn.group_of[net], []).append((pin, net))
        if len(groups) > 1:
            volts = {(self.rail_of_net(g[0][1]) or Rail("", None, "")).volts for g in groups.values()}
            if None in volts or max(volts) - min(volts) >= SAME_VOLTS_V:
                return Supply(how=how, problem="ambiguous",
                              candidates=tuple(sorted((p.name, n) for p, n in live)))
        best = max(groups.values(), key=lambda g: (len(g), -min(len(n) for _p, n in g)))
        pin, net = sorted(best, key=lambda t: (t[1], t[0].name))[0]
        return Supply(pin.name, net, self.rail_of_net(net), how)

    # -- switched rails ----------------------------------------------------------------
    def switched(self) -> dict[str, str]:
        """Rail group -> why it may be off: a switched name, a load switch or regulator
        enabled by a signal, a transistor switch driven by a signal."""
        if self._switched is not None:
            return self._switched
        out: dict[str, str] = {}
        design, conn = self.design, self.conn
        for rep, rail in conn.rail_of.items():
            if rail.volts == 0.0:
                continue
            for net in conn.members[rep]:
                base = strip_markup(net.rstrip("/").rsplit("/", 1)[-1]).upper()
                if _SWITCHED_NAME.search(base):
                    out[rep] = "named as switched"
        for part in design.parts:
            if is_connector(part) or not part.fitted or (looks_passive(part) and not is_fet(part)):
                continue  # resistors, capacitors, diodes switch no rail
            pins = {norm_pin(p.name): p for p in part.pins}
            if is_fet(part) or {"B", "C", "E"} <= set(pins):
                # A high-side switch: emitter/source on a supply, collector/drain on the
                # switched rail, base/gate driven by a signal.
                ctrl, (fed, src) = ((pins.get("G"), ("D", "S")) if is_fet(part)
                                    else (pins.get("B"), ("C", "E")))
                switched, supply = (self._connected(part, pins[fed]), self._connected(part, pins[src]))
                cnet = self._connected(part, ctrl) if ctrl else None
                if switched is None or supply is None or cnet is None or self._is_rail(cnet) \
                        or _sequencing(cnet):
                    continue  # a transistor between two rails, base or gate not tied to one
                g = conn.group_of[switched]
                if g in conn.rail_of and self._is_rail(supply) and not self.is_ground(switched) \
                        and not self.is_ground(supply):
                    out.setdefault(g, f"switched from {supply} by transistor {part.ref}, "
                                      f"{'gate' if is_fet(part) else 'base'} driven from {cnet}")
                continue
            enables = [(p, self._connected(part, p)) for k, p in pins.items() if _ENABLE.match(k)]
            driven = [(p, n) for p, n in enables if n is not None and self._driven(n, part.ref)]
            if not driven:
                continue
            for pin in part.pins:
                net = self._connected(part, pin) if pin.type == "power_out" else None
                if net is not None and conn.group_of[net] in conn.rail_of and not self.is_ground(net):
                    p, n = driven[0]
                    out.setdefault(conn.group_of[net], f"switched by {part.ref}, {p.name} driven from {n}")
        self._switched = out
        return out

    def _is_rail(self, net: str) -> bool:
        return self.conn.group_of.get(net) in self.conn.rail_of

    def _driven(self, net: str, own_ref: str, depth: int = 1) -> bool:
        """A control net some other part drives: a processor or expander pin, a connector,
        a switch; directly or through one resistor. Pull-ups and dividers to a rail are
        not drivers, nor are reset and power-good outputs (power-up sequencing)."""
        if self._is_rail(net) or _sequencing(net):
            return False
        for node in self.design.net(net).nodes:
            part = self.design.part(node.ref)
            if node.ref == own_ref or part is None or not part.fitted or node.pin_type in ("input", "power_in"):
                continue
            if looks_passive(part):
                if depth > 0:
                    for r in self._resistors_by_ref.get(part.ref, ()):
                        if r.fitted and net in (r.a, r.b):
                            far = r.b if r.a == net else r.a
                            if self._driven(far, own_ref, depth - 1):
                                return True
                continue
            if not _sequencing(node.pin_function):
                return True
        return False

    def switched_reason(self, net: str | None) -> str | None:
        if not net or net not in self.conn.group_of:
            return None
        return self.switched().get(self.conn.group_of[net])


def has_own_supply(device: Device, design: Design) -> bool:
    """Connectors and discrete FETs have no supply of their own."""
    part = design.part(device.ref)
    return device.role != "connector" and part is not None and not is_fet(part) \
        and not is_connector(part)


# -- the step ---------------------------------------------------------------------

def assign_domains(design: Design, buses: tuple[Bus, ...], dom: Domains) -> tuple[Bus, ...]:
    """Fill every device's io_rail and io_volts, and note devices on switched rails."""
    out = []
    for bus in buses:
        segs = []
        for seg in bus.segments:
            devices = []
            for d in seg.devices:
                if has_own_supply(d, design):
                    s = dom.supply(d)
                    d = dataclasses.replace(d, io_rail=s.net, io_volts=s.volts)
                devices.append(d)
            seg = dataclasses.replace(seg, devices=tuple(devices))
            segs.append(_with_notes(seg, _switched_notes(dom, seg)))
        out.append(dataclasses.replace(bus, segments=tuple(segs)))
    return tuple(out)


def _switched_notes(dom: Domains, seg: Segment) -> list[str]:
    by_rail: dict[str, list[str]] = {}
    reason_of: dict[str, str] = {}
    for d in seg.devices:
        why = dom.switched_reason(d.io_rail)
        if why is not None and d.role != "connector":
            key = dom.conn.group_of[d.io_rail]
            by_rail.setdefault(key, []).append(d.ref)
            reason_of[key] = why
    notes = []
    for key, refs in sorted(by_rail.items()):
        rail = dom.conn.rail_of[key].net
        pulled = {dom.conn.group_of.get(p.rail) for line in seg.lines for p in line.fitted_pullups}
        tail = ("the segment's pull-ups go to it too, so the whole segment is off with it: keep the bus "
                "idle while it is off" if pulled == {key} else
                "while it is off they must leave SDA and SCL floating, neither loading nor back-powering them")
        notes.append(f"{', '.join(sorted(refs))} run from {rail}, which can be off ({reason_of[key]}); "
                     f"{tail} (UM10204 Rev. 6 §5.1, Table 9 note [9])")
    return notes


def _with_notes(seg: Segment, notes: list[str]) -> Segment:
    if not notes:
        return seg
    lines = {}
    for line in seg.lines:
        budget = line.budget or LineBudget()
        extra = tuple(n for n in notes if n not in budget.notes)
        lines[line.signal] = dataclasses.replace(line, budget=dataclasses.replace(budget, notes=budget.notes + extra))
    return dataclasses.replace(seg, sda=lines.get("sda", seg.sda), scl=lines.get("scl", seg.scl))
