"""Component values as engineers write them, SI formatting, and the E-series.

Everything inside netaudit is an SI float (ohms, farads, seconds, volts, amperes);
this module is the edge where schematic text becomes numbers and numbers become text.

Reading values (:func:`parse_value`)
------------------------------------
Accepted spellings, for ``unit="ohm"`` (resistance) and ``unit="F"`` (capacitance):

* IEC 60062 letter codes, where the letter stands in for the decimal point:
  resistance ``R47`` = 0.47, ``4R7`` = 4.7, ``4k7``/``4K7`` = 4 700, ``1M0`` = 1 000 000,
  ``0R33`` = 0.33; capacitance ``p47`` = 0.47 pF, ``4n7`` = 4.7 nF, ``2u2`` = 2.2 µF,
  ``u1`` = 0.1 µF, ``4F7`` = 4.7 F.
* A decimal number with an SI prefix and an optional unit: ``4.7k``, ``4.7 kΩ``,
  ``4.7kohm``, ``2.2K``, ``1Meg``, ``470R``, ``100nF``, ``0.1uF``, ``0.1µF``, ``10 pF``.
* A plain number for a resistance (``470`` is 470 Ω). A plain number on a capacitor is
  *not* read: one habit means pF, another µF, and ``104`` is a three-digit code. Only
  ``0`` is accepted bare for both units.
* Trailing ratings separated by a space, ``/``, ``,`` or ``±`` are ignored when they are
  recognisably a tolerance (``1%``, ``±0.25pF``), a voltage (``50V``), a current
  (``2.6A``), a power (``1/10W``), a package size (``0603``), a ceramic dielectric
  (``X7R``, ``C0G``), a temperature coefficient (``100ppm``) or a not-fitted mark
  (``DNP``, ``DNF``, ``DNM``, ``NF``). Anything else after the value makes the whole text
  unreadable.

Prefix letters (case matters where the trade's habits collide):

* resistance: ``m`` milli, ``k``/``K`` kilo, ``M`` or ``Meg`` mega, ``G`` giga; ``R`` marks
  ohms or the decimal point. Prefixes below milli are refused (a resistor written
  ``100n`` is a capacitor value in the wrong place).
* capacitance: ``p``/``P`` pico, ``n``/``N`` nano, ``u``/``U``/``µ`` micro, ``m`` milli.
  ``M`` is refused (old US drawings write ``MF`` for microfarad) and so are ``k``/``K``.

Other units (``"A"``, ``"V"``, ``"s"``, ``"Hz"``, for command-line options and config
values) take a decimal number, an optional SI prefix (``f p n u µ m k M G``, case as SI
writes them) and an optional unit symbol: ``3m``, ``3 mA``, ``350u``, ``2.5V``, ``400k``.
Nothing may follow.

Whatever cannot be read with confidence gives ``None``: netaudit never guesses a value.
"""

from __future__ import annotations

import math
import re
from decimal import Decimal
from functools import lru_cache
from typing import Iterable

OHM = "ohm"
FARAD = "F"

# ---------------------------------------------------------------------------
# Reading values
# ---------------------------------------------------------------------------

_NUMBER = r"(?P<num>(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)"

# Multipliers as powers of ten, so that "8.06k" is exactly 8060.0 (decimal arithmetic).
_OHM_PREFIX = {"m": -3, "": 0, "k": 3, "K": 3, "M": 6, "G": 9}
_F_PREFIX = {"p": -12, "P": -12, "n": -9, "N": -9, "u": -6, "U": -6, "m": -3, "": 0}

# IEC 60062 letter codes: the letter is the decimal point and the multiplier.
_OHM_RKM_LETTER = {"R": 0, "r": 0, "k": 3, "K": 3, "M": 6, "G": 9, "m": -3}
_F_RKM_LETTER = {"p": -12, "P": -12, "n": -9, "N": -9, "u": -6, "U": -6, "m": -3, "F": 0}
_F_LEADING_LETTER = {"p": -12, "P": -12, "n": -9, "N": -9, "u": -6, "U": -6}

_OHM_RKM = re.compile(r"(?P<int>\d+)(?P<letter>[RrkKMGm])(?P<frac>\d+)(?:\s*(?i:ohms?))?")
_OHM_RKM_LEADING = re.compile(r"[Rr](?P<frac>\d+)(?:\s*(?i:ohms?))?")
_OHM_DECIMAL = re.compile(
    _NUMBER + r"(?:\s*(?P<prefix>(?i:meg)|[mkKMG]))?(?:\s*(?P<unit>(?i:ohms?)|[Rr]))?")

_F_RKM = re.compile(r"(?P<int>\d+)(?P<letter>[pPnNuUmF])(?P<frac>\d+)(?:\s*[fF])?")
_F_RKM_LEADING = re.compile(r"(?P<letter>[pPnNuU])(?P<frac>\d+)(?:\s*[fF])?")
_F_DECIMAL = re.compile(_NUMBER + r"(?:\s*(?P<prefix>[pPnNuUm]))?(?:\s*(?P<unit>[fF]))?")

_SEPARATORS = " \t/,;±"

_ANNOTATIONS = [re.compile(p, re.IGNORECASE) for p in (
    r"±.*",                                              # any tolerance written with ±
    r"\d+(?:\.\d+)?%",                                   # tolerance
    r"\d+(?:\.\d+)?k?V(?:dc|ac)?",                       # voltage rating
    r"\d+(?:\.\d+)?m?A",                                 # current rating
    r"(?:\d+/\d+|\d+(?:\.\d+)?)m?W",                     # power rating
    r"01005|0201|0402|0603|0805|1008|1206|1210|1812|2010|2220|2512",  # imperial sizes
    r"(?:1005|1608|2012|3216|3225|4532|5025|6332)M",     # metric sizes, marked
    r"X5R|X6S|X7R|X7S|X7T|X8R|X8L|C0G|COG|NP0|NPO|Y5V|Z5U",  # ceramic dielectrics
    r"\d+ppm(?:/K|/°C|/C)?",                             # temperature coefficient
    r"DNP|DNF|DNM|NF",                                   # not-fitted marks
)]


def _normalise(text: str) -> str:
    text = text.strip()
    for micro in ("\u00b5", "\u03bc"):          # micro sign, Greek small mu
        text = text.replace(micro, "u")
    for omega in ("\u2126", "\u03a9"):          # ohm sign, Greek capital omega
        text = text.replace(omega, "ohm")
    # A decimal comma between digits, as European schematics write values: "2,2K", "4,7n"
    # (common practice, no source). Commas elsewhere still separate annotations.
    text = re.sub(r"(?<=\d),(?=\d)", ".", text, count=1)
    return text.replace("+/-", "±").replace("+-", "±")


def _annotations_only(rest: str) -> bool:
    """True when the text after a value is nothing but recognised ratings."""
    for token in re.split(r"[\s,;]+", rest.replace("±", " ±")):
        if not token:
            continue
        if any(p.fullmatch(token) for p in _ANNOTATIONS):
            continue
        for part in token.split("/"):
            if part and not any(p.fullmatch(part) for p in _ANNOTATIONS):
                return False
    return True


def _finish(match: re.Match[str], text: str, value: float) -> float | None:
    rest = text[match.end():]
    if rest and rest[0] not in _SEPARATORS:
        return None
    if not _annotations_only(rest):
        return None
    return value


def _scaled(number: str, exponent: int) -> float:
    return float(Decimal(number).scaleb(exponent))


def _rkm(match: re.Match[str], letters: dict[str, int]) -> float:
    integer = match.groupdict().get("int") or "0"
    return _scaled(f"{integer}.{match['frac']}", letters[match["letter"]])


def _parse_ohms(text: str) -> float | None:
    m = _OHM_RKM.match(text)
    if m:
        return _finish(m, text, _rkm(m, _OHM_RKM_LETTER))
    m = _OHM_RKM_LEADING.match(text)
    if m:
        return _finish(m, text, _scaled(f"0.{m['frac']}", 0))
    m = _OHM_DECIMAL.match(text)
    if m:
        prefix = m["prefix"] or ""
        if prefix and m["unit"] in ("R", "r"):
            return None                          # "4.7kR": two unit marks, unclear
        exponent = 6 if prefix.lower() == "meg" else _OHM_PREFIX[prefix]
        return _finish(m, text, _scaled(m["num"], exponent))
    return None


def _parse_farads(text: str) -> float | None:
    m = _F_RKM.match(text)
    if m:
        return _finish(m, text, _rkm(m, _F_RKM_LETTER))
    m = _F_RKM_LEADING.match(text)
    if m:
        return _finish(m, text, _scaled(f"0.{m['frac']}", _F_LEADING_LETTER[m["letter"]]))
    m = _F_DECIMAL.match(text)
    if m:
        prefix, unit = m["prefix"], m["unit"]
        number = float(m["num"])
        if prefix is None:
            if unit == "f":
                return None                      # bare "f": femto or farad? refuse
            if unit is None and number != 0.0:
                return None                      # bare number on a capacitor: pF? µF?
        return _finish(m, text, _scaled(m["num"], _F_PREFIX[prefix or ""]))
    return None


_GENERIC_PREFIX = {"f": -15, "p": -12, "n": -9, "u": -6, "m": -3, "": 0, "k": 3, "M": 6,
                   "G": 9}
_GENERIC = re.compile(_NUMBER + r"(?:\s*(?P<prefix>[fpnumkMG]))?(?:\s*(?P<unit>[A-Za-z]+))?")
GENERIC_UNITS = ("A", "V", "s", "Hz")


def _parse_generic(text: str, unit: str) -> float | None:
    m = _GENERIC.fullmatch(text)
    if not m:
        return None
    if m["unit"] is not None and m["unit"].lower() != unit.lower():
        return None
    return _scaled(m["num"], _GENERIC_PREFIX[m["prefix"] or ""])


def parse_value(text: str, unit: str) -> float | None:
    """Read a resistance (``unit="ohm"``) or capacitance (``unit="F"``) from schematic text,
    or a current, voltage, time or frequency (``"A"``, ``"V"``, ``"s"``, ``"Hz"``).

    Returns the value in ohms or farads, or ``None`` when the text cannot be read with
    confidence (``"DNP"``, ``"NC"``, ``""``, ``"R_2k2_0402"``, ``"abc"``, ``"100"`` on a
    capacitor). See the module docstring for the accepted spellings.

    References: IEC 60062 (letter and digit code for resistance and capacitance values).
    """
    if unit not in (OHM, FARAD) + GENERIC_UNITS:
        raise ValueError(f"unit must be one of {(OHM, FARAD) + GENERIC_UNITS}, not {unit!r}")
    if not isinstance(text, str):
        return None
    text = _normalise(text)
    if not text:
        return None
    if unit == OHM:
        value = _parse_ohms(text)
    elif unit == FARAD:
        value = _parse_farads(text)
    else:
        value = _parse_generic(text, unit)
    if value is None or not math.isfinite(value):
        return None
    return value


#: User fields tried, in this order and case-insensitively, when a part's Value is not
#: a readable number (for example a library name such as ``R_2k2_0402``). ``Val`` is the
#: field such libraries put the number in; the others are names seen in BOM habits
#: (common practice, no source).
VALUE_FIELD_NAMES = ("Val", "Value", "Value2", "Value 2", "Resistance", "Capacitance",
                     "Ohms", "Ohm", "Farads")


def _embedded_value(value: str, unit: str) -> float | None:
    """The one value code inside a name such as ``R_2k2_0402`` or ``cap-cer-0402-100n``.

    Tokens are split at ``_`` and ``-``; only tokens with a letter in them count (so the
    package size ``0402`` is never read as 402 Ω). Exactly one distinct value must be
    found, or the name is ambiguous and ``None`` is returned.
    """
    tokens = [t for t in re.split(r"[_\-]+", value.strip()) if t]
    if len(tokens) < 2:
        return None
    found = set()
    for token in tokens:
        if not any(ch.isalpha() for ch in token):
            continue
        parsed = parse_value(token, unit)
        if parsed is not None:
            found.add(parsed)
    return found.pop() if len(found) == 1 else None


def part_value(value: str, fields: Iterable[tuple[str, str]], unit: str) -> float | None:
    """The numeric value of a part whose Value may be a library name.

    Tried in order: the Value itself; the user fields named in
    :data:`VALUE_FIELD_NAMES` (case-insensitive, in that order); finally the one value
    code embedded in a name made of ``_``/``-`` separated tokens, such as
    ``R_2k2_0402`` (2.2 kΩ) or ``C_100n_0402`` (100 nF). ``None`` when none of these
    gives a confident reading.
    """
    direct = parse_value(value or "", unit)
    if direct is not None:
        return direct
    by_name: dict[str, str] = {}
    for name, text in fields:
        by_name.setdefault(name.strip().lower(), text)
    for name in VALUE_FIELD_NAMES:
        text = by_name.get(name.lower())
        if text:
            parsed = parse_value(text, unit)
            if parsed is not None:
                return parsed
    return _embedded_value(value or "", unit)


# ---------------------------------------------------------------------------
# Writing values
# ---------------------------------------------------------------------------

_SI_PREFIXES = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M",
                9: "G", 12: "T"}
_UNIT_SYMBOLS = {OHM: "Ω", "ohms": "Ω", "Ω": "Ω"}


def _round_sig(value: float, digits: int) -> float:
    if value == 0:
        return 0.0
    try:
        return round(value, digits - 1 - math.floor(math.log10(abs(value))))
    except OverflowError:  # rounds up past the largest float (1.797e308 to 1.80e308): keep it
        return value


def format_si(value: float, unit: str, digits: int = 3) -> str:
    """A value with an SI prefix, rounded to ``digits`` significant figures.

    ``format_si(4700, "ohm")`` → ``"4.7 kΩ"``, ``format_si(200e-12, "F")`` → ``"200 pF"``,
    ``format_si(3e-7, "s")`` → ``"300 ns"``, ``format_si(3.3, "V")`` → ``"3.3 V"``.
    ``"ohm"`` is written as ``Ω``; other units are written as given. Trailing zeros are
    dropped. Infinite values are written ``"∞ Ω"`` and so on.
    """
    symbol = _UNIT_SYMBOLS.get(unit, unit)
    if math.isnan(value):
        return f"? {symbol}".rstrip()
    if math.isinf(value):
        return f"{'-' if value < 0 else ''}∞ {symbol}".rstrip()
    rounded = _round_sig(value, digits)
    if rounded == 0:
        return f"0 {symbol}".rstrip()
    exponent = 3 * math.floor(math.log10(abs(rounded)) / 3)
    exponent = max(min(exponent, 12), -15)
    mantissa = _round_sig(rounded / 10 ** exponent, digits)
    text = f"{mantissa:.{digits}g}"
    if "e" in text:                      # only possible outside the prefix range
        text = f"{mantissa:g}"
    return f"{text} {_SI_PREFIXES[exponent]}{symbol}".rstrip()


def format_rkm(ohms: float) -> str:
    """A resistance as an IEC 60062 letter code, to three significant figures.

    The letter takes the place of the decimal point; a whole number keeps the letter at
    the end, and ``R`` is written for ohms so the text can never be misread as a bare
    number: ``4700`` → ``"4k7"``, ``2200`` → ``"2k2"``, ``470`` → ``"470R"``,
    ``4.7`` → ``"4R7"``, ``0.47`` → ``"R47"``, ``10000`` → ``"10k"``, ``1e6`` → ``"1M"``,
    ``4990`` → ``"4k99"``, ``0`` → ``"0R"``.

    References: IEC 60062 (letter and digit code).
    """
    if ohms < 0 or not math.isfinite(ohms):
        raise ValueError(f"cannot write {ohms!r} Ω as a letter code")
    rounded = _round_sig(ohms, 3)
    if rounded == 0:
        return "0R"
    for scale, letter in ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, "R")):
        if rounded >= scale * (1 - 1e-12) or letter == "R":
            mantissa = _round_sig(rounded / scale, 3)
            if mantissa >= 1000 and letter != "G":   # rounding carried into next decade
                continue
            decimals = max(0, 2 - math.floor(math.log10(mantissa)))
            text = f"{mantissa:.{decimals}f}"
            if "." in text:
                text = text.rstrip("0").rstrip(".")
            integer, _, fraction = text.partition(".")
            if integer == "0":
                integer = ""
            return f"{integer}{letter}{fraction}"
    raise AssertionError("unreachable")


# ---------------------------------------------------------------------------
# E-series (IEC 60063)
# ---------------------------------------------------------------------------

#: Preferred number series, values per decade (IEC 60063).
E_SERIES: dict[str, tuple[float, ...]] = {
    "E3": (1.0, 2.2, 4.7),
    "E6": (1.0, 1.5, 2.2, 3.3, 4.7, 6.8),
    "E12": (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2),
    "E24": (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
            3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1),
}
E6 = E_SERIES["E6"]
E12 = E_SERIES["E12"]
E24 = E_SERIES["E24"]

_REL = 1e-9     # relative slack when comparing against range ends and series values


def _series(name: str) -> tuple[float, ...]:
    try:
        return E_SERIES[name.upper()]
    except (KeyError, AttributeError):
        raise ValueError(
            f"unknown E-series {name!r}; known: {', '.join(E_SERIES)}") from None


def _decade_value(base: float, exponent: int) -> float:
    # Through text so that 4.7 × 10³ is exactly 4700.0, not 4700.000000000001.
    return float(f"{base}e{exponent}")


@lru_cache(maxsize=512)  # every line's pull-up window asks for the same few decades
def _decade(series: tuple[float, ...], exponent: int) -> tuple[float, ...]:
    return tuple(_decade_value(base, exponent) for base in series)


def series_values(name: str, lo: float, hi: float) -> list[float]:
    """Every value of E-series ``name`` (``"E6"``, ``"E12"``, ``"E24"``, ``"E3"``) in
    ``[lo, hi]``, ascending, over as many decades as the range spans.

    References: IEC 60063 (preferred number series for resistors and capacitors).
    """
    bases = _series(name)
    if not (lo > 0 and hi > 0) or not math.isfinite(hi) or not math.isfinite(lo):
        raise ValueError("series_values needs a finite positive range")
    if hi < lo:
        return []
    out = []
    low, high = lo * (1 - _REL), hi * (1 + _REL)
    for exponent in range(math.floor(math.log10(lo)) - 1, math.floor(math.log10(hi)) + 2):
        out.extend(v for v in _decade(bases, exponent) if low <= v <= high)
    return out


def round_down(value: float, series: str) -> float:
    """The largest value of the E-series not above ``value`` (IEC 60063)."""
    if not value > 0 or not math.isfinite(value):
        raise ValueError("round_down needs a finite positive value")
    candidates = series_values(series, value / 10.001, value)
    return candidates[-1]


def round_up(value: float, series: str) -> float:
    """The smallest value of the E-series not below ``value`` (IEC 60063)."""
    if not value > 0 or not math.isfinite(value):
        raise ValueError("round_up needs a finite positive value")
    candidates = series_values(series, value, value * 10.001)
    return candidates[0]
