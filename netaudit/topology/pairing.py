"""Which lines are data (SDA) and clock (SCL) lines, and which data line pairs with which
clock line.

Evidence, strongest first: ``buses:`` in netaudit.yaml; pin functions of devices
(``SDA``, ``I2C1_SCL``, ``SDAA``, mux channels ``SD0``/``SC0``); net names (``/I2C_SDA``,
``AUX_TYPE_C.SDA``). A data line is paired with its clock line through the parts they
share (a part's ``SDA1`` pairs with its ``SCL1``) and through partner names
(``/SDA_A`` with ``/SCL_A``). Multi-function pins (``PB7/SDA``) alone make no bus unless
something else on the line (another device, a pull-up to a rail) says it is one.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from typing import NamedTuple

from ..errors import InputError
from ..model import Design
from .graphs import max_weight_pairs
from .lines import Connectivity
from .names import net_signal, partner_names, pin_signal
from .parts import is_connector, is_fet, looks_passive


@dataclass
class LineEvidence:
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


class Pairing(NamedTuple):
    """What :func:`pair_lines` found; line ids are :class:`Connectivity` line ids."""

    candidates: dict[str, LineEvidence]      # every line that looks like SDA or SCL
    accepted: dict[str, str]                 # data line -> its clock line
    unpaired: list[UnpairedLine]
    unconnected: list[UnconnectedPin]
    forced: list[tuple[str, str, object]]    # (data line, clock line, bus config) from buses:
    fets: list[tuple[str, str, str]]         # (ref, source line, drain line): discrete shifters


def pair_lines(design: Design, conn: Connectivity, bus_configs=()) -> Pairing:
    """Weigh the evidence for each line, then pair data with clock lines by the heaviest
    matching of the pairing weights; pairs on multi-function pins alone must show more."""
    evidence, unconnected = _pin_and_name_evidence(design, conn)
    forced = _forced_lines(design, conn, evidence, bus_configs)
    fets = _fet_shifters(design, conn, evidence)
    candidates = {ln: ev for ln, ev in evidence.items()
                  if ev.signal is not None and not conn.is_rail_line(ln)}

    pairs: dict[str, str] = {}
    for u, v in max_weight_pairs(_pair_weights(design, conn, candidates, forced)):
        (su, lu), (_, lv) = u, v
        sda, scl = (lu, lv) if su == "sda" else (lv, lu)
        pairs[sda] = scl
    accepted = {sda: scl for sda, scl in pairs.items() if _strong_enough(conn, candidates, sda, scl)}

    paired = set(accepted) | set(accepted.values())
    unpaired = []
    for ln, ev in sorted(candidates.items()):
        if ln in paired or not ev.strong:
            continue
        refs = tuple(sorted({ref for ref, *_ in ev.pins}))
        unpaired.append(UnpairedLine(ev.signal, conn.line_nets(ln), refs))
    return Pairing(candidates, accepted, unpaired, unconnected, forced, fets)


def _pin_and_name_evidence(design: Design, conn: Connectivity
                           ) -> tuple[defaultdict[str, LineEvidence], list[UnconnectedPin]]:
    """Evidence per line from pin functions and net names; bus pins on no net, or alone on
    theirs, are unconnected pins."""
    evidence: defaultdict[str, LineEvidence] = defaultdict(LineEvidence)
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
    return evidence, unconnected


def _forced_lines(design: Design, conn: Connectivity, evidence: defaultdict[str, LineEvidence],
                  bus_configs) -> list[tuple[str, str, object]]:
    """``buses:`` entries force their nets' lines to be data or clock lines; each entry's
    first data and clock line are paired (refused: a net not in the design, or a rail)."""
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
    return forced_pairs


def _fet_shifters(design: Design, conn: Connectivity,
                  evidence: defaultdict[str, LineEvidence]) -> list[tuple[str, str, str]]:
    """Discrete FET shifters carry a line's signal to the line on their other side."""
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
    return fets


def _pair_weights(design: Design, conn: Connectivity, candidates: dict[str, LineEvidence],
                  forced_pairs) -> dict[tuple[tuple[str, str], tuple[str, str]], float]:
    """Weight of each (data line, clock line) pairing: a part's matching bus pins (3), partner
    net names (4), a small part on both lines (1), a ``buses:`` entry (1000)."""
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
    return weights


def _strong_enough(conn: Connectivity, candidates: dict[str, LineEvidence], sda: str, scl: str) -> bool:
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
