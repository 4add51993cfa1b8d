"""The largest numbers netaudit.yaml accepts are the ones README.md gives its users.

The README's table of limits is read here and each setting it names is tried at its limit
(accepted) and just above it (refused at its line). The limits themselves are far beyond
any board and chosen to keep the line budget finite: common practice, no source.
"""

from __future__ import annotations

import re

import pytest

from conftest import REPO_ROOT
from netaudit.config import parse_config
from netaudit.errors import InputError

BUS = "buses:\n  - name: B\n    sda: /SDA\n    scl: /SCL\n"
# setting as README names it -> (netaudit.yaml with {v} for the number, line of the number)
SNIPPETS = {
    "rails": ("version: 1\nrails:\n  +3V3: {v}\n", 3),
    "tolerant_volts": ("version: 1\nparts:\n  - match: {{ref: U1}}\n    tolerant_volts: {v}\n", 4),
    "pin_capacitance_pf": ("version: 1\ndefaults:\n  pin_capacitance_pf: {v}\n", 3),
    "extra_capacitance_pf": ("version: 1\n" + BUS + "    extra_capacitance_pf: {v}\n", 6),
    "capacitance_pf": ("version: 1\ntraces:\n  /SDA: {{capacitance_pf: {v}}}\n", 3),
    "trace_pf_per_mm": ("version: 1\ndefaults:\n  trace_pf_per_mm: {v}\n", 3),
    "length_mm": ("version: 1\ntraces:\n  /SDA: {{length_mm: {v}}}\n", 3),
    "offboard_pullup.ohms": ("version: 1\n" + BUS + "    offboard_pullup: {{ohms: {v}, rail: +3V3}}\n", 6),
}


def readme_limits() -> dict[str, float]:
    """Setting -> largest value, from the table under README's netaudit.yaml section."""
    text = (REPO_ROOT / "README.md").read_text(encoding="utf-8")
    start = text.index("| setting | at most |")
    out = {}
    for row in text[start:].splitlines()[2:]:
        if not row.startswith("|"):
            break
        setting, limit = [c.strip() for c in row.strip("|").split("|")]
        for name in re.findall(r"`([^`]+)`", setting):
            out[name] = float(limit.split()[0])
    return out


def test_readme_gives_a_limit_for_every_bounded_setting():
    assert set(readme_limits()) == set(SNIPPETS)


@pytest.mark.parametrize("name", sorted(SNIPPETS))
def test_a_setting_at_its_readme_limit_is_accepted(name):
    template, _line = SNIPPETS[name]
    parse_config(template.format(v=f"{readme_limits()[name]:g}"))


@pytest.mark.parametrize("name", sorted(SNIPPETS))
def test_a_setting_above_its_readme_limit_is_refused_at_its_line(name):
    template, line = SNIPPETS[name]
    with pytest.raises(InputError) as info:
        parse_config(template.format(v=f"{readme_limits()[name] * 1.001:g}"))
    assert "out of range" in str(info.value)
    assert info.value.line == line
