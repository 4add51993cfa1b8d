"""Bus lines: nets joined by 0 ohm links and series resistors, and the resistors around them.

Facts of the trade used here (common practice, no source unless named):
- a fitted 0 ohm resistor is a link: the nets on its two ends are one net electrically;
  a not-fitted one joins nothing;
- a small resistor between two signal nets is a series resistor in the line
  (UM10204 Rev. 6 section 7.3 shows series protection resistors "of, for example, 300 ohm");
  above ``SERIES_MAX_OHMS`` a resistor between two signal nets is treated as a pull-up
  toward whatever drives the far net, never as part of the line;
- a resistor from a line to a supply rail is a pull-up; to ground, a pull-down.
"""

from __future__ import annotations

import re
from functools import lru_cache
from typing import Iterable, Mapping, NamedTuple

from ..model import Design, Part
from ..results import Rail
from ..units import part_value
from .graphs import connected_groups

_ohms = lru_cache(maxsize=65536)(lambda value, fields: part_value(value, fields, "ohm"))

SERIES_MAX_OHMS = 1000.0

_RES_REF = re.compile(r"^R\d")
_RES_LIB = re.compile(r"^R(?:_|$)|^R_Small|^Resistor", re.IGNORECASE)
_ARRAY_REF = re.compile(r"^(?:RN|RA|RP|RR)\d")
_ARRAY_LIB = re.compile(r"^R_(?:Pack|Array|Network)\d*", re.IGNORECASE)


class Resistor(NamedTuple):
    """One resistor element: a plain resistor, or one element of a resistor array.
    (A named tuple: a design has one per resistor, built at every audit.)"""

    ref: str
    ohms: float | None
    fitted: bool
    a: str          # net on one end
    b: str          # net on the other end
    part: Part


def _is_resistor(part: Part) -> bool:
    """Reference designator R (IEEE 315 / IEC 81346 class letter) or a resistor library symbol."""
    if _is_array(part):
        return False
    return bool(_RES_REF.match(part.ref) or _RES_LIB.match(part.lib_part))


def _is_array(part: Part) -> bool:
    return bool(_ARRAY_LIB.match(part.lib_part) or (_ARRAY_REF.match(part.ref) and
                                                     "resist" in part.description.lower()))


def find_resistors(design: Design) -> list[Resistor]:
    """Every two-ended resistor element whose both ends are on nets."""
    out = []
    for part in design.parts:
        if part.ref[:1] not in ("R", "r") and part.lib_part[:1] not in ("R", "r"):
            continue  # every reference and symbol name the two tests below accept starts with R
        if _is_resistor(part):
            numbers = sorted({p.number for p in part.pins} or {"1", "2"})
            if len(numbers) != 2:
                continue
            pairs = [(numbers[0], numbers[1])]  # both must be on nets: checked below
        elif _is_array(part):
            numbers = sorted((p.number for p in part.pins), key=lambda s: (len(s), s))
            n = len(numbers)
            if n < 4 or n % 2 or not all(x.isdigit() for x in numbers):
                continue
            # Resistor arrays (R_Pack in KiCad's library): element k joins pin k and pin n+1-k.
            pairs = [(str(k), str(n + 1 - k)) for k in range(1, n // 2 + 1)]
        else:
            continue
        ohms = _ohms(part.value, part.fields)
        for pa, pb in pairs:
            na, nb = design.net_of(part.ref, pa), design.net_of(part.ref, pb)
            if na and nb and na != nb:
                out.append(Resistor(part.ref, ohms, part.fitted, na, nb, part))
    return out


class Connectivity:
    """Nets grouped by fitted 0 ohm links, with rails and the resistors between groups."""

    def __init__(self, design: Design, rails: Mapping[str, Rail]):
        self.design = design
        self.resistors = find_resistors(design)
        self.links = [r for r in self.resistors if r.fitted and r.ohms == 0.0]
        self.group_of: dict[str, str] = {}
        self.members: dict[str, tuple[str, ...]] = {}
        self.rail_of: dict[str, Rail] = {}
        for comp in connected_groups((n.name for n in design.nets), ((r.a, r.b) for r in self.links)):
            nets = tuple(sorted(comp))
            rep = nets[0]
            self.members[rep] = nets
            for n in nets:
                self.group_of[n] = rep
            found = [rails[n] for n in nets if n in rails]
            if found:
                # Prefer a rail with a known voltage, then one named by config, then the
                # net most parts connect to (the rail's main name, not a feedback tap).
                found.sort(key=lambda r: (r.volts is None, r.source != "config",
                                          -len(design.net(r.net).nodes), r.net))
                self.rail_of[rep] = found[0]
        # Resistors between groups (links inside a group are gone).
        self.between = [r for r in self.resistors
                        if not (r.fitted and r.ohms == 0.0) and self.group_of[r.a] != self.group_of[r.b]]
        self.series = [r for r in self.between
                       if r.fitted and r.ohms is not None and r.ohms <= SERIES_MAX_OHMS
                       and self.group_of[r.a] not in self.rail_of and self.group_of[r.b] not in self.rail_of]
        series_ids = {id(r) for r in self.series}
        self.line_of: dict[str, str] = {}
        self.line_groups: dict[str, tuple[str, ...]] = {}
        for comp in connected_groups(self.members, ((self.group_of[r.a], self.group_of[r.b])
                                                    for r in self.series)):
            groups = tuple(sorted(comp))
            for grp in groups:
                self.line_of[grp] = groups[0]
            self.line_groups[groups[0]] = groups
        self._by_group: dict[str, list[Resistor]] = {}
        for r in self.between:
            if id(r) in series_ids:
                continue
            self._by_group.setdefault(self.group_of[r.a], []).append(r)
            self._by_group.setdefault(self.group_of[r.b], []).append(r)
        self._series_by_line: dict[str, list[Resistor]] = {}
        for r in self.series:
            self._series_by_line.setdefault(self.line_of[self.group_of[r.a]], []).append(r)
        self.links_by_line: dict[str, list[Resistor]] = {}
        for r in self.links:
            self.links_by_line.setdefault(self.line_of[self.group_of[r.a]], []).append(r)

    # -- queries -----------------------------------------------------------------------
    def line_id(self, net: str) -> str:
        return self.line_of[self.group_of[net]]

    def line_nets(self, line: str) -> tuple[str, ...]:
        return tuple(sorted(n for grp in self.line_groups[line] for n in self.members[grp]))

    def is_rail_line(self, line: str) -> bool:
        return any(g in self.rail_of for g in self.line_groups[line])

    def series_in(self, line: str) -> list[Resistor]:
        return self._series_by_line.get(line, [])

    def zero_links_in(self, line: str) -> list[Resistor]:
        return self.links_by_line.get(line, [])

    def resistors_leaving(self, line: str) -> Iterable[tuple[Resistor, str, str]]:
        """Resistors with one end on the line: (resistor, near net, far group)."""
        inside = set(self.line_groups[line])
        for grp in self.line_groups[line]:
            for r in self._by_group.get(grp, ()):
                ga, gb = self.group_of[r.a], self.group_of[r.b]
                if ga in inside and gb not in inside:
                    yield r, r.a, gb
                elif gb in inside and ga not in inside:
                    yield r, r.b, ga
