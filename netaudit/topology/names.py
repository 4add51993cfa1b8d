"""What pin functions and net names say about a signal.

Facts of the trade (common practice, no source) about how parts and schematics spell
the two bus signals: SDA / SCL, with controller prefixes (``I2C1_SDA``, ``TWI0_SCL``),
unit numbers (``SDA0``, ``SDA_{1}``), side letters on buffers (``SDAA``/``SCLB``),
multiplexer channels (``SD0``/``SC0``), SMBus spellings (``SMBDAT``/``SMBCLK``) and
multi-function pins separated by ``/`` (``PB7/I2C1_SDA``).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

_MARKUP = re.compile(r"[~_^]\{([^{}]*)\}")


def strip_markup(name: str) -> str:
    """Remove KiCad's overbar/subscript/superscript markup: ``SDA_{1}`` -> ``SDA1``."""
    if "{" not in name:
        return name
    prev = None
    while prev != name:
        prev, name = name, _MARKUP.sub(r"\1", name)
    return name


@dataclass(frozen=True)
class PinSignal:
    """What one pin name says: the signal, a key pairing it with its partner, and strength.

    ``key`` pairs a data pin with its clock pin on the same part (``SDA1``/``SCL1`` -> "1",
    ``SD3``/``SC3`` -> "ch3", ``SDAB``/``SCLB`` -> "B"). ``channel`` is set for multiplexer
    channel pins. ``dedicated`` is False for multi-function pins (``PB7/SDA``) and for
    weak spellings, which alone never make a bus.
    """

    signal: str          # "sda" | "scl"
    key: str
    dedicated: bool
    channel: str | None = None


_SDA = re.compile(r"^(?:(?:I2C|IIC|TWI|SMB|SMBUS|DDC|CAM|PMB|PMBUS)?\d*_?)?(?:SDA|SMB_?DATA?|SMBD|TWD)"
                  r"(?P<key>[A-H]?\d*|_\d+)?$")
_SCL = re.compile(r"^(?:(?:I2C|IIC|TWI|SMB|SMBUS|DDC|CAM|PMB|PMBUS)?\d*_?)?(?:SCL|SMB_?CLK|SMBC|TWCK)"
                  r"(?P<key>[A-H]?\d*|_\d+)?$")
_MUX_SD = re.compile(r"^SD(?P<n>\d{1,2})$")
_MUX_SC = re.compile(r"^SC(?P<n>\d{1,2})$")
_PREFIX_KEY = re.compile(r"^(?:I2C|IIC|TWI)(?P<n>\d+)_")


@lru_cache(maxsize=65536)
def pin_signal(pin_function: str) -> PinSignal | None:
    """Classify a pin function; None when it names neither bus signal."""
    if not pin_function:
        return None
    name = strip_markup(pin_function).upper().replace(" ", "")
    alternatives = [a for a in re.split(r"[/|,]", name) if a]
    dedicated = len(alternatives) == 1
    for alt in alternatives:
        for regex, signal in ((_SDA, "sda"), (_SCL, "scl")):
            m = regex.match(alt)
            if m:
                key = (m.group("key") or "").lstrip("_")
                pm = _PREFIX_KEY.match(alt)
                if pm and not key:
                    key = pm.group("n")
                return PinSignal(signal, key, dedicated)
        m = _MUX_SD.match(alt)
        if m and dedicated:
            return PinSignal("sda", "ch" + m.group("n"), True, m.group("n"))
        m = _MUX_SC.match(alt)
        if m and dedicated:
            return PinSignal("scl", "ch" + m.group("n"), True, m.group("n"))
    return None


_NET_SDA = re.compile(r"(?:^|[^A-Z])(?:SDA|SMB_?DAT(?:A)?|SMBD)(?:[^A-Z]|$)")
_NET_SCL = re.compile(r"(?:^|[^A-Z])(?:SCL|SMB_?CLK|SMBC)(?:[^A-Z]|$)")
_NET_I2C = re.compile(r"(?:^|[^A-Z])(?:I2C|IIC|TWI|SMB|DDC)")
_NET_SCK = re.compile(r"(?:^|[^A-Z])SCK(?:[^A-Z]|$)")


def net_base(name: str) -> str:
    """The last path component of a net name, bus-alias member included: ``AUX_TYPE_C.SDA``."""
    base = name.rstrip("/").rsplit("/", 1)[-1] if not name.startswith("Net-(") else name
    return base


@lru_cache(maxsize=65536)
def net_signal(name: str) -> str | None:
    """What a net's name says: "sda", "scl" or None. Unnamed ``Net-(...)`` nets say nothing."""
    if name.startswith("Net-(") or name.startswith("unconnected-("):
        return None
    base = strip_markup(net_base(name)).upper()
    sda = bool(_NET_SDA.search(base))
    scl = bool(_NET_SCL.search(base)) or (bool(_NET_SCK.search(base)) and bool(_NET_I2C.search(base)))
    if sda and not scl:
        return "sda"
    if scl and not sda:
        return "scl"
    return None


_PARTNER = (("SDA", ("SCL", "SCK")), ("SMB_DATA", ("SMB_CLK",)), ("SMBDAT", ("SMBCLK",)),
            ("SMB_DAT", ("SMB_CLK",)))


def partner_names(name: str) -> list[str]:
    """Names the clock partner of a data net would likely have (``/SDA_A`` -> ``/SCL_A``)."""
    out = []
    for data, clocks in _PARTNER:
        for variant in (data, data.lower(), data.title()):
            if variant in name:
                for clock in clocks:
                    c = clock if variant.isupper() else clock.lower() if variant.islower() else clock.title()
                    out.append(name.replace(variant, c))
    return out


# -- supply pins -------------------------------------------------------------------

_IO_SUPPLY = re.compile(r"^(?:VDDIO|VDD_IO|VIO|VL|VCCIO|VCC_IO|IOVDD|IOVCC|VLOGIC|VDDI|VDD_I2C|VDDL|VREF\d?|VCC[AB12]|VDD[AB12])\d*$")
_SUPPLY = re.compile(r"^(?:V(?:DD|CC|S|IN|BAT|DDA|DDD|CCA|CCD|\+)?\w*|\d+V\d*|\+\w+)$")


def is_io_supply_pin(name: str) -> bool:
    return bool(_IO_SUPPLY.match(strip_markup(name).upper()))
