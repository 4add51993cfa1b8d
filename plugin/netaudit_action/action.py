"""The action plugin KiCad's PCB editor lists under Tools > External Plugins.

Imported only when ``pcbnew`` is importable (inside KiCad); ``wx`` only when it runs.
"""

from __future__ import annotations

import os

import pcbnew

from . import _paths

HERE = os.path.dirname(os.path.abspath(__file__))
ICON = os.path.join(HERE, "icon.png")
ICON_DARK = os.path.join(HERE, "icon_dark.png")
_open_dialog = None   # one findings window at a time


class NetauditAction(pcbnew.ActionPlugin):
    def defaults(self) -> None:
        self.name = "netaudit: check I2C/SMBus buses"
        self.category = "Design checks"
        self.description = ("Audit the board's I2C and SMBus buses (pull-ups, rise time, rails, "
                            "addresses); pick a finding to select its parts and tracks.")
        self.show_toolbar_button = True
        self.icon_file_name = ICON
        self.dark_icon_file_name = ICON_DARK   # KiCad 7 and later ask for it

    def Run(self) -> None:  # noqa: N802 - KiCad's name
        global _open_dialog
        import wx

        from .dialog import FindingsDialog

        frame = wx.FindWindowByName("PcbFrame")  # KiCad's PCB editor window (name from memory)
        problem = _paths.python_problem()
        if problem:
            wx.MessageBox(problem, "netaudit", wx.OK | wx.ICON_WARNING, frame)
            return
        from . import core
        from netaudit.errors import InputError

        board = pcbnew.GetBoard()
        try:
            audit = core.audit_board(board, pcbnew)
        except InputError as exc:
            wx.MessageBox(str(exc), "netaudit", wx.OK | wx.ICON_ERROR, frame)
            return
        path = str(board.GetFileName())
        findings = audit.findings

        def choose(row) -> str:
            return core.select_finding(board, audit, findings[row.index], pcbnew).describe()

        def write() -> str:
            if not path:
                return "save the board first: the report is written beside it"
            missing = core.html_available()
            if missing:
                return missing
            return f"wrote {core.write_html(audit, path)}"

        if _open_dialog is not None:
            try:
                _open_dialog.Destroy()
            except RuntimeError:  # already gone with its window
                pass
        _open_dialog = FindingsDialog(frame, os.path.basename(path) or "unsaved board",
                                      core.summary(audit), core.rows(audit), choose, write,
                                      core.CAUTION)
        _open_dialog.Show()   # modeless: the board stays usable while the list is open
