"""From a loaded hierarchy to KiCad's nets: groups per sheet instance, drivers, names."""

from __future__ import annotations

from dataclasses import dataclass

from ...errors import InputError
from .connect import Group, PlacedPin, connect, placed_pins
from .hierarchy import Hierarchy, SheetInstance
from .model import LibSymbol, Symbol
from .names import label_name, netname_escape, shown_pin_name, unit_letters
from .nets import (GLOBAL, HIER, K_LABEL, K_PIN, K_SHEETPIN, LOCAL, PIN, POWER, SHEET_PIN,
                   Driver, Sub)
from .project import ProjectSettings
from .sheetfile import where
from .textvars import resolve as resolve_vars

# KiCad 7's last format before power symbols took their net name from the value field.
POWER_VALUE_FIX_BEFORE = 20230221


@dataclass
class SymInst:
    """A placed symbol in one sheet instance."""

    sym: Symbol
    lib: LibSymbol
    inst: SheetInstance
    index: int                    # index of the symbol in its sheet file
    ref: str
    unit: int
    value: str
    pins: list[PlacedPin]

    @property
    def in_netlist(self) -> bool:
        return not self.ref.startswith("#")

    @property
    def annotated(self) -> bool:
        return not self.ref.endswith("?")


class PinUse:
    """One placed pin of one symbol instance, as a driver item."""

    __slots__ = ("si", "pp", "type", "function", "global_power")

    def __init__(self, si: SymInst, pp: PlacedPin):
        self.si = si
        self.pp = pp
        alt = si.sym.alternates.get(pp.pin.number)
        if alt and alt != pp.pin.name and alt in pp.pin.alternates:
            self.type = pp.pin.alternates[alt]
            self.function = alt
        else:
            self.type = pp.pin.type
            self.function = shown_pin_name(pp.pin.name)
        self.global_power = self.type == "power_in" and (pp.pin.hidden or bool(si.lib.power))

    @property
    def in_netlist(self) -> bool:
        return self.si.in_netlist


class Engine:
    def __init__(self, hierarchy: Hierarchy, project: ProjectSettings):
        """Call place_symbols(), build_subs(), then naming.name_nets(engine)."""
        self.h = hierarchy
        self.project = project
        self._groups: dict[tuple[str, tuple], tuple[list[PlacedPin], list[Group]]] = {}
        self.symbols: list[SymInst] = []
        self.subs: list[Sub] = []
        self._function_cache: dict[int, dict] = {}

    # -- symbols -------------------------------------------------------------------

    def place_symbols(self) -> None:
        legacy_values: dict[int, str] = {}
        legacy_footprints: dict[int, str] = {}
        per_inst: list[list[tuple[Symbol, object]]] = []
        for inst in self.h.instances:
            rows = []
            for sym in inst.file.symbols:
                found = self.h.instance_of(sym, inst)
                rows.append((sym, found))
                if self.h.legacy:
                    if found.value:
                        legacy_values[id(sym)] = found.value
                    if found.footprint:
                        legacy_footprints[id(sym)] = found.footprint
            per_inst.append(rows)
        self.legacy_footprints = legacy_footprints
        fix_power = self.h.root.version < POWER_VALUE_FIX_BEFORE
        for inst, rows in zip(self.h.instances, per_inst):
            units = tuple(found.unit for _, found in rows)
            pins_by_symbol = self._pins(inst, units)
            for i, (sym, found) in enumerate(rows):
                lib = inst.file.libs[sym.lib_name or sym.lib_id]
                value = legacy_values.get(id(sym), sym.prop("Value"))
                if fix_power and lib.power and lib.pins:
                    first = lib.pins[0]
                    if first.type == "power_in" and first.hidden:
                        value = first.name
                ref = found.reference or sym.prop("Reference")
                if not ref.startswith("#") and ref.endswith("?"):
                    raise InputError(f"symbol {ref} ({sym.lib_id}) is not annotated; annotate "
                                     "the schematic in KiCad first", inst.file.path,
                                     *where(inst.file, sym.uuid))
                self.symbols.append(SymInst(sym, lib, inst, i, ref, found.unit, value,
                                            pins_by_symbol.get(i, [])))

    def _pins(self, inst: SheetInstance, units: tuple) -> dict[int, list[PlacedPin]]:
        pins, _ = self.groups(inst, units)
        out: dict[int, list[PlacedPin]] = {}
        for p in pins:
            out.setdefault(p.symbol, []).append(p)
        return out

    def groups(self, inst: SheetInstance, units: tuple) -> tuple[list[PlacedPin], list[Group]]:
        sf = inst.file
        default = tuple(s.unit for s in sf.symbols)
        key = (sf.path, () if units == default else units)
        cached = self._groups.get(key)
        if cached is None:
            unit_map = None if units == default else dict(enumerate(units))
            pins = placed_pins(sf, unit_map)
            cached = self._groups[key] = (pins, connect(sf, pins))
        return cached

    # -- groups and drivers -----------------------------------------------------------

    def build_subs(self) -> None:
        by_inst: dict[int, dict[int, SymInst]] = {}
        for si in self.symbols:
            by_inst.setdefault(si.inst.index, {})[si.index] = si
        order = 0
        for inst in self.h.instances:
            syms = by_inst.get(inst.index, {})
            units = tuple(syms[i].unit if i in syms else s.unit
                          for i, s in enumerate(inst.file.symbols))
            _, groups = self.groups(inst, units)
            for g in groups:
                sub = Sub(inst, g, order)
                order += 1
                self._add_drivers(sub, g, inst, syms)
                self.subs.append(sub)

    def _add_drivers(self, sub: Sub, g: Group, inst: SheetInstance, syms) -> None:
        sf = inst.file
        uses = []
        for pp in g.pins:
            use = PinUse(syms[pp.symbol], pp)
            uses.append(use)
            sub.pins.append((pp, use))
            if use.type == "no_connect":
                sub.no_connect = True
        if g.no_connect:
            sub.no_connect = True
        for use in uses:
            si = use.si
            if use.global_power:
                if si.lib.power == "local":
                    raise InputError("a local power symbol (power local) is not followed by "
                                     "this reader; use --use-kicad-cli", sf.path,
                                     *where(sf, si.sym.uuid))
                value = si.value
                if si.lib.power and "${" in value:
                    value = resolve_vars(value, si, self)
                name = netname_escape(value if si.lib.power else use.pp.pin.name)
                sub.drivers.append(Driver(K_PIN, POWER, name, use, bool(si.lib.power)))
            elif si.annotated:
                namer = (lambda u=use, s=sub: self.pin_net_name(u, s.no_connect))
                sub.drivers.append(Driver(K_PIN, PIN, None, use, bool(si.lib.power), namer=namer))
        for li in g.labels:
            lb = sf.labels[li]
            if lb.kind == "directive":
                continue
            if "${" in lb.text:
                raise InputError(f"label {lb.text} uses a text variable, which this reader does "
                                 "not expand; use --use-kicad-cli", sf.path, *where(sf, lb.uuid))
            prio = {"local": LOCAL, "global": GLOBAL, "hier": HIER}[lb.kind]
            d = Driver(K_LABEL, prio, label_name(lb.text), lb)
            sub.drivers.append(d)
            if lb.kind == "hier":
                sub.hier_ports.append(d)
        for si_, pi in g.sheet_pins:
            sheet = sf.sheets[si_]
            sp = sheet.pins[pi]
            d = Driver(K_SHEETPIN, SHEET_PIN, label_name(sp.name), (sheet.uuid, sp.name),
                       shape=sp.shape)
            sub.drivers.append(d)
            sub.hier_pins.append(d)

    def _functions(self, si: SymInst) -> dict[str, list[tuple[str, bool]]]:
        """Pin function -> (number, is of type not-connected) for the pins of a symbol."""
        table = self._function_cache.get(id(si))
        if table is None:
            table = {}
            for pp in si.pins:
                u = PinUse(si, pp)
                table.setdefault(u.function, []).append((pp.pin.number, u.type == "no_connect"))
            self._function_cache[id(si)] = table
        return table

    def pin_net_name(self, use: PinUse, force_nc: bool) -> str:
        """KiCad's name for a net driven only by ordinary pins (SCH_PIN::GetDefaultNetName)."""
        si = use.si
        pin = use.pp.pin
        unconnected = force_nc or use.type == "no_connect"
        prefix = "unconnected-(" if unconnected else "Net-("
        name = shown_pin_name(pin.name)
        if name and name != pin.number:
            shown = use.function
            multiple = any(n != pin.number and unconnected == nc
                           for n, nc in self._functions(si).get(shown, ()))
            ref = si.ref
            if si.lib.unit_count > 1:
                ref += unit_letters(si.unit, self.project.unit_first, self.project.unit_separator)
            text = f"{prefix}{ref}-{netname_escape(name)}"
            if unconnected or multiple:
                text += "-Pad" + netname_escape(pin.number)
            return text + ")"
        return f"{prefix}{si.ref}-Pad{netname_escape(pin.number)})"
