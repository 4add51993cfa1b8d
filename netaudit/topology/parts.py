"""What kind of part sits on a bus line: device, connector, or something to look past.

Facts of the trade (common practice, no source): reference prefixes and library names
say resistors, capacitors, inductors, test points and connectors; a part whose pins on
the line are all of electrical type "passive" and which is not a connector is
protection or filtering (ESD arrays, TVS diodes), not a bus device.
"""

from __future__ import annotations

import re
from functools import lru_cache

from ..model import Part

_PASSIVE_REF = re.compile(r"^(?:R|RN|RA|C|L|FB|TP|D|F|JP|SJ|MH|H|FID)\d", re.IGNORECASE)
_TESTPOINT = re.compile(r"TestPoint|Test_Point|^TP", re.IGNORECASE)
_CONNECTOR_REF = re.compile(r"^(?:J|P|X|CN|CON|XS|XP)(?:\d|_)", re.IGNORECASE)
_FET_REF = re.compile(r"^(?:Q|T|M)\d", re.IGNORECASE)


# The tests below run for every part in several places of an audit; they are answered once
# per distinct (reference, library, symbol) and remembered.
_cached = lru_cache(maxsize=1 << 17)


def is_connector(part: Part) -> bool:
    return _is_connector(part.ref, part.lib, part.lib_part)


@_cached
def _is_connector(ref: str, lib: str, lib_part: str) -> bool:
    return bool(_CONNECTOR_REF.match(ref) or lib.lower().startswith("connector")
                and not _TESTPOINT.search(lib_part))


def is_test_point(part: Part) -> bool:
    return _is_test_point(part.ref, part.lib_part)


@_cached
def _is_test_point(ref: str, lib_part: str) -> bool:
    return bool(ref.upper().startswith("TP") or _TESTPOINT.search(lib_part))


def is_fet(part: Part) -> bool:
    return bool(_FET_REF.match(part.ref)) and {"G", "S", "D"} <= {p.name.upper() for p in part.pins}


def looks_passive(part: Part) -> bool:
    """Resistor, capacitor, inductor, diode, fuse, jumper, test point, mounting hole."""
    return _looks_passive(part.ref, part.lib_part)


@_cached
def _looks_passive(ref: str, lib_part: str) -> bool:
    return bool(_PASSIVE_REF.match(ref)) or _is_test_point(ref, lib_part)
