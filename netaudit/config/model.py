"""The settings of a netaudit.yaml as typed, frozen data, and the constants they follow.

Units: the file speaks pF, mm and volts; these classes hold SI floats (farads, metres, volts,
ohms) under names that carry the unit (``pin_capacitance_f``, ``length_m``). Reading the
file is :mod:`netaudit.config.reader`'s job.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from typing import Any, Union

import yaml

# libyaml's loader when PyYAML was built with it (same nodes and marks, about 10x faster).
SAFE_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)

CONFIG_FILENAME = "netaudit.yaml"
CONFIG_VERSION = 1
MODES = ("standard", "fast", "fast-plus", "smbus", "smbus-400k", "smbus-1m")
DEFAULT_MODE = "fast"
ROLES = ("controller", "target", "mux", "translator", "repeater")
PIN_TIES = ("GND", "VDD", "SDA", "SCL")  # what an address pin can be tied to
RULE_IDS = frozenset({
    "bus-line-unpaired", "bus-lines-swapped", "bus-pin-unconnected", "bus-lone-device",
    "pullup-missing", "pullup-duplicated", "pullup-parallel", "pullup-rail-mismatch",
    "pullup-to-signal", "pullup-too-strong", "pullup-too-weak", "capacitance-over-limit",
    "low-level-margin", "rail-overvoltage", "rail-high-level-unmet", "rail-voltage-unknown",
    "translator-wiring", "address-collision", "address-reserved", "address-strap-floating",
    "address-unknown", "mux-address-overlap", "speed-unsupported",
})
DEFAULT_PIN_CAPACITANCE_F = 10e-12  # Ci max per I/O pin, UM10204 Rev. 6 Table 9
DEFAULT_TRACE_F_PER_M = 0.1e-9      # 0.1 pF/mm pre-layout estimate, common practice, no source
PF, MM = 1e-12, 1e-3
# The largest numbers accepted: far beyond any board (1 kV, 1 mF, 10 km, 1 TΩ), they keep
# every sum and product of the line budget finite. Common practice, no source.
MAX_VOLTS, MAX_PF, MAX_PF_PER_MM, MAX_MM, MAX_OHMS = 1e3, 1e9, 1e6, 1e7, 1e12
MAX_7BIT, MAX_10BIT = 0x7F, 0x3FF   # UM10204 Rev. 6 sections 3.1.10 and 3.1.11


@dataclass(frozen=True)
class FixedAddress:
    """One address; ``ten_bit`` when written as ``{ten_bit: 0x...}`` (0x000-0x3FF)."""

    value: int
    ten_bit: bool = False


@dataclass(frozen=True)
class PinBitsAddress:
    """``{base: 0x50, pins: {A0: 0, ...}}``: each listed pin tied high sets its bit."""

    base: int
    pins: dict[str, int]

    def address_for(self, pins_high: Any) -> int:
        """The address when the pins named in ``pins_high`` are tied high, the rest low."""
        value = self.base
        for pin, bit in self.pins.items():
            if pin in pins_high:
                value |= 1 << bit
        return value


@dataclass(frozen=True)
class PinTieAddress:
    """``{pin: ADDR, map: {GND: 0x48, ...}}``: the address follows what one pin is tied to."""

    pin: str
    by_tie: dict[str, int]  # keys from PIN_TIES

    def address_for(self, tie: str) -> int | None:
        return self.by_tie.get(tie)


Address = Union[FixedAddress, PinBitsAddress, PinTieAddress]


@dataclass(frozen=True)
class Defaults:
    """The ``defaults:`` section: mode, pin capacitance and trace capacitance per length."""

    mode: str = DEFAULT_MODE
    pin_capacitance_f: float = DEFAULT_PIN_CAPACITANCE_F
    trace_f_per_m: float = DEFAULT_TRACE_F_PER_M


@dataclass(frozen=True)
class OffboardPullup:
    """A pull-up on another board, on each line of the bus."""

    ohms: float
    rail: str


@dataclass(frozen=True)
class BusConfig:
    """One entry of ``buses:``: a bus named by its SDA and SCL nets, with its own settings."""

    name: str
    sda: tuple[str, ...]
    scl: tuple[str, ...]
    mode: str | None = None  # None: the defaults' mode
    offboard_pullup: OffboardPullup | None = None
    extra_capacitance_f: float = 0.0
    line: int | None = field(default=None, compare=False)     # where it is written,
    source: str | None = field(default=None, compare=False)   # for errors found later


@dataclass(frozen=True)
class TraceConfig:
    """Exactly one of the two is set."""

    length_m: float | None = None
    capacitance_f: float | None = None


@dataclass(frozen=True)
class PartMatch:
    """Globs (case-sensitive); a part matches when every given glob matches.

    A ``lib_part`` glob with a ``:`` is matched against ``lib:part``, otherwise
    against the symbol name alone.
    """

    ref: str | None = None
    value: str | None = None
    lib_part: str | None = None

    def matches(self, ref: str, value: str = "", lib: str = "", lib_part: str = "") -> bool:
        if self.ref is not None and not fnmatchcase(ref, self.ref):
            return False
        if self.value is not None and not fnmatchcase(value, self.value):
            return False
        if self.lib_part is not None:
            subject = f"{lib}:{lib_part}" if ":" in self.lib_part else lib_part
            if not fnmatchcase(subject, self.lib_part):
                return False
        return True


@dataclass(frozen=True)
class PartRule:
    """One entry of ``parts:``: what netaudit is told about the parts it matches."""

    match: PartMatch
    role: str | None = None
    address: Address | None = None
    io_supply_pin: str | None = None
    max_mode: str | None = None
    tolerant_volts: float | None = None
    pin_capacitance_f: float | None = None
    line: int | None = field(default=None, compare=False)     # where it is written,
    source: str | None = field(default=None, compare=False)   # for errors found later


@dataclass(frozen=True)
class Waiver:
    """One entry of ``waivers:``: a rule accepted for some parts or nets, and why."""

    rule: str
    reason: str
    refs: tuple[str, ...] = ()
    nets: tuple[str, ...] = ()
    bus: str | None = None
    line: int | None = field(default=None, compare=False)     # where it is written,
    source: str | None = field(default=None, compare=False)   # for errors found later


@dataclass(frozen=True)
class Config:
    """A whole netaudit.yaml; ``path`` and ``sha256`` identify the file for the report."""

    version: int = CONFIG_VERSION
    rails: dict[str, float] = field(default_factory=dict)
    defaults: Defaults = Defaults()
    buses: tuple[BusConfig, ...] = ()
    traces: dict[str, TraceConfig] = field(default_factory=dict)
    parts: tuple[PartRule, ...] = ()
    waivers: tuple[Waiver, ...] = ()
    path: str | None = None
    sha256: str | None = None

    @classmethod
    def empty(cls, path: str | None = None, sha256: str | None = None) -> "Config":
        return cls(path=path, sha256=sha256)

    def bus_named(self, name: str) -> BusConfig | None:
        return next((b for b in self.buses if b.name == name), None)

    def part_rules_for(self, ref: str, value: str = "", lib: str = "",
                       lib_part: str = "") -> tuple[PartRule, ...]:
        """The part rules that match a part, in file order."""
        return tuple(r for r in self.parts if r.match.matches(ref, value, lib, lib_part))

