"""Plain-English sentences for findings, built from each finding's data.

The one place findings become words; every reporter uses it so the terminal, JSON,
HTML and SARIF say the same thing.
"""

from __future__ import annotations

from typing import Callable

from ..results import Finding
from ..units import format_si

_LINE = {"sda": "SDA", "scl": "SCL", None: "bus"}


def _ohms(v) -> str:
    return "unknown" if v is None else format_si(v, "Ω")


def _where(f: Finding) -> str:
    if f.segment and f.line:
        return f"{_LINE[f.line]} of {f.segment}"
    if f.segment:
        return f.segment
    return ", ".join(f.nets[:3]) or "the design"


def _refs(f: Finding) -> str:
    return ", ".join(f.refs)


_PHRASES: dict[str, Callable[[Finding], str]] = {
    "bus-line-unpaired": lambda f: f"{_LINE[f.line]} line {', '.join(f.nets)} has no "
                                   f"{'SCL' if f.line == 'sda' else 'SDA'} partner",
    "bus-lines-swapped": lambda f: f"{_refs(f)} pin {f.data['pin']} ({f.data['pin_function']}) is on the "
                                   f"{_LINE[f.data['on_line']]} line of {f.segment}",
    "bus-pin-unconnected": lambda f: f"{_refs(f)} pin {f.data['pin']} ({f.data['pin_function']}) is not connected",
    "bus-lone-device": lambda f: f"{_refs(f)} is the only device on {f.segment}",
    "pullup-missing": lambda f: f"no fitted pull-up on {_where(f)}"
                                + (f" (not fitted: {', '.join(f.data['not_fitted'])})" if f.data.get("not_fitted") else ""),
    "pullup-duplicated": lambda f: f"{_refs(f)} on {_where(f)} are one pull-up repeated by {len(f.data['sheet_paths'])} "
                                   f"instances of {f.data['sheet_file']} (together {_ohms(f.data['equivalent_ohms'])})",
    "pullup-parallel": lambda f: f"{len(f.data['pullups'])} pull-ups in parallel on {_where(f)}: "
                                 f"{', '.join(sorted(f.data['pullups']))}, together {_ohms(f.data['equivalent_ohms'])}",
    "pullup-rail-mismatch": lambda f: f"pull-ups of {f.segment} go to different rails: {', '.join(f.data['rails'])}",
    "pullup-to-signal": lambda f: f"pull-up {_refs(f)} on {_where(f)} goes to {f.data['target_net']}, not a supply rail",
    "pullup-too-strong": lambda f: f"pull-up on {_where(f)} is {_ohms(f.data['rp_ohms'])}, below Rp(min) "
                                   f"{_ohms(f.data['rp_min_ohms'])}"
                                   + (f"; try {_ohms(f.data['pick_ohms'])}" if f.data.get("pick_ohms") else ""),
    "pullup-too-weak": lambda f: (f"rise time on {_where(f)} is {format_si(f.data['rise_time_s'], 's')}, over the "
                                  f"{format_si(f.data['rise_time_max_s'], 's')} limit"
                                  if f.data.get("rise_time_s") is not None else
                                  f"{_where(f)} never reaches a valid HIGH level")
                                 + (f"; try {_ohms(f.data['pick_ohms'])}" if f.data.get("pick_ohms") else ""),
    "capacitance-over-limit": lambda f: f"{_where(f)} carries about {format_si(f.data['capacitance_farads'], 'F')}, "
                                        f"over the {format_si(f.data['capacitance_max_farads'], 'F')} limit",
    "low-level-margin": lambda f: f"series {_refs(f)} ({_ohms(f.data['series_ohms'])}) lifts LOW to "
                                  f"{f.data['low_level_v']:.2f} V on {_where(f)}, above {f.data['limit_v']:.2f} V",
    "address-collision": lambda f: f"{' and '.join(f.refs)} both answer {_addrs(f)} on {f.data['domain']}",
    "mux-address-overlap": lambda f: f"{_refs(f)} answer {_addrs(f)}: {_overlap(f)}",
    "address-reserved": lambda f: f"{_refs(f)} is at {f.data['address']}, reserved"
                                  f"{' on SMBus' if f.data['address'] in _SMBUS_ONLY else ''} "
                                  f"({f.data['meaning']})",
    "address-strap-floating": lambda f: f"{_refs(f)} address pin {f.data['pin']} is not connected"
                                        + (f"; it reads low, giving {f.data['address']}" if f.data.get("reads_low")
                                           else f"; the address may be any of {', '.join(f.data['possible_addresses'])}"
                                           if f.data.get("possible_addresses") else ""),
    "address-unknown": lambda f: f"address of {_refs(f)} ({f.data['value']}) is unknown: "
                                 + _UNKNOWN.get(f.data["reason"], f.data["reason"] or "")
                                 + "".join(f"; {p['pin']}: {p['why']}" for p in f.data.get("pins", [])),
    "speed-unsupported": lambda f: f"{_refs(f)} runs at most {format_si(f.data['max_hz'], 'Hz')} "
                                   f"({f.data['max_mode']}), the bus runs {format_si(f.data['bus_hz'], 'Hz')} "
                                   f"({f.data['bus_mode']})",
}

_SMBUS_ONLY = {"0x08", "0x0C", "0x28", "0x37", "0x61"}
_UNKNOWN = {
    "no-entry": "not in the catalog, netaudit.yaml or its I2C_ADDR field",
    "pin-missing": "the symbol lacks an address pin the part has",
    "strap-unresolved": "its address pins cannot be read",
}


def _addrs(f: Finding) -> str:
    a = f.data.get("addresses") or []
    numbers = [int(x, 16) for x in a]
    if len(a) > 2 and numbers == list(range(numbers[0], numbers[0] + len(a))):
        return f"{a[0]}-{a[-1]}"
    return ", ".join(a) or "one address"


def _overlap(f: Finding) -> str:
    where = f"channel {f.data['channel']} of {f.data['mux']}" if f.data.get("mux") else "a mux channel"
    if f.data.get("with_mux"):
        return f"a device on {where} at the address of multiplexer {', '.join(f.data['with_mux'])}"
    return f"a device on {where} and a device upstream of the multiplexer"


def phrase(f: Finding) -> str:
    """One sentence for a finding. Rules without a phrase fall back to a generic one."""
    make = _PHRASES.get(f.rule)
    if make is not None:
        try:
            return make(f)
        except (KeyError, TypeError):
            pass
    parts = [f.rule.replace("-", " ")]
    if f.refs:
        parts.append(_refs(f))
    if f.segment or f.nets:
        parts.append(f"on {_where(f)}")
    return " ".join(parts)


def register(rule_id: str, make: Callable[[Finding], str]) -> None:
    """Let a rule module add its own phrase."""
    _PHRASES[rule_id] = make


# -- voltage domains (checks/voltage.py) ---------------------------------------------

def _volts(v) -> str:
    return "an unknown voltage" if v is None else f"{v:g} V"


def _lines_of(f: Finding) -> str:
    """Where a device finding is, with its verb: one line, or both lines of its segment."""
    if f.line is None and len(f.data.get("by_line", {})) == 2:
        return f"SDA and SCL of {f.segment} are"
    return f"{_where(f)} is"


def _rail_unknown(f: Finding) -> str:
    d = f.data
    if d.get("kind") == "device-supply":
        if d["problem"] == "ambiguous":
            pins = ", ".join(f"{p} on {n}" for p, n in d["candidates"])
            return (f"{_refs(f)} has supply pins on rails of different voltage ({pins}); "
                    "name its I/O supply with io_supply_pin")
        if d["problem"] == "config-pin-missing":
            return f"{_refs(f)} has no pin {d['candidates'][0][0]} (its io_supply_pin in netaudit.yaml)"
        return f"no supply pin found on {_refs(f)}; name its I/O supply with io_supply_pin"
    return (f"rail {d['rail']} has no known voltage ({', '.join(d['needed_by'])}); "
            "give it one under rails: in netaudit.yaml")


def _translator(f: Finding) -> str:
    d, ref, problem = f.data, _refs(f), f.data["problem"]
    if problem == "gate-not-on-rail":
        return f"gate of shifter FET {ref} is on {d['gate_net'] or 'no net'}, not on a supply rail"
    if problem == "gate-not-lower-rail":
        return (f"gate of shifter FET {ref} is on {d['gate_rail']} ({_volts(d['gate_volts'])}), not on the "
                f"lower rail ({_volts(d['low_volts'])})")
    if problem == "source-drain-reversed":
        return (f"shifter FET {ref} has its source on the higher side ({_volts(d['source_volts'])}) and its "
                f"drain on the lower ({_volts(d['drain_volts'])}): source and drain are reversed")
    if problem == "side-unpowered":
        return f"side {d['side']} of {ref} has no supply"
    if problem == "side-pullup-rail":
        return (f"side {d['side']} of {ref} is pulled up to {d['pullup_rail']} ({_volts(d['pullup_volts'])}) "
                f"but its supply {d['supply_pin']} is on {d['supply_net']} ({_volts(d['supply_volts'])})")
    if problem == "sides-reversed":
        return (f"{ref} side {d['low_side']} ({d['low_side_pin']}, {_volts(d['low_side_volts'])}) is supplied "
                f"above side {d['high_side']} ({d['high_side_pin']}, {_volts(d['high_side_volts'])}); side "
                f"{d['low_side']} must be the lower")
    return f"{ref} is wired wrongly ({problem})"


_PHRASES.update({
    "rail-overvoltage": lambda f: f"{_lines_of(f)} pulled to {_volts(f.data['pullup_volts'])}, above the "
                                  f"{_volts(f.data['limit_volts'])} that {_refs(f)} tolerates on its "
                                  f"{_volts(f.data['io_volts'])} supply {f.data['io_rail']}",
    "rail-high-level-unmet": lambda f: f"{_lines_of(f)} pulled only to {_volts(f.data['pullup_volts'])}; "
                                       f"{_refs(f)} on its {_volts(f.data['io_volts'])} supply "
                                       f"{f.data['io_rail']} needs {_volts(f.data['vih_min_volts'])} for HIGH"
                                       + (" and reads the idle line as LOW" if f.data.get("reads_as") == "low"
                                          else ""),
    "rail-voltage-unknown": _rail_unknown,
    "translator-wiring": _translator,
})
