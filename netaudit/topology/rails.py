"""Supply rails: which nets are supplies, and their voltage.

Evidence, strongest first: the ``rails:`` section of netaudit.yaml; the ground family
(0 V); the net's name (``+3V3``, ``3V3_SYS``, ``VCC_1V8``, ``P5V0``, ``3.3V``, ``VBUS``);
the name of a power pin on the net (``3V3``). A net with power pins but no readable
voltage is a rail of unknown voltage: never guessed.
"""

from __future__ import annotations

import re
from typing import Mapping

from ..model import Design, Net
from ..results import Rail
from .names import net_base, net_signal, pin_signal, strip_markup

_GROUND = re.compile(r"^(?:[ADPS]?GND[A-Z0-9_]*|GND_?\w*|V?SS[AQ]?|VSS\w*|0V|EARTH|CHASSIS\w*|AGND\w*|DGND\w*|PGND\w*)$")
_VOLTS_RKM = re.compile(r"(?<![0-9.])(\d{1,2})V(\d{1,3})?(?![0-9])")
_VOLTS_DEC = re.compile(r"(?<![0-9.])(\d{1,2}(?:\.\d{1,3})?)V(?![0-9])")
_VBUS = re.compile(r"^\+?VBUS\w*$")
POWER_TYPES = frozenset({"power_in", "power_out"})


def volts_from_name(name: str) -> float | None:
    """The voltage a supply name states, or None. ``3V3`` -> 3.3, ``+5V`` -> 5.0, ``1V2`` -> 1.2."""
    if "V" not in name.upper():
        return None  # every form below has a V (removing markup adds no letter)
    base = strip_markup(net_base(name)).upper().replace(" ", "")
    if _VBUS.match(base):
        return 5.0  # USB VBUS nominal 5 V (USB 2.0 specification)
    m = _VOLTS_DEC.search(base)
    if m and "." in m.group(1):
        return float(m.group(1))
    m = _VOLTS_RKM.search(base)
    if m:
        whole, frac = m.group(1), m.group(2) or ""
        return float(f"{whole}.{frac}") if frac else float(whole)
    return None


def is_ground_name(name: str) -> bool:
    return bool(_GROUND.match(strip_markup(net_base(name)).upper()))


def _has_power_pins(net: Net) -> bool:
    return any(node.pin_type in POWER_TYPES for node in net.nodes)


def _signal_pins(net: Net) -> bool:
    return any(pin_signal(node.pin_function) for node in net.nodes)


def find_rails(design: Design, configured: Mapping[str, float] | None = None) -> dict[str, Rail]:
    """Every net that is a supply, with its voltage where it can be known."""
    configured = configured or {}
    rails: dict[str, Rail] = {}
    for net in design.nets:
        name = net.name
        if name in configured:
            rails[name] = Rail(name, float(configured[name]), "config")
            continue
        if name.startswith("unconnected-("):
            continue
        if is_ground_name(name):
            rails[name] = Rail(name, 0.0, "ground")
            continue
        if net_signal(name) is not None or _signal_pins(net):
            continue  # a bus line named after its level ("TMDS_SDA_5V0") is not a supply
        power = _has_power_pins(net)
        volts = None if name.startswith("Net-(") else volts_from_name(name)
        if volts is not None:
            rails[name] = Rail(name, volts, "name")
            continue
        if power:
            pin_volts = {volts_from_name(node.pin_function) for node in net.nodes
                         if node.pin_type in POWER_TYPES and node.pin_function}
            pin_volts.discard(None)
            if len(pin_volts) == 1:
                rails[name] = Rail(name, pin_volts.pop(), "power-pin")
            elif not name.startswith("Net-("):
                rails[name] = Rail(name, None, "power-pin")
    return rails
