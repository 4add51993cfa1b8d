"""Small hand-made designs for rule tests (invented content, not real boards).

    d = build(
        [ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
         res("R1", "4k7"), res("R2", "4k7")],
        {"/SDA": ["U1.SDA", "R1.1"], "/SCL": ["U1.SCL", "R2.1"],
         "+3V3": ["U1.VDD", "R1.2", "R2.2"], "GND": ["U1.GND"]},
    )

A node is ``REF.PIN`` where PIN is a pin number or a pin name of that part.
"""

from __future__ import annotations

from netaudit.model import Design, Net, Node, Part, Pin

POWER_NAMES = {"VDD", "VCC", "VDDIO", "VIO", "VL", "VREF1", "VREF2", "VCCA", "VCCB", "GND", "VSS", "VS"}


def ic(ref: str, value: str, pin_names: list[str], *, pins_total: int = 0, lib: str = "Handmade",
       lib_part: str | None = None, sheet: str = "/", sheet_file: str = "", dnp: bool = False,
       fields: tuple = ()) -> Part:
    pins = [Pin(str(i + 1), name, "power_in" if name.upper() in POWER_NAMES else "bidirectional")
            for i, name in enumerate(pin_names)]
    for i in range(len(pins), pins_total):
        pins.append(Pin(str(i + 1), f"NC{i + 1}", "no_connect"))
    return Part(ref, value, lib=lib, lib_part=lib_part or value, fields=fields, dnp=dnp,
                sheet_path=sheet, sheet_file=sheet_file, pins=tuple(pins))


def res(ref: str, value: str, *, dnp: bool = False, sheet: str = "/", sheet_file: str = "",
        fields: tuple = ()) -> Part:
    return Part(ref, value, lib="Device", lib_part="R", description="Resistor", fields=fields,
                dnp=dnp, sheet_path=sheet, sheet_file=sheet_file,
                pins=(Pin("1", "", "passive"), Pin("2", "", "passive")))


def cap(ref: str, value: str) -> Part:
    return Part(ref, value, lib="Device", lib_part="C", pins=(Pin("1", "", "passive"), Pin("2", "", "passive")))


def conn(ref: str, n: int) -> Part:
    return Part(ref, f"Conn_01x{n:02d}", lib="Connector", lib_part=f"Conn_01x{n:02d}",
                pins=tuple(Pin(str(i + 1), f"Pin_{i + 1}", "passive") for i in range(n)))


def fet(ref: str) -> Part:
    return Part(ref, "BSS138", lib="Transistor_FET", lib_part="BSS138",
                pins=(Pin("1", "G", "input"), Pin("2", "S", "passive"), Pin("3", "D", "passive")))


def build(parts: list[Part], nets: dict[str, list[str]], *, title: str = "handmade") -> Design:
    by_ref = {p.ref: p for p in parts}
    out = []
    for name, nodes in nets.items():
        built = []
        for node in nodes:
            ref, pin = node.split(".", 1)
            part = by_ref[ref]
            match = next((p for p in part.pins if p.number == pin), None) or \
                next((p for p in part.pins if p.name == pin), None)
            if match is None:
                raise KeyError(f"{node}: no such pin")
            built.append(Node(ref, match.number, match.name, match.type))
        out.append(Net(name, tuple(built)))
    return Design(path=f"{title}.net", format="kicad-netlist", title=title, parts=tuple(parts), nets=tuple(out))


def markup_design(sda: str, value: str, *, scl: str = "/SCL", title: str = "hostile") -> Design:
    """Controller U1 and a target U2 whose value is ``value`` on the nets ``sda`` and ``scl``,
    one 4.7 kΩ pull-up on SDA to +3V3: the names carry whatever a report must escape."""
    return build([ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
                  ic("U2", value, ["SDA", "SCL", "VDD", "GND"]), res("R1", "4k7")],
                 {sda: ["U1.SDA", "U2.SDA", "R1.1"], scl: ["U1.SCL", "U2.SCL"],
                  "+3V3": ["U1.VDD", "U2.VDD", "R1.2"], "GND": ["U1.GND", "U2.GND"]}, title=title)
