"""The terminal report: each line's bus capacitance with where it comes from.

Hand-made design (invented): controller U1 and target U2, whose pins count 10 pF each when
nothing better is known (Ci max per I/O pin, UM10204 Rev. 6 Table 9); a 100 pF capacitor
from SDA to GND; 14 pF of routing on SDA and 30 pF of cable on the bus from netaudit.yaml.
"""

from __future__ import annotations

import re

from handmade import build, cap, ic, res

from netaudit.audit import audit_design
from netaudit.config import parse_config
from netaudit.report import text

SETTINGS = """version: 1
buses:
  - name: MAIN
    sda: /SDA
    scl: /SCL
    extra_capacitance_pf: 30
traces:
  /SDA: {capacitance_pf: 14}
"""


def _audit():
    d = build([ic("U1", "MCU", ["SDA", "SCL", "VDD", "GND"], pins_total=48),
               ic("U2", "SENSOR", ["SDA", "SCL", "VDD", "GND"]),
               res("R1", "4k7"), res("R2", "4k7"), cap("C1", "100p")],
              {"/SDA": ["U1.SDA", "U2.SDA", "R1.1", "C1.1"], "/SCL": ["U1.SCL", "U2.SCL", "R2.1"],
               "+3V3": ["U1.VDD", "U2.VDD", "R1.2", "R2.2"], "GND": ["U1.GND", "U2.GND", "C1.2"]})
    return audit_design(d, parse_config(SETTINGS))


def _cb_rows(report: str) -> list[str]:
    return [row.strip() for row in report.splitlines() if row.strip().startswith("Cb ")]


def test_each_line_shows_its_capacitance_as_the_sum_of_its_sources():
    # SDA: 2 × 10 pF pins + 14 pF routing + 100 pF capacitor + 30 pF cable = 164 pF;
    # SCL: 2 × 10 pF pins + 30 pF cable = 50 pF.
    assert _cb_rows(text.render(_audit())) == [
        "Cb 164 pF = pins 20 pF + routing 14 pF + capacitors 100 pF + extra 30 pF",
        "Cb 50 pF = pins 20 pF + extra 30 pF",
    ]


def test_the_terms_shown_add_up_to_the_total_shown():
    for row in _cb_rows(text.render(_audit())):
        total, terms = row.split(" = ")
        values = [float(v) for v in re.findall(r"([\d.]+) pF", terms)]
        assert sum(values) == float(re.search(r"([\d.]+) pF", total).group(1)), row


def test_the_bus_inventory_shows_the_same_breakdown():
    result = _audit()
    assert _cb_rows(text.render_inventory(result)) == _cb_rows(text.render(result))


def test_pull_up_window_and_rise_time_follow_on_their_own_row():
    rows = [row.strip() for row in text.render(_audit()).splitlines()]
    at = rows.index("Cb 164 pF = pins 20 pF + routing 14 pF + capacitors 100 pF + extra 30 pF")
    assert rows[at + 1].startswith("Rp 4.7 kΩ (window ") and "allowed" in rows[at + 1]
