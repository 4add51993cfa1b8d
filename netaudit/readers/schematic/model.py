"""Plain records for what a ``.kicad_sch`` file holds that matters for a netlist.

Coordinates are integers in KiCad's schematic internal unit (100 nm: 1 mm = 10 000),
as KiCad itself compares them, so that "the same point" means exactly the same point.
"""

from __future__ import annotations

from dataclasses import dataclass, field

IU_PER_MM = 10_000


@dataclass
class LibPin:
    number: str
    name: str
    type: str                     # KiCad's canonical electrical type name
    x: int                        # connection point, library coordinates (Y up)
    y: int
    hidden: bool
    unit: int                     # 0: common to all units
    style: int                    # body style; 0: common to all styles
    alternates: dict[str, str] = field(default_factory=dict)   # name -> type


@dataclass
class LibSymbol:
    name: str                     # the key in lib_symbols ("Device:R" or a lib_name)
    power: str = ""               # "" | "global" | "local"
    pins: list[LibPin] = field(default_factory=list)
    unit_count: int = 1
    description: str = ""
    reference: str = ""           # the library symbol's Reference field ("R", "#PWR")
    pin_names_hidden: bool = False
    duplicate_pins_are_jumpers: bool = False
    jumper_groups: bool = False


# Field positions KiCad 6 wrote as (id N) for the mandatory fields.
MANDATORY_BY_ID = {0: "reference", 1: "value", 2: "footprint", 3: "datasheet",
                   4: "description"}
MANDATORY_NAMES = frozenset({"reference", "value", "footprint", "datasheet", "description"})


def mandatory_field(name: str, legacy_id: int | None) -> str:
    """Which mandatory field a property is ("value", ...), or "" for a user field.

    Files written with field ids (KiCad 6) make a field mandatory only when its name and
    id agree: a user field named "Description" with id 10 stays a user field."""
    low = name.lower()
    if low not in MANDATORY_NAMES:
        return ""
    if legacy_id is not None and MANDATORY_BY_ID.get(legacy_id) != low:
        return ""
    return low


@dataclass
class Property:
    name: str
    value: str
    private: bool = False
    legacy_id: int | None = None  # KiCad 6 wrote (id N); 0-3 are the mandatory fields

    @property
    def mandatory(self) -> str:
        """The mandatory field this property is ("value", ...), or "" for a user field."""
        return mandatory_field(self.name, self.legacy_id)


@dataclass
class Instance:
    reference: str
    unit: int
    value: str | None = None      # KiCad 6 symbol_instances only
    footprint: str | None = None


@dataclass
class Symbol:
    uuid: str
    lib_id: str
    lib_name: str
    x: int
    y: int
    matrix: tuple[int, int, int, int]   # library (Y up) -> sheet (Y down): x1 y1 x2 y2
    unit: int
    style: int
    in_bom: bool
    on_board: bool
    dnp: bool
    properties: list[Property]
    alternates: dict[str, str]    # pin number -> alternate function chosen
    instances: dict[str, Instance]      # "/uuid/uuid" path as written -> instance
    line: int = 0

    def prop(self, name: str, default: str = "") -> str:
        """A mandatory field's text ("Reference", "Value", ...) or a user field's."""
        low = name.lower()
        if low in MANDATORY_NAMES:
            for p in self.properties:
                if p.mandatory == low:
                    return p.value
            return default
        for p in self.properties:
            if p.name.lower() == low:
                return p.value
        return default


@dataclass
class Label:
    kind: str                     # local | global | hier | directive
    text: str
    x: int
    y: int
    shape: str = ""
    uuid: str = ""


@dataclass
class SheetPin:
    name: str
    shape: str
    x: int
    y: int
    uuid: str = ""


@dataclass
class SheetRef:
    """A sheet symbol placed on a sheet: one child instance."""

    uuid: str
    name: str
    file: str
    pins: list[SheetPin]
    in_bom: bool = True
    on_board: bool = True
    dnp: bool = False
    x: int = 0
    y: int = 0
    pages: dict[str, str] = field(default_factory=dict)   # parent path as written -> page


@dataclass
class SheetFile:
    path: str                     # the file on disk
    version: int
    uuid: str
    title: str = ""
    revision: str = ""
    company: str = ""
    libs: dict[str, LibSymbol] = field(default_factory=dict)
    symbols: list[Symbol] = field(default_factory=list)
    wires: list[tuple[int, int, int, int]] = field(default_factory=list)
    buses: list[tuple[int, int, int, int]] = field(default_factory=list)
    junctions: list[tuple[int, int]] = field(default_factory=list)
    junction_uuids: list[str] = field(default_factory=list)
    no_connects: list[tuple[int, int]] = field(default_factory=list)
    bus_entries: list[tuple[int, int, int, int]] = field(default_factory=list)
    bus_entry_uuids: list[str] = field(default_factory=list)
    labels: list[Label] = field(default_factory=list)
    sheets: list[SheetRef] = field(default_factory=list)
    bus_aliases: dict[str, list[str]] = field(default_factory=dict)
    legacy_instances: dict[str, Instance] = field(default_factory=dict)  # KiCad 6 root
    legacy_pages: dict[str, str] = field(default_factory=dict)           # KiCad 6 root
    text: str = ""                # kept for locating items in error messages
