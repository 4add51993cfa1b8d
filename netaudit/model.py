"""The design model: one format-free picture of a KiCad design.

Readers build a :class:`Design`; everything downstream reads it and never a file.
Every class is immutable. The four a design holds by the hundred thousand (:class:`Pin`,
:class:`Node`, :class:`Net`, :class:`Part`) are named tuples, built several times faster
than frozen dataclasses and smaller; the rest are frozen dataclasses. Lookups are
precomputed indexes, not behaviour.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Iterable, Mapping, NamedTuple

# Field names and values engineers use to mark a part as not fitted
# (common practice, no source): DNP "do not populate", DNM "do not mount", NF "not fitted".
NOT_FITTED_FIELDS = frozenset({"DNP", "DNM", "NF", "NOT_FITTED", "NOFIT", "NO_FIT"})
NOT_FITTED_VALUES = frozenset({"DNP", "DNM", "NF", "NC", "N/C", "NOT FITTED", "NOFIT", "NO FIT"})
_FALSE_WORDS = frozenset({"", "0", "NO", "N", "FALSE", "OFF"})


class Pin(NamedTuple):
    """A pin of a part: its number, its name (pin function) and electrical type."""

    number: str
    name: str = ""
    type: str = ""


class Node(NamedTuple):
    """One pin of one part on a net."""

    ref: str
    pin: str
    pin_function: str = ""
    pin_type: str = ""


class Net(NamedTuple):
    name: str
    nodes: tuple[Node, ...] = ()
    code: str = ""
    net_class: str = ""


@dataclass(frozen=True)
class Sheet:
    """A sheet instance: its path (``/IO_Banks/IO_Buffer_A/``) and the file it comes from."""

    path: str
    file: str = ""
    title: str = ""
    revision: str = ""


class Part(NamedTuple):
    """A placed part (symbol instance), as the netlist lists it."""

    ref: str
    value: str = ""
    footprint: str = ""
    lib: str = ""
    lib_part: str = ""
    description: str = ""
    fields: tuple[tuple[str, str], ...] = ()
    dnp: bool = False
    exclude_from_bom: bool = False
    sheet_path: str = "/"
    sheet_file: str = ""
    pins: tuple[Pin, ...] = ()

    @property
    def field_map(self) -> dict[str, str]:
        return dict(self.fields)

    def field(self, name: str, default: str = "") -> str:
        """A user field by name, case-insensitively."""
        low = name.lower()
        for key, value in self.fields:
            if key.lower() == low:
                return value
        return default

    @property
    def fitted(self) -> bool:
        return not _not_fitted(self.value, self.fields, self.dnp, self.exclude_from_bom)


@lru_cache(maxsize=1 << 16)  # asked for every part by several stages; values repeat
def _not_fitted(value: str, fields: tuple[tuple[str, str], ...], dnp: bool,
                exclude_from_bom: bool) -> bool:
    return is_not_fitted(value, fields, dnp, exclude_from_bom)


def is_not_fitted(value: str, fields: Iterable[tuple[str, str]], dnp: bool,
                  exclude_from_bom: bool) -> bool:
    """True when a part is marked not fitted in any of the ways designs mark it.

    KiCad's own ``dnp`` and ``exclude_from_bom`` flags; a field named DNP/DNM/NF whose
    value is not a "no" word (KiCad writes such fields with value ``DNP`` or ``1``);
    or a value that is itself DNP/NC/NF.
    """
    if dnp or exclude_from_bom:
        return True
    if value.strip().upper() in NOT_FITTED_VALUES:
        return True
    for name, text in fields:
        if name.strip().upper() in NOT_FITTED_FIELDS and text.strip().upper() not in _FALSE_WORDS:
            return True
    return False


# -- board geometry (read from a .kicad_pcb; lengths in metres) ----------------------------

@dataclass(frozen=True)
class StackupLayer:
    """One layer of the board's stackup, top to bottom: copper, dielectric or mask."""

    name: str                      # "F.Cu", "dielectric 1", "F.Mask"
    kind: str                      # "copper" | "dielectric" | "mask"
    thickness_m: float
    epsilon_r: float | None = None  # dielectrics and masks; None when the file gives none
    material: str = ""


@dataclass(frozen=True)
class Stackup:
    """The board's layers, top to bottom. ``assumed`` when the file had no stackup and the
    reader built one from board-level defaults (``note`` says which)."""

    layers: tuple[StackupLayer, ...] = ()
    assumed: bool = False
    note: str = ""

    @property
    def thickness_m(self) -> float:
        """Sum of every layer's thickness (copper, dielectric and mask), as KiCad sums it."""
        return sum(layer.thickness_m for layer in self.layers)

    @property
    def copper(self) -> tuple[StackupLayer, ...]:
        return tuple(layer for layer in self.layers if layer.kind == "copper")


@dataclass(frozen=True)
class TrackRun:
    """The tracks (segments and arcs) of one net on one copper layer with one width."""

    net: str
    layer: str
    width_m: float
    length_m: float
    pieces: int = 1


@dataclass(frozen=True)
class Via:
    """The vias of one net with the same geometry: ``count`` of them."""

    net: str
    layers: tuple[str, str]        # the copper layers it joins, e.g. ("F.Cu", "B.Cu")
    diameter_m: float              # pad (annular ring) diameter
    drill_m: float
    count: int = 1


@dataclass(frozen=True)
class Board:
    """Routed geometry of a board: tracks and vias per net, and the stackup."""

    path: str
    thickness_m: float             # the file's board thickness (general section)
    stackup: Stackup
    runs: tuple[TrackRun, ...] = ()
    vias: tuple[Via, ...] = ()
    plane_clearance_m: float | None = None  # smallest copper-zone clearance, the gap round a via
    notes: tuple[str, ...] = ()
    _runs_by_net: Mapping[str, tuple[TrackRun, ...]] = field(init=False, repr=False, compare=False)
    _vias_by_net: Mapping[str, tuple[Via, ...]] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        runs: dict[str, list[TrackRun]] = {}
        for run in self.runs:
            runs.setdefault(run.net, []).append(run)
        vias: dict[str, list[Via]] = {}
        for via in self.vias:
            vias.setdefault(via.net, []).append(via)
        object.__setattr__(self, "_runs_by_net", {k: tuple(v) for k, v in runs.items()})
        object.__setattr__(self, "_vias_by_net", {k: tuple(v) for k, v in vias.items()})

    def runs_of(self, net: str) -> tuple[TrackRun, ...]:
        return self._runs_by_net.get(net, ())

    def vias_of(self, net: str) -> tuple[Via, ...]:
        return self._vias_by_net.get(net, ())

    def routed_length_m(self, net: str) -> float:
        return sum(run.length_m for run in self.runs_of(net))

    def via_count(self, net: str) -> int:
        return sum(via.count for via in self.vias_of(net))

    @property
    def nets(self) -> frozenset[str]:
        """Nets with tracks or vias on the board."""
        return frozenset(self._runs_by_net) | frozenset(self._vias_by_net)


@dataclass(frozen=True)
class Design:
    """A whole design, as read from one file. Frozen; indexes are built once."""

    path: str
    format: str                      # kicad-netlist | kicad-xml | kicad-bom-xml | ...
    sha256: str = ""
    title: str = ""
    revision: str = ""
    tool: str = ""                   # e.g. "Eeschema 9.0.8+1"
    source: str = ""                 # the schematic the export came from
    parts: tuple[Part, ...] = ()
    nets: tuple[Net, ...] = ()
    sheets: tuple[Sheet, ...] = ()
    board: Board | None = None      # routed geometry, when a board file was read
    _parts_by_ref: Mapping[str, Part] = field(init=False, repr=False, compare=False)
    _nets_by_name: Mapping[str, Net] = field(init=False, repr=False, compare=False)
    _net_of_pin: Mapping[tuple[str, str], str] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_parts_by_ref", {p.ref: p for p in self.parts})
        object.__setattr__(self, "_nets_by_name", {n.name: n for n in self.nets})
        object.__setattr__(self, "_net_of_pin",
                           {(node.ref, node.pin): net.name for net in self.nets for node in net.nodes})

    def part(self, ref: str) -> Part | None:
        return self._parts_by_ref.get(ref)

    def net(self, name: str) -> Net | None:
        return self._nets_by_name.get(name)

    def net_of(self, ref: str, pin: str) -> str | None:
        """The name of the net a pin is on, or None when it is on no net."""
        return self._net_of_pin.get((ref, pin))

    @property
    def kicad_version(self) -> str:
        """The KiCad version that wrote the export, e.g. ``9.0.8``, or ``""``."""
        import re
        match = re.search(r"(\d+\.\d+(?:\.\d+)?)", self.tool)
        return match.group(1) if match else ""
