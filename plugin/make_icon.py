"""Draw netaudit's icon with the standard library only (zlib + struct), as a PNG.

The glyph: two bus lines across the bottom and a resistor zig-zag dropping from a short
supply bar onto the upper line, with a junction dot. Drawn at 4x4 samples per pixel for
smooth edges; the same size always gives the same bytes.

    python plugin/make_icon.py            # rewrites the two committed icons
"""

from __future__ import annotations

import math
import struct
import sys
import zlib
from pathlib import Path

HERE = Path(__file__).resolve().parent
# path -> (size in pixels, for a dark background)
TARGETS = {HERE / "resources" / "icon.png": (64, False),              # plugin-manager list icon
           HERE / "netaudit_action" / "icon.png": (24, False),        # PCB-editor toolbar button
           HERE / "netaudit_action" / "icon_dark.png": (24, True)}    # the same on a dark theme

BUS = (43, 58, 74)          # dark slate
BUS_ON_DARK = (214, 222, 230)
RESISTOR = (200, 100, 30)   # copper orange

_ZIG = [(0.50, 0.24), (0.38, 0.285), (0.62, 0.335), (0.38, 0.385), (0.62, 0.435),
        (0.38, 0.485), (0.50, 0.52)]


def _shapes(size: int, dark: bool = False) -> list[tuple]:
    """(kind, geometry, half width, colour) in unit coordinates, thicker when small."""
    w = 0.045 if size >= 48 else 0.06
    bus = BUS_ON_DARK if dark else BUS
    shapes = [("seg", ((0.06, 0.62), (0.94, 0.62)), w, bus),
              ("seg", ((0.06, 0.84), (0.94, 0.84)), w, bus),
              ("seg", ((0.30, 0.12), (0.70, 0.12)), w, RESISTOR),
              ("seg", ((0.50, 0.12), (0.50, 0.24)), w * 0.8, RESISTOR),
              ("seg", ((0.50, 0.52), (0.50, 0.62)), w * 0.8, RESISTOR),
              ("dot", (0.50, 0.62), w * 1.9, bus)]
    shapes += [("seg", (a, b), w * 0.8, RESISTOR) for a, b in zip(_ZIG, _ZIG[1:])]
    return shapes


def _distance_to_segment(px: float, py: float, a, b) -> float:
    ax, ay = a
    bx, by = b
    dx, dy = bx - ax, by - ay
    t = max(0.0, min(1.0, ((px - ax) * dx + (py - ay) * dy) / (dx * dx + dy * dy)))
    return math.hypot(px - (ax + t * dx), py - (ay + t * dy))


def _colour_at(x: float, y: float, shapes) -> tuple[int, int, int] | None:
    hit = None
    for kind, geo, r, colour in shapes:
        d = math.hypot(x - geo[0], y - geo[1]) if kind == "dot" else _distance_to_segment(x, y, *geo)
        if d <= r:
            hit = colour  # later shapes are drawn on top
    return hit


def pixels(size: int, dark: bool = False, samples: int = 4) -> list[list[tuple[int, int, int, int]]]:
    shapes = _shapes(size, dark)
    rows = []
    for j in range(size):
        row = []
        for i in range(size):
            acc = [0, 0, 0]
            n = 0
            for sj in range(samples):
                for si in range(samples):
                    c = _colour_at((i + (si + 0.5) / samples) / size, (j + (sj + 0.5) / samples) / size, shapes)
                    if c is not None:
                        n += 1
                        for k in range(3):
                            acc[k] += c[k]
            if n:
                row.append((acc[0] // n, acc[1] // n, acc[2] // n, round(255 * n / samples ** 2)))
            else:
                row.append((0, 0, 0, 0))
        rows.append(row)
    return rows


def png(size: int, dark: bool = False) -> bytes:
    """The icon as PNG bytes: 8-bit RGBA, no interlace (PNG specification, ISO/IEC 15948)."""
    raw = b"".join(b"\x00" + bytes(v for px in row for v in px) for row in pixels(size, dark))

    def chunk(tag: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + tag + data + struct.pack(">I", zlib.crc32(tag + data))

    header = struct.pack(">IIBBBBB", size, size, 8, 6, 0, 0, 0)
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", header) + chunk(b"IDAT", zlib.compress(raw, 9))
            + chunk(b"IEND", b""))


def main() -> int:
    for path, (size, dark) in TARGETS.items():
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(png(size, dark))
        print(f"wrote {path} ({size}x{size}{', dark theme' if dark else ''})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
