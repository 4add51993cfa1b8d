"""Small shims over the KiCad 7, 8 and 9 scripting API for what the plugin touches.

No ``pcbnew`` or ``wx`` import here: every function takes the board, an item, or the
``pcbnew`` module (``api``) and asks it what it offers. KiCad 9 is the version these were
run against; the KiCad 7 and 8 alternatives are from memory and each one is only a
fallback taken when the newer call is missing.
"""

from __future__ import annotations

from typing import Any, Iterator


def footprints(board: Any) -> list:
    return list(board.GetFootprints())


def tracks(board: Any) -> list:
    """Track segments, arcs and vias (one list in KiCad 6 and later)."""
    return list(board.GetTracks())


def zones(board: Any) -> list:
    if hasattr(board, "Zones"):            # KiCad 7, 8, 9
        return list(board.Zones())
    if hasattr(board, "GetZoneList"):      # older (from memory)
        return list(board.GetZoneList())
    return []


def drawings(board: Any) -> list:
    if hasattr(board, "GetDrawings"):
        return list(board.GetDrawings())
    if hasattr(board, "Drawings"):
        return list(board.Drawings())
    return []


def pads(footprint: Any) -> list:
    return list(footprint.Pads())


def selectable_items(board: Any) -> Iterator[Any]:
    """Every board item the plugin may select or must deselect: footprints and their
    pads, tracks and vias, zones and drawings."""
    for fp in footprints(board):
        yield fp
        yield from pads(fp)
    yield from tracks(board)
    yield from zones(board)
    yield from drawings(board)


def net_name(item: Any) -> str:
    return str(item.GetNetname())


def board_file(board: Any) -> str:
    return str(board.GetFileName())


def set_selected(item: Any, on: bool) -> None:
    if on:
        item.SetSelected()
    else:
        item.ClearSelected()


def is_selected(item: Any) -> bool:
    return bool(item.IsSelected())


def refresh(api: Any) -> None:
    """Redraw the board view; a no-op outside the editor."""
    fn = getattr(api, "Refresh", None)
    if fn is not None:
        fn()


def focus(api: Any, item: Any) -> bool:
    """Bring ``item`` into view where the API can (``FocusOnItem``, KiCad 8 and 9; not in
    KiCad 7, from memory). False when it could not."""
    fn = getattr(api, "FocusOnItem", None)
    if fn is None or item is None:
        return False
    try:
        fn(item)
    except Exception:  # noqa: BLE001 - a view that cannot scroll is no reason to fail
        return False
    return True
