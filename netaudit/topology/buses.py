"""Find every two-wire bus: lines, pairing, segments, devices and pull-ups.

Two steps, each in its own module: :mod:`.pairing` decides which lines are data and clock
lines and pairs them (from ``buses:`` in netaudit.yaml, pin functions and net names);
:mod:`.segments` finds the parts that split a bus into segments (multiplexers, repeaters,
translators) and builds each bus from its segments, lines, pull-ups and devices.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

from ..model import Design
from ..results import Bus, Rail
from .lines import Connectivity
from .pairing import UnconnectedPin, UnpairedLine, pair_lines
from .segments import build_buses

__all__ = ["Topology", "UnconnectedPin", "UnpairedLine", "find_buses"]


@dataclass(frozen=True)
class Topology:
    """What bus finding produced, for the checks."""

    buses: tuple[Bus, ...]
    unpaired: tuple[UnpairedLine, ...]
    unconnected: tuple[UnconnectedPin, ...]
    rails: Mapping[str, Rail]
    line_of_net: Mapping[str, str]       # net -> line id, for bus lines only
    conn: Connectivity                   # 0 ohm groups, series joins, resistors: built once, shared


def find_buses(design: Design, rails: Mapping[str, Rail], *,
               roles: Mapping[str, str] | None = None,
               bus_configs=(), default_mode: str = "fast") -> Topology:
    """Every bus of ``design``, sorted by name, with the lines that look like SDA or SCL but
    found no partner and the bus pins left unconnected. ``roles`` (ref -> controller,
    target, mux, translator, repeater) come from netaudit.yaml and the catalog;
    ``bus_configs`` are the ``buses:`` entries; ``default_mode`` is the speed mode of a bus
    no entry names."""
    conn = Connectivity(design, rails)
    pairing = pair_lines(design, conn, bus_configs)
    buses = build_buses(design, rails, conn, pairing, dict(roles or {}), default_mode)
    line_of_net = {}
    for sda, scl in pairing.accepted.items():
        for ln in (sda, scl):
            for net in conn.line_nets(ln):
                line_of_net[net] = ln
    return Topology(tuple(sorted(buses, key=lambda b: b.name)), tuple(pairing.unpaired),
                    tuple(sorted(set(pairing.unconnected), key=lambda u: (u.ref, u.pin))),
                    rails, line_of_net, conn)
