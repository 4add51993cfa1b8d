"""Text from a design or a settings file, made safe to print on a terminal."""

from __future__ import annotations

import re

# Characters that act on a terminal instead of showing: C0 controls (ESC starts a terminal
# command, CR and BS overwrite what was printed, LF starts a line that looks like ours), DEL,
# C1 controls (0x9B is a one-character CSI), the Unicode bidirectional controls and marks
# that reorder text on screen (UAX #9), the line and paragraph separators, the byte-order mark.
ACTIVE = re.compile("[\x00-\x1f\x7f-\x9f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069"
                    "\u2028\u2029\ufeff]")


def _escape(m: re.Match) -> str:
    code = ord(m.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def visible(text) -> str:
    """``text`` with every character that would act on a terminal instead of showing (see
    ``ACTIVE``) written as an escape, ``\\x1b`` or ``\\u202e``. For text that comes from the
    design or the settings file; netaudit's own words, line breaks and colours go round it."""
    text = "" if text is None else str(text)
    return ACTIVE.sub(_escape, text) if ACTIVE.search(text) else text
