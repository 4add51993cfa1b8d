"""The findings window of the PCB-editor plugin (wx only; no pcbnew here).

It lists the rows :func:`core.rows` makes and calls back: ``on_choose(row)`` when a finding
is picked (the plugin selects its parts and tracks) and ``on_write()`` for the HTML report.
Each callback returns the sentence to show in the status line.
"""

from __future__ import annotations

from typing import Callable, Sequence

import wx

COLUMNS = (("Severity", 110), ("Where", 130), ("Finding", 520), ("Rule", 170))


class FindingsDialog(wx.Dialog):
    def __init__(self, parent, board_name: str, summary: str, rows: Sequence,
                 on_choose: Callable[[object], str], on_write: Callable[[], str] | None,
                 caution: str) -> None:
        super().__init__(parent, title=f"netaudit: {board_name}",
                         style=wx.DEFAULT_DIALOG_STYLE | wx.RESIZE_BORDER)
        self.rows = list(rows)
        self._on_choose = on_choose
        self._on_write = on_write

        outer = wx.BoxSizer(wx.VERTICAL)
        head = wx.StaticText(self, label=summary)
        head.SetFont(head.GetFont().Bold())
        outer.Add(head, 0, wx.ALL, 8)
        hint = "Pick a finding to select its parts and tracks on the board." if self.rows else \
            "No findings."
        outer.Add(wx.StaticText(self, label=hint), 0, wx.LEFT | wx.RIGHT, 8)

        self.list = wx.ListCtrl(self, style=wx.LC_REPORT | wx.LC_SINGLE_SEL | wx.BORDER_SUNKEN)
        for i, (name, width) in enumerate(COLUMNS):
            self.list.InsertColumn(i, name, width=width)
        for n, row in enumerate(self.rows):
            self.list.InsertItem(n, row.severity)
            self.list.SetItem(n, 1, row.where)
            self.list.SetItem(n, 2, row.text)
            self.list.SetItem(n, 3, row.rule)
        self.list.Bind(wx.EVT_LIST_ITEM_SELECTED, self._chosen)
        outer.Add(self.list, 1, wx.EXPAND | wx.ALL, 8)
        self.detail = wx.TextCtrl(self, style=wx.TE_MULTILINE | wx.TE_READONLY | wx.TE_WORDWRAP,
                                  size=(-1, 72))
        outer.Add(self.detail, 0, wx.EXPAND | wx.LEFT | wx.RIGHT | wx.BOTTOM, 8)

        self.status = wx.StaticText(self, label="")
        outer.Add(self.status, 0, wx.EXPAND | wx.LEFT | wx.RIGHT, 8)
        note = wx.StaticText(self, label=caution)
        note.Wrap(880)
        note.SetForegroundColour(wx.SystemSettings.GetColour(wx.SYS_COLOUR_GRAYTEXT))
        outer.Add(note, 0, wx.ALL, 8)

        buttons = wx.BoxSizer(wx.HORIZONTAL)
        self.write_button = wx.Button(self, label="Write HTML report")
        self.write_button.Bind(wx.EVT_BUTTON, self._write)
        self.write_button.Enable(on_write is not None)
        close = wx.Button(self, wx.ID_CLOSE, label="Close")
        close.Bind(wx.EVT_BUTTON, lambda _e: self.Close())
        buttons.Add(self.write_button, 0, wx.RIGHT, 8)
        buttons.AddStretchSpacer(1)
        buttons.Add(close, 0)
        outer.Add(buttons, 0, wx.EXPAND | wx.ALL, 8)

        self.Bind(wx.EVT_CLOSE, self._closing)
        self.SetSizer(outer)
        self.SetSize((960, 600))

    def choose(self, n: int) -> None:
        """Pick row ``n`` as a click would (also used by tests)."""
        self.list.Select(n)
        self.list.Focus(n)

    def _chosen(self, event) -> None:
        row = self.rows[event.GetIndex()]
        self.detail.SetValue(row.detail())
        self.status.SetLabel(self._call(lambda: self._on_choose(row)))

    def _write(self, _event) -> None:
        if self._on_write is not None:
            self.status.SetLabel(self._call(self._on_write))

    @staticmethod
    def _call(fn) -> str:
        try:
            return fn()
        except Exception as exc:  # noqa: BLE001 - show it, never take the editor down
            return f"failed: {exc}"

    def _closing(self, _event) -> None:
        self.Destroy()
