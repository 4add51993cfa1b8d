"""Helper for test_dialog_screenshot.py, run by KiCad's Python (with wx and pcbnew) under Xvfb.

    python3 dialog_shot.py PLUGINS_DIR PACKAGE BOARD OUT_PNG

Imports the installed plugin package as KiCad does, audits BOARD through pcbnew, opens the
findings dialog, picks the first finding as a click would, grabs the dialog's pixels into
OUT_PNG and prints one JSON line of what it saw.
"""

from __future__ import annotations

import importlib
import json
import sys


def main() -> int:
    plugins_dir, name, board_path, out_png = sys.argv[1:5]
    sys.path.append(plugins_dir)
    importlib.import_module(name)
    core = importlib.import_module(name + ".core")
    dialog_mod = importlib.import_module(name + ".dialog")

    import pcbnew
    import wx

    app = wx.App(False)
    board = pcbnew.LoadBoard(board_path)
    audit = core.audit_board(board, pcbnew)
    findings = audit.findings
    rows = core.rows(audit)

    def choose(row):
        return core.select_finding(board, audit, findings[row.index], pcbnew).describe()

    dlg = dialog_mod.FindingsDialog(None, "glasgow.kicad_pcb", core.summary(audit), rows, choose,
                                    lambda: "not written in this test", core.CAUTION)
    dlg.Show()
    result = {}

    def grab():
        dlg.choose(0)
        wx.Yield()
        dlg.Update()
        w, h = dlg.GetClientSize()
        bmp = wx.Bitmap(w, h)
        mem = wx.MemoryDC(bmp)
        mem.Blit(0, 0, w, h, wx.ClientDC(dlg), 0, 0)
        mem.SelectObject(wx.NullBitmap)
        image = bmp.ConvertToImage()
        image.SaveFile(out_png, wx.BITMAP_TYPE_PNG)
        data = bytes(image.GetData())
        colours = {data[i:i + 3] for i in range(0, len(data), 3 * 7)}
        result.update({
            "size": [w, h], "colours": len(colours), "rows": dlg.list.GetItemCount(),
            "first_row": [dlg.list.GetItemText(0, c) for c in range(4)] if rows else [],
            "status": dlg.status.GetLabel(),
            "selected": sorted(str(fp.GetReference()) for fp in board.GetFootprints() if fp.IsSelected()),
            "first_refs": list(findings[rows[0].index].refs) if rows else [],
            "findings": len(findings),
        })
        dlg.Close()
        app.ExitMainLoop()

    wx.CallLater(800, grab)
    app.MainLoop()
    print(json.dumps(result))
    return 0


if __name__ == "__main__":
    sys.exit(main())
