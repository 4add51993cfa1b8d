"""Inputs built by hypothesis: netlists (S-expression and XML) with odd names, values and
structure, and netaudit.yaml files of any shape, or of the right shape with numbers at the
ends of what netaudit.yaml accepts.

Used by tests/test_fuzz.py (derandomised: the same examples every run) and scripts/fuzz
(from a seed).
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

from fuzz_inputs import BUS_NAMES, NUMBERS, sx_quote
from hypothesis import strategies as st

from netaudit.config import MAX_MM, MAX_OHMS, MAX_PF, MAX_PF_PER_MM, MAX_VOLTS

# -- hypothesis-built netlists --------------------------------------------------------------

_REF = st.one_of(st.sampled_from(["U1", "U2", "U3", "R1", "R2", "R3", "R4", "Q1", "J1", "C1"]),
                 st.text(max_size=6))
_PIN_NAME = st.one_of(st.sampled_from(["SDA", "SCL", "VDD", "VCC", "GND", "A0", "A1", "ADDR", "SDA/SCL",
                                       "~{INT}", "SDA_{1}", "EN", "", "~", "SCL1", "SDA0"]),
                      st.text(max_size=8))
_PIN_TYPE = st.sampled_from(["bidirectional", "passive", "power_in", "power_out", "input", "output",
                             "open_collector", "no_connect", "", "free"])
_VALUE = st.one_of(st.sampled_from(NUMBERS + ["4k7", "10k", "2k2", "0R", "TCA9548A", "PCA9306", "BSS138",
                                              "TMP102", "24LC256", "MCU", "PCA9615", "LTC4311"]),
                   st.text(max_size=12))
_NET_NAME = st.one_of(st.sampled_from(BUS_NAMES + ["+1e308V", "-3V3", "NaNV", "+0V", "/", ""]),
                      st.text(max_size=12))


@st.composite
def designs(draw):
    parts = []
    for _ in range(draw(st.integers(0, 8))):
        ref = draw(_REF)
        pins = [(draw(st.sampled_from(["1", "2", "3", "4", "5", "A1", ""])), draw(_PIN_NAME), draw(_PIN_TYPE))
                for _ in range(draw(st.integers(0, 5)))]
        lib_part = "R" if ref.startswith("R") and draw(st.booleans()) else draw(_VALUE)
        parts.append((ref, draw(_VALUE), lib_part, pins, draw(st.booleans())))
    refs = [p[0] for p in parts] or ["U1"]
    nets = []
    for _ in range(draw(st.integers(0, 8))):
        nodes = []
        for _ in range(draw(st.integers(0, 5))):
            ref = draw(st.one_of(st.sampled_from(refs), _REF))
            nodes.append((ref, draw(st.sampled_from(["1", "2", "3", "4", "5", "9", ""])), draw(_PIN_NAME),
                          draw(_PIN_TYPE)))
        nets.append((draw(_NET_NAME), nodes))
    title = draw(st.one_of(st.just("generated"), st.text(max_size=20)))
    return title, parts, nets


def sexpr_netlist(title, parts, nets) -> str:
    def q(text: str) -> str:  # a NUL makes any file binary: the byte mutations cover that
        return sx_quote(text.replace("\x00", "?"))

    out = ['(export (version "E")', f"  (design (tool \"Eeschema 9.0.8\") (sheet (number \"1\") (name \"/\")"
           f" (title_block (title {q(title)}) (source \"gen.kicad_sch\"))))", "  (components"]
    for ref, value, lib_part, _pins, dnp in parts:
        out.append(f"    (comp (ref {q(ref)}) (value {q(value)}) (libsource (lib \"Gen\") (part {q(lib_part)}))"
                   + (' (property (name "dnp"))' if dnp else "") + ' (sheetpath (names "/") (tstamps "/")))')
    out.append("  )\n  (libparts")
    for _ref, _value, lib_part, pins, _dnp in parts:
        body = " ".join(f"(pin (num {q(n)}) (name {q(name)}) (type {q(t)}))" for n, name, t in pins)
        out.append(f"    (libpart (lib \"Gen\") (part {q(lib_part)}) (pins {body}))")
    out.append("  )\n  (nets")
    for code, (name, nodes) in enumerate(nets, 1):
        body = " ".join(f"(node (ref {q(r)}) (pin {q(p)}) (pinfunction {q(f)}) (pintype {q(t)}))"
                        for r, p, f, t in nodes)
        out.append(f"    (net (code \"{code}\") (name {q(name)}) {body})")
    return "\n".join(out) + "))\n"


_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def xml_netlist(title, parts, nets) -> str:
    """The netlist as XML; characters XML 1.0 cannot carry become '?' (KiCad cannot store
    them either; the byte mutations cover the broken files they would make)."""
    text = _xml_netlist(title, parts, nets)
    return _NOT_XML.sub("?", text)


def _xml_netlist(title, parts, nets) -> str:
    root = ET.Element("export", version="E")
    design = ET.SubElement(root, "design")
    ET.SubElement(design, "tool").text = "Eeschema 9.0.8"
    sheet = ET.SubElement(design, "sheet", number="1", name="/")
    ET.SubElement(ET.SubElement(sheet, "title_block"), "title").text = title
    comps = ET.SubElement(root, "components")
    libparts = ET.SubElement(root, "libparts")
    for ref, value, lib_part, pins, dnp in parts:
        comp = ET.SubElement(comps, "comp", ref=ref)
        ET.SubElement(comp, "value").text = value
        ET.SubElement(comp, "libsource", lib="Gen", part=lib_part)
        if dnp:
            ET.SubElement(comp, "property", name="dnp")
        libpart = ET.SubElement(libparts, "libpart", lib="Gen", part=lib_part)
        pins_el = ET.SubElement(libpart, "pins")
        for n, name, t in pins:
            ET.SubElement(pins_el, "pin", num=n, name=name, type=t)
    nets_el = ET.SubElement(root, "nets")
    for code, (name, nodes) in enumerate(nets, 1):
        net = ET.SubElement(nets_el, "net", code=str(code), name=name)
        for r, p, f, t in nodes:
            ET.SubElement(net, "node", ref=r, pin=p, pinfunction=f, pintype=t)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"



# -- hypothesis-built netaudit.yaml ---------------------------------------------------------

_NUMBER = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-2 ** 70, 2 ** 70),
                    st.sampled_from([0, 3.3, 5, 1e-12, 1e308, -1]), st.text(max_size=8))
_NAME = st.one_of(st.sampled_from(["/I2C1_SDA", "/I2C1_SCL", "/SOIL_SDA", "/SOIL_SCL", "VDD_SOIL", "+3V3",
                                   "I2C_MAIN", "U1", "R*", "*", "[", ""]), st.text(max_size=10))
_ANY = st.recursive(st.one_of(st.none(), st.booleans(), _NUMBER, _NAME),
                    lambda inner: st.one_of(st.lists(inner, max_size=3),
                                            st.dictionaries(_NAME, inner, max_size=3)), max_leaves=6)
_MODE = st.one_of(st.sampled_from(["standard", "fast", "fast-plus", "smbus", "smbus-400k", "smbus-1m"]), _ANY)


def _maybe(strategy):
    return st.one_of(strategy, _ANY)


_BUS = st.fixed_dictionaries({"name": _maybe(_NAME), "sda": _maybe(st.one_of(_NAME, st.lists(_NAME))),
                              "scl": _maybe(st.one_of(_NAME, st.lists(_NAME)))},
                             optional={"mode": _MODE, "extra_capacitance_pf": _NUMBER,
                                       "offboard_pullup": st.fixed_dictionaries({"ohms": _NUMBER, "rail": _NAME})})
_ADDRESS = st.one_of(st.integers(-5, 0x500), st.fixed_dictionaries({"ten_bit": st.integers(-5, 0x500)}),
                     st.fixed_dictionaries({"base": st.integers(-1, 0x90),
                                            "pins": st.dictionaries(_NAME, st.integers(-1, 9), max_size=3)}),
                     st.fixed_dictionaries({"pin": _NAME, "map": st.dictionaries(
                         st.sampled_from(["GND", "VDD", "SDA", "SCL", "X"]), st.integers(-1, 0x90))}), _ANY)
_PART = st.fixed_dictionaries(
    {"match": _maybe(st.fixed_dictionaries({}, optional={"ref": _NAME, "value": _NAME, "lib_part": _NAME}))},
    optional={"role": _maybe(st.sampled_from(["controller", "target", "mux", "translator", "repeater"])),
              "address": _ADDRESS, "max_mode": _MODE, "tolerant_volts": _NUMBER,
              "io_supply_pin": _NAME, "pin_capacitance_pf": _NUMBER})
_WAIVER = st.fixed_dictionaries(
    {"rule": _maybe(st.sampled_from(["pullup-missing", "pullup-to-signal", "address-unknown"])),
     "reason": _maybe(_NAME)},
    optional={"refs": _maybe(st.lists(_NAME)), "nets": _maybe(st.lists(_NAME)), "bus": _NAME})
SETTINGS = st.fixed_dictionaries(
    {"version": st.one_of(st.just(1), _ANY)},
    optional={"rails": st.one_of(st.dictionaries(_NAME, _NUMBER, max_size=4), _ANY),
              "defaults": st.fixed_dictionaries({}, optional={"mode": _MODE, "pin_capacitance_pf": _NUMBER,
                                                              "trace_pf_per_mm": _NUMBER}),
              "buses": st.lists(_BUS, max_size=3),
              "traces": st.dictionaries(_NAME, st.fixed_dictionaries(
                  {}, optional={"length_mm": _NUMBER, "capacitance_pf": _NUMBER}), max_size=3),
              "parts": st.lists(_PART, max_size=3),
              "waivers": st.lists(_WAIVER, max_size=2),
              "extra": _ANY})


# Settings of the right shape whose numbers run to the ends of what netaudit.yaml accepts
# (netaudit.config's MAX_* limits), and now and then past them.


def _upto(limit: float):
    return st.one_of(st.floats(min_value=0, max_value=limit), st.integers(0, int(limit)),
                     st.sampled_from([0, 5e-324, 1e-300, 1e-12, limit, limit * 1.000001, 1e308]))


def _above_zero(limit: float):
    return st.one_of(st.floats(min_value=1e-300, max_value=limit), st.sampled_from([5e-324, limit]))


_DEMO_NET = st.sampled_from(["/I2C1_SDA", "/I2C1_SCL", "/SOIL_SDA", "/SOIL_SCL", "/ROOF_SDA", "/ROOF_SCL",
                             "VDD_SOIL", "+3V3", "/CO2_PU_EN", "GND", "/NOT_IN_THE_DESIGN"])
_MODES = st.sampled_from(["standard", "fast", "fast-plus", "smbus", "smbus-400k", "smbus-1m"])
_DEMO_BUSES = [("I2C_MAIN", "/I2C1_SDA", "/I2C1_SCL"), ("SOIL", "/SOIL_SDA", "/SOIL_SCL"),
               ("ROOF_LINK", "/ROOF_SDA", "/ROOF_SCL")]
_RULES = ["pullup-missing", "pullup-to-signal", "address-unknown", "capacitance-over-limit",
          "rail-voltage-unknown", "pullup-too-weak"]


@st.composite
def shaped_settings(draw) -> dict:
    doc: dict = {"version": 1}
    if draw(st.booleans()):
        doc["rails"] = draw(st.dictionaries(_DEMO_NET, _upto(MAX_VOLTS), max_size=3))
    doc["defaults"] = draw(st.fixed_dictionaries({}, optional={
        "mode": _MODES, "pin_capacitance_pf": _upto(MAX_PF), "trace_pf_per_mm": _upto(MAX_PF_PER_MM)}))
    doc["buses"] = []
    for name, sda, scl in _DEMO_BUSES:
        if draw(st.booleans()):
            bus = {"name": name, "sda": sda, "scl": scl}
            bus.update(draw(st.fixed_dictionaries({}, optional={
                "mode": _MODES, "extra_capacitance_pf": _upto(MAX_PF),
                "offboard_pullup": st.fixed_dictionaries({"ohms": _above_zero(MAX_OHMS), "rail": _DEMO_NET})})))
            doc["buses"].append(bus)
    doc["traces"] = draw(st.dictionaries(_DEMO_NET, st.one_of(
        st.fixed_dictionaries({"length_mm": _upto(MAX_MM)}), st.fixed_dictionaries({"capacitance_pf": _upto(MAX_PF)})),
        max_size=3))
    doc["parts"] = draw(st.lists(st.fixed_dictionaries(
        {"match": st.fixed_dictionaries({"ref": st.sampled_from(["U1", "U2", "U1?", "U*", "R*", "*"])}),
         "role": st.sampled_from(["controller", "target", "mux", "translator", "repeater"])},
        optional={"address": st.one_of(st.integers(0, 0x7F), st.fixed_dictionaries({"ten_bit": st.integers(0, 0x3FF)})),
                  "max_mode": _MODES, "tolerant_volts": _above_zero(MAX_VOLTS), "pin_capacitance_pf": _upto(MAX_PF),
                  "io_supply_pin": st.sampled_from(["VDD", "VCC", "1", "NOPE"])}), max_size=3))
    doc["waivers"] = draw(st.lists(st.fixed_dictionaries(
        {"rule": st.sampled_from(_RULES), "reason": st.sampled_from(["accepted", "<b>why</b>", "\u202e|`x`|"])},
        optional={"nets": st.lists(_DEMO_NET, min_size=1, max_size=2, unique=True),
                  "refs": st.lists(st.sampled_from(["U1", "R1", "R2", "Q1"]), min_size=1, max_size=2, unique=True)}),
        max_size=2))
    return doc
