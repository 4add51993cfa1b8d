"""netaudit inside KiCad's PCB editor.

KiCad imports this package from its plugin folder and the package registers the action
plugin. Where ``pcbnew`` cannot be imported (a plain Python, the tests) nothing is
registered and ``REGISTERED`` stays False with the reason in ``SKIPPED``; the headless part
(``core``) still imports and works.
"""

from __future__ import annotations

from . import _paths

_paths.ensure()

REGISTERED = False
SKIPPED = ""

try:
    import pcbnew  # noqa: F401 - only to learn whether we run inside KiCad
except ImportError as exc:
    SKIPPED = f"pcbnew is not importable ({exc}); the action plugin is not registered"
else:
    try:
        from .action import NetauditAction
        NetauditAction().register()
        REGISTERED = True
    except Exception as exc:  # noqa: BLE001 - a broken plugin must not stop KiCad loading others
        SKIPPED = f"the action plugin could not be registered: {exc}"
