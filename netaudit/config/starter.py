"""The starter netaudit.yaml that ``netaudit init`` writes from what it found in a design."""

from __future__ import annotations

import math

import yaml

from ..terminal import ACTIVE
from .model import CONFIG_VERSION, MODES

def starter_yaml(rails: dict[str, float | None],
                 buses: list[tuple[str, list[str], list[str]]], mode: str) -> str:
    """A commented netaudit.yaml from what was detected; ``parse_config`` accepts it.

    ``rails`` maps net -> volts (None: unknown, written as a commented line to fill in);
    ``buses`` holds (name, SDA nets, SCL nets); a bus missing a line is written commented.
    """
    if mode not in MODES:
        raise ValueError(f"unknown mode {mode!r}")
    if len({name for name, _, _ in buses}) != len(buses):
        raise ValueError("bus names must be unique")
    out = ["# netaudit settings (format version 1), written by `netaudit init` from what",
           "# it found in the design. Edit freely; every key is explained beside it.",
           f"version: {CONFIG_VERSION}", "",
           "# Supply nets and their voltages. A value here wins over the voltage netaudit",
           "# reads from a net's name.",
           "rails:"]
    for net in sorted(rails):
        volts = rails[net]
        if volts is None or not math.isfinite(volts) or volts < 0:
            out.append(f"  # {_yq(net)}:      # voltage unknown: uncomment and write "
                       "its voltage in volts")
        else:
            out.append(f"  {_yq(net)}: {float(volts)!r}")
    if not rails:
        out.append("  # +3V3: 3.3")
    out += ["", "defaults:",
            f"  mode: {mode}                 # {' | '.join(MODES)}",
            "  pin_capacitance_pf: 10     # per device pin when nothing better is known",
            "  trace_pf_per_mm: 0.1       # pre-layout estimate for a net with no routed length",
            "", "# The buses netaudit found. Rename them, set a mode per bus, or declare",
            "# pull-ups and capacitance that live on another board.",
            "buses:"]
    for name, sda, scl in buses:
        # A net with no name (never in a KiCad export, but a hand-made file can hold one)
        # cannot be named in the settings: the line counts as not found.
        sda, scl = [n for n in sda if n], [n for n in scl if n]
        entry = [f"- name: {_yq(name, flow=True)}", f"  sda: {_ynets(sda)}",
                 f"  scl: {_ynets(scl)}",
                 f"  # mode: {mode}",
                 "  # offboard_pullup: {ohms: 4700, rail: +3V3}",
                 "  # extra_capacitance_pf: 0    # cable, connector, mating board"]
        if sda and scl:
            out += ["  " + line for line in entry]
        else:
            missing = "clock (SCL)" if sda else "data (SDA)"
            out.append(f"  # no {missing} line was found for this bus: name it and remove "
                       "the '#'s")
            out += ["  # " + line for line in entry[:3]]
    if not buses:
        out.append("  # - {name: I2C_MAIN, sda: /SDA, scl: /SCL}")
    out += ["", "# Per net: routed or estimated length, or a known capacitance.",
            "traces:", "  # /SDA: {length_mm: 120}", "  # /SCL: {capacitance_pf: 14}",
            "", "# Teach netaudit a part it does not know (match by ref, value or lib_part).",
            "parts:",
            "  # - match: {value: \"SENSOR-*\"}",
            "  #   role: target            # controller | target | mux | translator | repeater",
            "  #   address: 0x29           # or {base: 0x50, pins: {A0: 0, A1: 1}},",
            "  #                           # or {pin: ADDR, map: {GND: 0x48, VDD: 0x49}},",
            "  #                           # or {ten_bit: 0x2A5}",
            "", "# Accepted findings stay in the report, marked, with the reason.",
            "waivers:",
            "  # - rule: pullup-parallel",
            "  #   refs: [R12, R13]",
            "  #   reason: \"why this is acceptable\"", ""]
    return "\n".join(out)


def _yq(text: str, flow: bool = False) -> str:
    """``text`` as a YAML scalar: plain when it reads back unchanged, else double-quoted."""
    probes = [f"{text}: 1", f"k: {text}"] + ([f"k: [{text}]", f"{{k: {text}}}"] if flow else [])
    try:
        plain = all(yaml.safe_load(p) in ({text: 1}, {"k": text}, {"k": [text]})
                    for p in probes)
    except yaml.YAMLError:
        plain = False
    if plain and text.strip() == text and text and not ACTIVE.search(text):
        return text
    return _double_quoted(text)


def _double_quoted(text: str) -> str:
    """``text`` as a YAML double-quoted scalar that reads back unchanged and shows plainly.

    Escaped: the quote and the backslash; every character YAML does not allow raw (C0 and
    C1 controls, DEL, U+FFFE, U+FFFF: YAML 1.2 section 5.1); those a YAML reader folds as line
    breaks (NEL, LS, PS: section 5.4) or skips (the byte-order mark); and the bidirectional
    controls, which would reorder the text on a reviewer's screen (netaudit.terminal.ACTIVE).
    """
    out = []
    for ch in text:
        code = ord(ch)
        if ch in '"\\':
            out.append("\\" + ch)
        elif ACTIVE.match(ch) or code in (0xFFFE, 0xFFFF) or 0xD800 <= code <= 0xDFFF:
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _ynets(nets: list[str]) -> str:
    if len(nets) == 1:
        return _yq(nets[0], flow=True)
    return "[" + ", ".join(_yq(n, flow=True) for n in nets) + "]"
