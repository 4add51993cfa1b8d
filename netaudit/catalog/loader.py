"""The part catalog: YAML files that teach netaudit how widely used bus parts behave.

Where the files come from, first match wins:

1. files named in the environment variable ``NETAUDIT_CATALOG`` (paths separated by the
   platform's path separator; a folder means every ``*.yaml`` in it, in name order), so a
   team can keep its own parts beside its designs;
2. the files shipped with netaudit, ``netaudit/catalog/*.yaml``, in name order.

netaudit.yaml ``parts:`` rules win over both (``describe_parts`` merges them on top).

A catalog file is a YAML list; each entry::

    - name: TMP102                     # what the entry is called in reports
      match: {value: ["TMP102*"], lib_part: ["TMP102*"]}
      role: target                     # controller | target | mux | translator | repeater
      address: {pin: ADD0, map: {GND: 0x48, VDD: 0x49, SDA: 0x4A, SCL: 0x4B}}
      max_mode: fast
      io_supply_pin: V+
      source: "TI TMP102 datasheet, address table (from memory, verify)"

``match``: ``value`` globs are tried against the part's value and against its
part-number fields (``MPN`` and the like, see ``PART_NUMBER_FIELDS``); ``lib_part`` globs
against the symbol name. Globs are case-insensitive; an entry matches when any glob does.

``address`` takes the forms of netaudit.yaml (a number; ``{ten_bit: 0x...}``;
``{base:, pins: {A0: 0, ...}}``; ``{pin:, map: {GND:, VDD:, SDA:, SCL:}}``) plus two the
catalog needs for real parts:

- ``map`` may also give ``OPEN``: the address when the pin is left unconnected, for parts
  whose datasheet makes "floating" a third state;
- ``{base:, ties: {A1: {GND: 0, VDD: 4, SDA: 8, SCL: 12}, A0: {...}}}``: several pins,
  each adding an offset for what it is tied to (the 16-address tables of TI's current
  monitors).

Optional keys: ``span`` (the part answers ``span`` consecutive addresses from its own, as
block-select EEPROMs do), ``open_pins: low`` (the datasheet says an address pin left open
reads low), ``resistor_coded: true`` (the address pin level is set by a resistor value,
so a strap through a resistor is not a plain tie), ``io_supply_pin``, ``max_mode``,
``tolerant_volts``, ``pin_capacitance_pf``. ``source`` is required: where the entry's data
came from; recalled data says "from memory, verify".

Mistakes in a catalog file are :class:`~netaudit.errors.InputError` naming the file,
line and key.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from fnmatch import translate
from functools import lru_cache
from pathlib import Path

import yaml

from ..config import (SAFE_LOADER, MAX_10BIT, MAX_7BIT, MODES, PF, ROLES, FixedAddress, PinBitsAddress,
                      PinTieAddress, NodeReader as _Reader)
from ..errors import InputError
from ..model import Part
from . import PartInfo

ENV_VAR = "NETAUDIT_CATALOG"
CATALOG_DIR = Path(__file__).resolve().parent
TIES = ("GND", "VDD", "SDA", "SCL", "OPEN")   # what an address pin can be tied to (OPEN: nothing)
# User fields that carry a footprint-independent part number (common practice, no source).
PART_NUMBER_FIELDS = ("MPN", "Manufacturer_Part_Number", "Manufacturer Part Number",
                      "Mfr Part Number", "Part Number", "PartNumber")
_KEYS = ("name", "match", "role", "address", "span", "open_pins", "resistor_coded",
         "io_supply_pin", "max_mode", "tolerant_volts", "pin_capacitance_pf", "source", "notes")


@dataclass(frozen=True)
class PinTiesAddress:
    """``{base:, ties: {PIN: {TIE: offset}}}``: each pin adds the offset for what it is tied to."""

    base: int
    ties: dict[str, dict[str, int]]

    def address_for(self, tie_of: dict[str, str]) -> int | None:
        """The address for ``{pin: tie}``; None when a pin's tie has no offset."""
        value = self.base
        for pin, table in self.ties.items():
            offset = table.get(tie_of.get(pin, ""))
            if offset is None:
                return None
            value += offset
        return value


@dataclass(frozen=True)
class CatalogEntry:
    """One catalog entry: its name, the globs that match parts, and what it knows."""

    name: str
    values: tuple[str, ...]      # upper-case globs for the value and part-number fields
    lib_parts: tuple[str, ...]   # upper-case globs for the symbol name
    info: PartInfo
    path: str
    line: int

    def __post_init__(self) -> None:
        object.__setattr__(self, "_value_glob", _Globs(self.values))
        object.__setattr__(self, "_lib_glob", _Globs(self.lib_parts))

    def matches(self, part: Part) -> bool:
        return self.matches_names(_part_numbers(part), part.lib_part.strip().upper())

    def matches_names(self, numbers: tuple[str, ...], symbol: str) -> bool:
        """``numbers``: the upper-case value and part-number fields; ``symbol``: the
        upper-case symbol name."""
        if any(self._value_glob.match(n) for n in numbers):
            return True
        return bool(symbol) and self._lib_glob.match(symbol)


class _Globs:
    """Case-folded shell globs (``fnmatch`` rules), matched as cheaply as their shape allows:
    ``TMP102*`` by a prefix test, ``PCA9548A`` by equality, anything else by the regular
    expression ``fnmatch.translate`` gives (compiled on first use: most never are)."""

    __slots__ = ("prefixes", "names", "patterns", "_regex")

    def __init__(self, globs: tuple[str, ...]):
        special = set("*?[")
        prefixes, names, patterns = [], set(), []
        for g in globs:
            if not special & set(g):
                names.add(g)
            elif g.endswith("*") and not special & set(g[:-1]):
                prefixes.append(g[:-1])
            else:
                patterns.append(g)
        self.prefixes, self.names, self.patterns = tuple(prefixes), frozenset(names), tuple(patterns)
        self._regex: re.Pattern | None = None

    def match(self, text: str) -> bool:
        if text in self.names or (self.prefixes and text.startswith(self.prefixes)):
            return True
        if not self.patterns:
            return False
        if self._regex is None:
            self._regex = re.compile("|".join(f"(?:{translate(g)})" for g in self.patterns))
        return self._regex.match(text) is not None


def _part_numbers(part: Part) -> tuple[str, ...]:
    numbers = [part.value] + [part.field(f) for f in PART_NUMBER_FIELDS]
    return tuple(n.strip().upper() for n in numbers if n and n.strip())


def catalog_key(part: Part) -> tuple[tuple[str, ...], str]:
    """What the catalog matches a part by: its upper-case value and part-number fields,
    and its upper-case symbol name. Parts with equal keys get equal answers."""
    return _part_numbers(part), part.lib_part.strip().upper()


def lookup(part: Part) -> PartInfo | None:
    """What the catalog knows about ``part``: the first matching entry's PartInfo."""
    return lookup_key(*catalog_key(part))


def lookup_key(numbers: tuple[str, ...], symbol: str) -> PartInfo | None:
    """:func:`lookup` by a :func:`catalog_key`."""
    for entry in entries():
        if entry.matches_names(numbers, symbol):
            return entry.info
    return None


def entries() -> tuple[CatalogEntry, ...]:
    """All entries, user files (``NETAUDIT_CATALOG``) first, then the shipped files."""
    return _entries_for(os.environ.get(ENV_VAR, ""))


def catalog_files(extra: str = "") -> list[Path]:
    files: list[Path] = []
    for item in (x for x in extra.split(os.pathsep) if x.strip()):
        p = Path(item.strip())
        if p.is_dir():
            files.extend(sorted(p.glob("*.yaml")))
        elif p.is_file():
            files.append(p)
        else:
            raise InputError(f"{ENV_VAR} names a catalog file that does not exist", str(p))
    return files + sorted(CATALOG_DIR.glob("*.yaml"))


@lru_cache(maxsize=8)
def _entries_for(extra: str) -> tuple[CatalogEntry, ...]:
    out: list[CatalogEntry] = []
    for path in catalog_files(extra):
        out.extend(load_file(path))
    return tuple(out)


def load_file(path: str | Path) -> list[CatalogEntry]:
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise InputError(f"cannot read catalog file: {exc.strerror}", str(p)) from None
    except UnicodeDecodeError as exc:
        raise InputError(f"catalog is not UTF-8 text (bad byte at offset {exc.start})",
                         str(p)) from None
    return parse_catalog(text, str(p))


def parse_catalog(text: str, path: str = "<catalog>") -> list[CatalogEntry]:
    try:
        root = yaml.compose(text, Loader=SAFE_LOADER)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        raise InputError(f"not valid YAML: {exc.problem or exc.context or 'syntax error'}", path,
                         mark.line + 1 if mark else None, mark.column + 1 if mark else None) from None
    except yaml.YAMLError as exc:
        raise InputError(f"not valid YAML: {exc}", path) from None
    if root is None:
        return []
    reader = _CatalogReader(path)
    return [reader.entry(node, f"[{i}]") for i, node in enumerate(reader.sequence(root, "top level"))]


class _CatalogReader(_Reader):
    """The config file's node walker (errors with file, line, column and key), plus the
    catalog's own keys."""

    def entry(self, node, kp) -> CatalogEntry:
        m = self.mapping(node, kp, _KEYS, ("name", "match", "source"))
        name = self.text(m["name"][1], f"{kp}.name")
        kp = f"{kp} ({name})"
        mm = self.mapping(m["match"][1], f"{kp}.match", ("value", "lib_part"))
        if not mm:
            self.fail(m["match"][1], f"{kp}.match", "give value or lib_part globs")
        globs = {key: tuple(n.upper() for n, _ in self.names(v, f"{kp}.match.{key}"))
                 for key, (_, v) in mm.items()}
        get = lambda key: m[key][1] if key in m else None  # noqa: E731
        address = self.catalog_address(get("address"), f"{kp}.address") if get("address") else None
        span = None
        if get("span"):
            span = self.integer(get("span"), f"{kp}.span", 1, 8, "address span", fmt=str)
            if address is None:
                self.fail(get("span"), f"{kp}.span", "a span needs an address")
        open_pins = None
        if get("open_pins"):
            open_pins = self.choice(get("open_pins"), f"{kp}.open_pins", ("low",), "open-pin level")
        coded = None
        if get("resistor_coded"):
            node_rc = get("resistor_coded")
            if not (isinstance(node_rc, yaml.ScalarNode) and node_rc.tag.endswith(":bool")):
                self.fail(node_rc, f"{kp}.resistor_coded", "expected true or false")
            coded = node_rc.value.lower() in ("true", "yes", "on")
        source = self.text(m["source"][1], f"{kp}.source", "where the data came from")
        if get("notes"):
            self.text(get("notes"), f"{kp}.notes", "a note")
        info = PartInfo(
            role=self.choice(get("role"), f"{kp}.role", ROLES, "role") if get("role") else None,
            address=address,
            io_supply_pin=self.text(get("io_supply_pin"), f"{kp}.io_supply_pin", "a pin name")
            if get("io_supply_pin") else None,
            max_mode=self.choice(get("max_mode"), f"{kp}.max_mode", MODES, "mode")
            if get("max_mode") else None,
            tolerant_volts=self.number(get("tolerant_volts"), f"{kp}.tolerant_volts", positive=True)
            if get("tolerant_volts") else None,
            pin_capacitance_f=self.number(get("pin_capacitance_pf"), f"{kp}.pin_capacitance_pf",
                                          positive=True) * PF
            if get("pin_capacitance_pf") else None,
            source=" ".join(source.split()),
            address_origin="catalog" if address is not None else None,
            address_span=span, open_pins=open_pins, resistor_coded=coded, catalog_entry=name)
        return CatalogEntry(name, globs.get("value", ()), globs.get("lib_part", ()), info,
                            str(self.path), node.start_mark.line + 1)

    def catalog_address(self, node, kp):
        if not isinstance(node, yaml.MappingNode):
            return FixedAddress(self.address7(node, kp))   # 10-bit: write {ten_bit: 0x...}
        keys = {k.value for k, _ in node.value if isinstance(k, yaml.ScalarNode)}
        if "ten_bit" in keys:
            m = self.mapping(node, kp, ("ten_bit",), ("ten_bit",))
            return FixedAddress(self.integer(m["ten_bit"][1], f"{kp}.ten_bit", 0, MAX_10BIT,
                                             "10-bit address"), ten_bit=True)
        if "ties" in keys:
            return self.pin_ties(node, kp)
        if keys & {"base", "pins"}:
            return self.pin_bits(node, kp)
        if keys & {"pin", "map"}:
            m = self.mapping(node, kp, ("pin", "map"), ("pin", "map"))
            pin = self.text(m["pin"][1], f"{kp}.pin", "a pin name")
            table = self.mapping(m["map"][1], f"{kp}.map", TIES)
            if not table:
                self.fail(m["map"][1], f"{kp}.map", "give at least one of " + ", ".join(TIES))
            return PinTieAddress(pin, {tie: self.address7(v, f"{kp}.map.{tie}")
                                       for tie, (_, v) in table.items()})
        self.fail(node, kp, "expected a number, {base:, pins:}, {pin:, map:}, {base:, ties:} "
                  "or {ten_bit:}")

    def pin_ties(self, node, kp) -> PinTiesAddress:
        m = self.mapping(node, kp, ("base", "ties"), ("base", "ties"))
        base = self.address7(m["base"][1], f"{kp}.base")
        ties: dict[str, dict[str, int]] = {}
        for pin, (_, v) in self.mapping(m["ties"][1], f"{kp}.ties").items():
            pkp = f"{kp}.ties.{pin}"
            table = self.mapping(v, pkp, TIES)
            if not table:
                self.fail(v, pkp, "give at least one of " + ", ".join(TIES))
            ties[pin] = {t: self.integer(n, f"{pkp}.{t}", 0, MAX_7BIT, "address offset")
                         for t, (_, n) in table.items()}
        if not ties:
            self.fail(m["ties"][1], f"{kp}.ties", "give at least one pin")
        top = base + sum(max(t.values()) for t in ties.values())
        if top > MAX_7BIT:
            self.fail(node, kp, f"base plus the largest offsets reaches 0x{top:02X}, "
                      "beyond the 7-bit range")
        return PinTiesAddress(base, ties)


__all__ = ["CatalogEntry", "PinTiesAddress", "PinBitsAddress", "PinTieAddress", "FixedAddress",
           "lookup", "entries", "load_file", "parse_catalog", "catalog_files", "ENV_VAR"]
