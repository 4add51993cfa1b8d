"""netaudit.yaml text -> :class:`~netaudit.config.model.Config`, checked as it is read.

The file is composed into a YAML node tree with PyYAML's safe loader and walked by hand
(:class:`NodeReader`), so every error names the key path (``buses[0].mode``) and the line
and column it sits on. Nothing is ever constructed from a tag other than the plain YAML
scalars. The part catalog (netaudit.catalog.loader) walks its files with the same reader.

Names (nets, refs, pins, buses) are taken as the text written, so ``1``, ``yes`` or
``0x10`` as a net or pin name stay text and never become numbers or booleans.
"""

from __future__ import annotations

import hashlib
import math
import re
from pathlib import Path

import yaml

from ..errors import InputError
from .model import (
    CONFIG_VERSION, MAX_10BIT, MAX_7BIT, MAX_MM, MAX_OHMS, MAX_PF, MAX_PF_PER_MM, MAX_VOLTS,
    MM, MODES, PF, PIN_TIES, ROLES, RULE_IDS, SAFE_LOADER, Address, BusConfig, Config,
    Defaults, FixedAddress, OffboardPullup, PartMatch, PartRule, PinBitsAddress,
    PinTieAddress, TraceConfig, Waiver,
)

def parse_config(text: str, path: str | Path | None = None, *,
                 sha256: str | None = None) -> Config:
    where = None if path is None else str(path)
    digest = sha256 or hashlib.sha256(text.encode("utf-8")).hexdigest()
    try:
        _check_nesting(text, where)
        root = yaml.compose(text, Loader=SAFE_LOADER)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        problem = exc.problem or exc.context or "syntax error"
        ctx = exc.context_mark
        if exc.context and exc.problem and ctx is not None and mark is not None \
                and ctx.line != mark.line:
            problem += f" ({exc.context} on line {ctx.line + 1})"
        raise InputError(f"not valid YAML: {problem}", where,
                         mark.line + 1 if mark else None,
                         mark.column + 1 if mark else None) from None
    except yaml.reader.ReaderError as exc:
        # A character YAML does not allow: the first one of its kind is where the reader
        # stopped (libyaml counts the offset in bytes, PyYAML in characters).
        at = text.find(chr(exc.character)) if isinstance(exc.character, int) else -1
        if at == -1:
            raise InputError(f"not valid YAML: {exc}", where) from None
        raise InputError(f"not valid YAML: character U+{exc.character:04X} is not allowed "
                         f"({exc.reason})", where, text.count("\n", 0, at) + 1,
                         at - (text.rfind("\n", 0, at) + 1) + 1) from None
    except yaml.YAMLError as exc:
        raise InputError(f"not valid YAML: {exc}", where) from None
    if root is None or _is_null(root):
        return Config.empty(where, digest)
    return NodeReader(where).config(root, digest)


MAX_NESTING = 50  # a netaudit.yaml nests five levels deep (parts[0].address.pins.A0)


def _check_nesting(text: str, where: str | None) -> None:
    """Refuse collections nested deeper than MAX_NESTING, before composing the file.

    libyaml's scanner slows with the square of the nesting depth (10 000 levels of ``[``
    take seconds, 100 000 minutes) and its composer recurses on the C stack (100 000 levels
    crash the interpreter). The event stream is read without recursion and stopped at the
    first level too deep, so the cost stays small.
    """
    loader = SAFE_LOADER(text)
    try:
        depth = 0
        while loader.check_event():
            event = loader.get_event()
            if isinstance(event, yaml.CollectionStartEvent):
                depth += 1
                if depth > MAX_NESTING:
                    mark = event.start_mark
                    raise InputError(f"nested more than {MAX_NESTING} levels deep; a netaudit.yaml "
                                     "needs a few", where, mark.line + 1, mark.column + 1)
            elif isinstance(event, yaml.CollectionEndEvent):
                depth -= 1
    finally:
        loader.dispose()


# ---------------------------------------------------------------- node walking

_T = "tag:yaml.org,2002:"
_STR, _INT, _FLOAT, _BOOL, _NULL = (_T + t for t in ("str", "int", "float", "bool", "null"))
_SCALAR_TAGS = frozenset({_STR, _INT, _FLOAT, _BOOL, _NULL, _T + "timestamp"})
_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")
_IDENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")
_CONSTRUCT = yaml.constructor.SafeConstructor()


def _is_null(node: yaml.Node) -> bool:
    return isinstance(node, yaml.ScalarNode) and node.tag == _NULL


def _join(parent: str, key: str) -> str:
    if _IDENT.fullmatch(key):
        return f"{parent}.{key}" if parent else key
    return f'{parent}["{key}"]'


def _describe(node: yaml.Node) -> str:
    if isinstance(node, yaml.SequenceNode):
        return "a list"
    if isinstance(node, yaml.MappingNode):
        return "a mapping"
    if _is_null(node):
        return "nothing"
    text = str(node.value)
    return f"'{text[:40]}…' ({len(text)} characters)" if len(text) > 48 else f"'{text}'"


def _hex(value: int) -> str:
    return f"0x{value:02X}"


class NodeReader:
    """Reads values of known shapes from YAML nodes; :meth:`fail` raises the InputError
    (file, line, column, key path) that every mistake becomes. ``config`` reads a whole
    netaudit.yaml; the part catalog subclasses it for its own files."""

    def __init__(self, path: str | None) -> None:
        self.path = path

    def fail(self, node: yaml.Node | None, keypath: str, problem: str) -> None:
        mark = node.start_mark if node is not None else None
        raise InputError(f"{keypath}: {problem}" if keypath else problem, self.path,
                         mark.line + 1 if mark else None, mark.column + 1 if mark else None)

    # -- shapes
    def mapping(self, node, kp, allowed=None, required=()) -> dict[str, tuple]:
        if not isinstance(node, yaml.MappingNode):
            self.fail(node, kp or "top level", f"expected a mapping, found {_describe(node)}")
        if node.tag != _T + "map":
            self.fail(node, kp or "top level", f"unsupported YAML tag {node.tag}")
        out: dict[str, tuple] = {}
        for knode, vnode in node.value:
            if not isinstance(knode, yaml.ScalarNode) or _is_null(knode) or knode.value == "":
                self.fail(knode, kp or "top level", "keys must be plain names")
            key = knode.value
            kkp = _join(kp, key)
            if knode.tag == _T + "merge":
                self.fail(knode, kp or "top level", "merge keys (<<) are not supported")
            if key in out:
                self.fail(knode, kkp, "duplicate key (first given on line "
                          f"{out[key][0].start_mark.line + 1})")
            if allowed is not None and key not in allowed:
                self.fail(knode, kkp, "unknown key (expected one of: "
                          f"{', '.join(allowed)})")
            out[key] = (knode, vnode)
        for key in required:
            if key not in out:
                self.fail(node, _join(kp, key), "missing (required)")
        return out

    def sequence(self, node, kp) -> list:
        if not isinstance(node, yaml.SequenceNode):
            self.fail(node, kp, f"expected a list, found {_describe(node)}")
        if node.tag != _T + "seq":
            self.fail(node, kp, f"unsupported YAML tag {node.tag}")
        return node.value

    def scalar(self, node, kp, expected: str) -> str:
        if not isinstance(node, yaml.ScalarNode):
            self.fail(node, kp, f"expected {expected}, found {_describe(node)}")
        if node.tag not in _SCALAR_TAGS:
            self.fail(node, kp, f"unsupported YAML tag {node.tag}")
        return node.value

    def text(self, node, kp, expected="a name") -> str:
        value = self.scalar(node, kp, expected)
        if _is_null(node) or not value.strip():
            self.fail(node, kp, f"expected {expected}, found nothing")
        return value

    def choice(self, node, kp, options, what) -> str:
        value = self.text(node, kp, f"a {what}")
        if value not in options:
            self.fail(node, kp, f"unknown {what} '{value}' "
                      f"(expected one of: {', '.join(options)})")
        return value

    def number(self, node, kp, *, positive=False, at_most: float | None = None) -> float:
        raw = self.scalar(node, kp, "a number")
        if node.tag == _INT:
            try:
                value = float(_CONSTRUCT.construct_yaml_int(node))
            except OverflowError:  # more than ~308 digits: no float holds it
                value = math.inf
        elif node.tag == _FLOAT:
            value = _CONSTRUCT.construct_yaml_float(node)
        elif node.tag == _STR and _NUMBER.fullmatch(raw.strip()):
            value = float(raw)
        else:
            self.fail(node, kp, f"expected a number, found {_describe(node)}")
        if not math.isfinite(value):
            self.fail(node, kp, f"expected a finite number, found {_describe(node)}")
        if value < 0 or (positive and value == 0):
            self.fail(node, kp, f"must be {'above zero' if positive else 'zero or more'}, "
                      f"found {raw}")
        if at_most is not None and value > at_most:
            self.fail(node, kp, f"{raw} is out of range (at most {at_most:g})")
        return value

    def integer(self, node, kp, low: int, high: int, what: str, fmt=_hex) -> int:
        self.scalar(node, kp, "a whole number")
        if node.tag != _INT:
            self.fail(node, kp, f"expected a whole number, found {_describe(node)}")
        value = _CONSTRUCT.construct_yaml_int(node)
        if not low <= value <= high:
            self.fail(node, kp, f"{fmt(value) if value >= 0 else value} is out of the "
                      f"{what} range {fmt(low)}-{fmt(high)}")
        return value

    def address7(self, node, kp) -> int:
        return self.integer(node, kp, 0, MAX_7BIT, "7-bit address")

    def names(self, node, kp) -> list[tuple[str, yaml.Node]]:
        """A name or a list of names (at least one, no repeats) with their nodes."""
        if isinstance(node, yaml.SequenceNode):
            items = [(self.text(n, f"{kp}[{i}]"), n)
                     for i, n in enumerate(self.sequence(node, kp))]
        else:
            items = [(self.text(node, kp, "a name or a list of names"), node)]
        if not items:
            self.fail(node, kp, "expected at least one name, found an empty list")
        seen: set[str] = set()
        for i, (name, n) in enumerate(items):
            if name in seen:
                self.fail(n, f"{kp}[{i}]", f"'{name}' is listed twice")
            seen.add(name)
        return items

    # -- sections
    def config(self, root, digest: str) -> Config:
        top = self.mapping(root, "", ("version", "rails", "defaults", "buses", "traces",
                                      "parts", "waivers"), required=("version",))
        self.version(top["version"][1])
        sections = {k: v for k, (_, v) in top.items() if not _is_null(v)}
        return Config(
            version=CONFIG_VERSION,
            rails=self.rails(sections["rails"]) if "rails" in sections else {},
            defaults=self.defaults(sections["defaults"]) if "defaults" in sections
            else Defaults(),
            buses=self.buses(sections["buses"]) if "buses" in sections else (),
            traces=self.traces(sections["traces"]) if "traces" in sections else {},
            parts=tuple(self.part(n, f"parts[{i}]") for i, n in
                        enumerate(self.sequence(sections["parts"], "parts")))
            if "parts" in sections else (),
            waivers=tuple(self.waiver(n, f"waivers[{i}]") for i, n in
                          enumerate(self.sequence(sections["waivers"], "waivers")))
            if "waivers" in sections else (),
            path=self.path, sha256=digest)

    def version(self, node) -> None:
        if isinstance(node, yaml.ScalarNode) and node.tag == _INT \
                and _CONSTRUCT.construct_yaml_int(node) == CONFIG_VERSION:
            return
        self.fail(node, "version", f"this netaudit reads version {CONFIG_VERSION} files, "
                  f"found {_describe(node)}")

    def rails(self, node) -> dict[str, float]:
        return {net: self.number(v, _join("rails", net), at_most=MAX_VOLTS)
                for net, (_, v) in self.mapping(node, "rails").items()}

    def defaults(self, node) -> Defaults:
        m = self.mapping(node, "defaults", ("mode", "pin_capacitance_pf", "trace_pf_per_mm"))
        d = Defaults()
        return Defaults(
            mode=self.choice(m["mode"][1], "defaults.mode", MODES, "mode")
            if "mode" in m else d.mode,
            pin_capacitance_f=self.number(m["pin_capacitance_pf"][1],
                                          "defaults.pin_capacitance_pf", at_most=MAX_PF) * PF
            if "pin_capacitance_pf" in m else d.pin_capacitance_f,
            trace_f_per_m=self.number(m["trace_pf_per_mm"][1],
                                      "defaults.trace_pf_per_mm", at_most=MAX_PF_PER_MM) * PF / MM
            if "trace_pf_per_mm" in m else d.trace_f_per_m)

    def buses(self, node) -> tuple[BusConfig, ...]:
        out: list[BusConfig] = []
        names: dict[str, int] = {}
        nets: dict[str, str] = {}
        for i, item in enumerate(self.sequence(node, "buses")):
            kp = f"buses[{i}]"
            m = self.mapping(item, kp, ("name", "sda", "scl", "mode", "offboard_pullup",
                                        "extra_capacitance_pf"), ("name", "sda", "scl"))
            name = self.text(m["name"][1], f"{kp}.name")
            if name in names:
                self.fail(m["name"][1], f"{kp}.name", f"bus name '{name}' is already used "
                          f"by buses[{names[name]}]")
            names[name] = i
            lines = {}
            for signal in ("sda", "scl"):
                lkp = f"{kp}.{signal}"
                lines[signal] = self.names(m[signal][1], lkp)
                for net, n in lines[signal]:
                    if net in nets:
                        self.fail(n, lkp, f"net '{net}' is already given as {nets[net]}")
                    nets[net] = lkp
            pullup = None
            if "offboard_pullup" in m:
                pullup = self.offboard(m["offboard_pullup"][1], f"{kp}.offboard_pullup")
            out.append(BusConfig(
                name=name, sda=tuple(n for n, _ in lines["sda"]),
                scl=tuple(n for n, _ in lines["scl"]),
                mode=self.choice(m["mode"][1], f"{kp}.mode", MODES, "mode")
                if "mode" in m else None,
                offboard_pullup=pullup,
                extra_capacitance_f=self.number(m["extra_capacitance_pf"][1],
                                                f"{kp}.extra_capacitance_pf", at_most=MAX_PF) * PF
                if "extra_capacitance_pf" in m else 0.0,
                line=item.start_mark.line + 1, source=self.path))
        return tuple(out)

    def offboard(self, node, kp) -> OffboardPullup:
        m = self.mapping(node, kp, ("ohms", "rail"), ("ohms", "rail"))
        return OffboardPullup(ohms=self.ohms(m["ohms"][1], f"{kp}.ohms"),
                              rail=self.text(m["rail"][1], f"{kp}.rail", "a rail net name"))

    def ohms(self, node, kp) -> float:
        """A number, or an engineer's value such as ``2k2`` or ``4.7k`` (via netaudit.units)."""
        raw = self.scalar(node, kp, "a resistance")
        if node.tag != _STR or _NUMBER.fullmatch(raw.strip()):
            return self.number(node, kp, positive=True, at_most=MAX_OHMS)
        value = None
        try:
            from ..units import parse_value  # lazy: units.py is optional at import time
        except ImportError:
            parse_value = None
        if parse_value is not None:
            value = parse_value(raw, "ohm")
        if value is None or not math.isfinite(value):
            self.fail(node, kp, f"cannot read '{raw}' as a resistance (write e.g. 2200 or 2k2)")
        if value <= 0:
            self.fail(node, kp, f"must be above zero, found {raw}")
        if value > MAX_OHMS:
            self.fail(node, kp, f"{raw} is out of range (at most {MAX_OHMS:g})")
        return float(value)

    def traces(self, node) -> dict[str, TraceConfig]:
        out = {}
        for net, (_, v) in self.mapping(node, "traces").items():
            kp = _join("traces", net)
            m = self.mapping(v, kp, ("length_mm", "capacitance_pf"))
            if len(m) != 1:
                self.fail(v, kp, "give exactly one of length_mm or capacitance_pf")
            if "length_mm" in m:
                out[net] = TraceConfig(length_m=self.number(m["length_mm"][1], f"{kp}.length_mm",
                                                            at_most=MAX_MM) * MM)
            else:
                out[net] = TraceConfig(capacitance_f=self.number(m["capacitance_pf"][1],
                                                                 f"{kp}.capacitance_pf",
                                                                 at_most=MAX_PF) * PF)
        return out

    def part(self, node, kp) -> PartRule:
        m = self.mapping(node, kp, ("match", "role", "address", "io_supply_pin", "max_mode",
                                    "tolerant_volts", "pin_capacitance_pf"), ("match",))
        if len(m) == 1:
            self.fail(node, kp, "says nothing about the part: give at least one of role, "
                      "address, io_supply_pin, max_mode, tolerant_volts, pin_capacitance_pf")
        mm = self.mapping(m["match"][1], f"{kp}.match", ("ref", "value", "lib_part"))
        if not mm:
            self.fail(m["match"][1], f"{kp}.match", "give at least one of ref, value, lib_part")
        match = PartMatch(**{k: self.text(v, f"{kp}.match.{k}", "a pattern")
                             for k, (_, v) in mm.items()})
        get = lambda key: m[key][1] if key in m else None  # noqa: E731
        return PartRule(
            match=match,
            role=self.choice(get("role"), f"{kp}.role", ROLES, "role") if get("role") else None,
            address=self.address(get("address"), f"{kp}.address") if get("address") else None,
            io_supply_pin=self.text(get("io_supply_pin"), f"{kp}.io_supply_pin", "a pin name")
            if get("io_supply_pin") else None,
            max_mode=self.choice(get("max_mode"), f"{kp}.max_mode", MODES, "mode")
            if get("max_mode") else None,
            tolerant_volts=self.number(get("tolerant_volts"), f"{kp}.tolerant_volts",
                                       positive=True, at_most=MAX_VOLTS) if get("tolerant_volts") else None,
            pin_capacitance_f=self.number(get("pin_capacitance_pf"),
                                          f"{kp}.pin_capacitance_pf", at_most=MAX_PF) * PF
            if get("pin_capacitance_pf") else None,
            line=node.start_mark.line + 1, source=self.path)

    def address(self, node, kp) -> Address:
        if not isinstance(node, yaml.MappingNode):
            if isinstance(node, yaml.ScalarNode) and node.tag == _INT:
                value = _CONSTRUCT.construct_yaml_int(node)
                if MAX_7BIT < value <= MAX_10BIT:
                    self.fail(node, kp, f"{_hex(value)} is out of the 7-bit address range "
                              "0x00-0x7F (write a 10-bit address as {ten_bit: 0x...})")
            return FixedAddress(self.address7(node, kp))
        keys = {k.value for k, _ in node.value if isinstance(k, yaml.ScalarNode)}
        if "ten_bit" in keys:
            m = self.mapping(node, kp, ("ten_bit",), ("ten_bit",))
            return FixedAddress(self.integer(m["ten_bit"][1], f"{kp}.ten_bit", 0, MAX_10BIT,
                                             "10-bit address"), ten_bit=True)
        if keys & {"base", "pins"}:
            return self.pin_bits(node, kp)
        if keys & {"pin", "map"}:
            return self.pin_tie(node, kp)
        self.fail(node, kp, "expected a number, {base:, pins:}, {pin:, map:} or {ten_bit:}")

    def pin_bits(self, node, kp) -> PinBitsAddress:
        m = self.mapping(node, kp, ("base", "pins"), ("base", "pins"))
        base = self.address7(m["base"][1], f"{kp}.base")
        pins: dict[str, int] = {}
        bits: dict[int, str] = {}
        for pin, (_, v) in self.mapping(m["pins"][1], f"{kp}.pins").items():
            pkp = _join(f"{kp}.pins", pin)
            bit = self.integer(v, pkp, 0, 6, "7-bit address bit", fmt=str)
            if bit in bits:
                self.fail(v, pkp, f"bit {bit} is already set by pin {bits[bit]}")
            if base & (1 << bit):
                self.fail(v, pkp, f"base {_hex(base)} already has bit {bit} set")
            pins[pin], bits[bit] = bit, pin
        if not pins:
            self.fail(m["pins"][1], f"{kp}.pins", "give at least one pin")
        return PinBitsAddress(base=base, pins=pins)

    def pin_tie(self, node, kp) -> PinTieAddress:
        m = self.mapping(node, kp, ("pin", "map"), ("pin", "map"))
        pin = self.text(m["pin"][1], f"{kp}.pin", "a pin name")
        table = self.mapping(m["map"][1], f"{kp}.map", PIN_TIES)
        if not table:
            self.fail(m["map"][1], f"{kp}.map", "give at least one of GND, VDD, SDA, SCL")
        return PinTieAddress(pin=pin, by_tie={tie: self.address7(v, f"{kp}.map.{tie}")
                                              for tie, (_, v) in table.items()})

    def waiver(self, node, kp) -> Waiver:
        m = self.mapping(node, kp, ("rule", "refs", "nets", "bus", "reason"),
                         ("rule", "reason"))
        rule = self.text(m["rule"][1], f"{kp}.rule", "a rule id")
        if rule not in RULE_IDS:
            self.fail(m["rule"][1], f"{kp}.rule", f"unknown rule '{rule}' "
                      "(`netaudit rules` lists them)")
        reason = self.text(m["reason"][1], f"{kp}.reason", "the reason for the waiver")
        pick = lambda key: tuple(n for n, _ in self.names(m[key][1], f"{kp}.{key}")) \
            if key in m else ()  # noqa: E731
        return Waiver(rule=rule, reason=reason.strip(), refs=pick("refs"), nets=pick("nets"),
                      bus=self.text(m["bus"][1], f"{kp}.bus", "a bus name")
                      if "bus" in m else None,
                      line=node.start_mark.line + 1, source=self.path)
