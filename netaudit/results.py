"""What the audit works out: rails, bus lines, segments, buses, findings and the Audit.

Plain frozen dataclasses named as the trade names them. Topology builds Buses from a
Design; the electrical budget fills each Line's ``budget``; checks return Findings;
reporters only format an Audit.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum
from typing import Any

from .model import Design


class Severity(str, Enum):
    ERROR = "error"
    WARNING = "warning"
    INFO = "info"

    @property
    def rank(self) -> int:
        return {"error": 3, "warning": 2, "info": 1}[self.value]


@dataclass(frozen=True)
class Rail:
    """A supply net and its voltage (None when it could not be worked out)."""

    net: str
    volts: float | None
    source: str  # "config" | "name" | "power-pin" | "ground"


@dataclass(frozen=True)
class PullUp:
    """A resistor from a bus line to a rail (or, for pullup-to-signal, to another net)."""

    ref: str
    ohms: float | None
    rail: str                 # the net at the far end
    fitted: bool = True
    sheet_path: str = "/"
    sheet_file: str = ""
    offboard: bool = False    # declared in config, lives on another board
    net: str = ""             # the line net the resistor touches


@dataclass(frozen=True)
class SeriesLink:
    """A series resistor or 0 ohm link joining two nets of one bus line."""

    ref: str
    ohms: float | None
    nets: tuple[str, str]
    fitted: bool = True


@dataclass(frozen=True)
class DevicePin:
    """A bus pin of a device: which pin, its function and the line it sits on."""

    ref: str
    pin: str
    function: str
    net: str
    signal: str  # "sda" | "scl"


@dataclass(frozen=True)
class Device:
    """A part with a bus pin on a segment."""

    ref: str
    value: str = ""
    role: str = "target"      # controller | target | mux | translator | repeater | connector | passive
    pins: tuple[DevicePin, ...] = ()
    address: int | None = None
    address_10bit: bool = False
    address_source: str | None = None
    io_rail: str | None = None
    io_volts: float | None = None
    max_mode: str | None = None
    pin_capacitance_f: float | None = None


@dataclass(frozen=True)
class LineBudget:
    """Electrical figures for one line (SI units), filled by electrical/ and checks."""

    rp_ohms: float | None = None
    rail_volts: float | None = None
    rp_min_ohms: float | None = None
    rp_max_ohms: float | None = None
    capacitance_farads: float | None = None
    rise_time_s: float | None = None
    rise_time_max_s: float | None = None
    capacitance_parts: dict[str, float] = field(default_factory=dict)
    routed_length_m: float | None = None
    notes: tuple[str, ...] = ()
    suggestions_ohms: tuple[float, ...] = ()
    pick_ohms: float | None = None


@dataclass(frozen=True)
class Line:
    """One bus line (SDA or SCL) in one segment: nets joined by series links."""

    signal: str                       # "sda" | "scl"
    nets: tuple[str, ...]
    pullups: tuple[PullUp, ...] = ()  # fitted, not fitted and off-board; reporters filter
    series: tuple[SeriesLink, ...] = ()
    pulldowns: tuple[PullUp, ...] = ()  # resistors from the line to ground (rail = the ground net)
    budget: LineBudget | None = None

    @property
    def fitted_pullups(self) -> tuple[PullUp, ...]:
        return tuple(p for p in self.pullups if p.fitted)


@dataclass(frozen=True)
class Upstream:
    """What a segment sits behind: the multiplexer, translator or repeater, and its channel."""

    ref: str
    kind: str               # "mux" | "translator" | "repeater"
    channel: str | None = None


@dataclass(frozen=True)
class Segment:
    """One stretch of a bus between splitters: its two lines and the devices on them."""

    id: str
    sda: Line | None
    scl: Line | None
    devices: tuple[Device, ...] = ()
    upstream: Upstream | None = None

    @property
    def lines(self) -> tuple[Line, ...]:
        return tuple(x for x in (self.sda, self.scl) if x is not None)


@dataclass(frozen=True)
class Bus:
    """A bus: its segments (the first is the controller's), its mode and how it was found."""

    name: str
    mode: str
    segments: tuple[Segment, ...]
    evidence: str = ""  # "config" | "pin-function" | "net-name"
    extra_capacitance_f: float = 0.0


@dataclass(frozen=True)
class Finding:
    """One problem found by one rule, as data; reporters phrase it (report/messages.py)."""

    rule: str
    severity: Severity
    bus: str | None = None
    segment: str | None = None
    line: str | None = None
    refs: tuple[str, ...] = ()
    nets: tuple[str, ...] = ()
    data: dict[str, Any] = field(default_factory=dict)
    waived: bool = False
    waiver_reason: str | None = None

    def sort_key(self) -> tuple:
        return (-self.severity.rank, self.rule, self.bus or "", self.segment or "",
                self.line or "", self.refs, self.nets)


@dataclass(frozen=True)
class Audit:
    """Everything one audit found: the design, rails, buses, findings and address domains."""

    design: Design
    rails: tuple[Rail, ...]
    buses: tuple[Bus, ...]
    findings: tuple[Finding, ...]
    config_path: str | None = None
    config_sha256: str | None = None
    mode: str = "fast"
    address_domains: tuple = ()   # netaudit.addressing.AddressDomain: what each mux channel sees

    def counts(self) -> dict[str, int]:
        live = [f for f in self.findings if not f.waived]
        return {
            "buses": len(self.buses),
            "segments": sum(len(b.segments) for b in self.buses),
            "errors": sum(f.severity is Severity.ERROR for f in live),
            "warnings": sum(f.severity is Severity.WARNING for f in live),
            "infos": sum(f.severity is Severity.INFO for f in live),
            "waived": sum(f.waived for f in self.findings),
        }
