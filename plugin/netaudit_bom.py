#
# netaudit generator script for KiCad's schematic editor (bill-of-materials / generator
# dialog). KiCad runs it with the intermediate XML it writes (%I) and the output name
# without extension (%O).
#

"""
    @package
    netaudit: audit the I2C and SMBus buses of this schematic - pull-ups,
    rise time, bus capacitance, rails and addresses.
    Prints a short summary here and writes two reports beside the output
    name: <output>.html and <output>.json.
    Uses netaudit.yaml from the project folder when there is one.
    Parts excluded from the bill of materials are not in KiCad's input to
    this script, so they are not audited.

    Command line:
    python "pathToFile/netaudit_bom.py" "%I" "%O"
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
MAX_LISTED = 25   # findings printed in the dialog; the reports have all of them


def _netaudit_home() -> Path | None:
    """netaudit bundled beside this script (plugin-manager package), else a source checkout."""
    for folder in (HERE / "vendor", HERE.parent):
        if (folder / "netaudit" / "__init__.py").is_file():
            return folder
    return None


def _python_problem() -> str | None:
    """A sentence when this Python is older than netaudit (or its bundled libraries) needs."""
    need = (3, 10)   # pyproject.toml requires-python
    try:
        need = tuple(json.loads((HERE / "vendor" / "BUNDLE.json").read_text(encoding="utf-8"))["requires_python"])
    except (OSError, ValueError, KeyError):
        pass
    if sys.version_info[:len(need)] < need:
        return (f"netaudit_bom.py: needs Python {'.'.join(map(str, need))} or newer; this is "
                f"Python {sys.version.split()[0]} ({sys.executable}). Point the command line at a newer Python.")
    return None


def _import_netaudit():
    home = _netaudit_home()
    if home is not None and str(home) not in sys.path:
        sys.path.insert(0, str(home))
    import netaudit.audit  # noqa: F401 - fails here, with a clear message, when libraries are missing
    return netaudit


def _config_for(xml_path: Path, source: str, explicit: str | None):
    from netaudit.config import Config, find_config, load_config
    if explicit:
        return load_config(explicit)
    candidates = [xml_path]
    if source:
        src = Path(source)
        candidates.append(src if src.is_absolute() else xml_path.parent / src)
    for c in candidates:
        found = find_config(c)
        if found:
            return load_config(found)
    return Config.empty()


def summary_lines(audit) -> list[str]:
    from netaudit import __version__
    from netaudit.report.messages import phrase
    c = audit.counts()
    d = audit.design
    name = d.title or Path(d.source or d.path).stem
    lines = [f"netaudit {__version__}: {name}"
             + (f" rev {d.revision}" if d.revision else "")
             + f" - {c['buses']} bus{'' if c['buses'] == 1 else 'es'}, {c['segments']} segment"
             + ("" if c["segments"] == 1 else "s")
             + f"; {c['errors']} errors, {c['warnings']} warnings, {c['infos']} info, {c['waived']} waived"]
    live = [f for f in audit.findings if not f.waived]
    order = {"error": 0, "warning": 1, "info": 2}
    live.sort(key=lambda f: order[f.severity.value])
    for f in live[:MAX_LISTED]:
        lines.append(f"  {f.severity.value}: {phrase(f)}  [{f.rule}]")
    if len(live) > MAX_LISTED:
        lines.append(f"  ... and {len(live) - MAX_LISTED} more in the reports")
    return lines


def run(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(
        prog="netaudit_bom.py",
        description="Audit I2C/SMBus buses from KiCad's generator-script XML and write "
                    "OUT.json and OUT.html.")
    parser.add_argument("xml", help="the intermediate XML KiCad passes as %%I")
    parser.add_argument("out", help="the output name KiCad passes as %%O (extension ignored)")
    parser.add_argument("--config", help="netaudit.yaml to use instead of the one beside the project")
    parser.add_argument("--mode", help="bus speed mode for buses the config does not name")
    args = parser.parse_args(argv)
    for stream in (sys.stdout, sys.stderr):   # a Windows console code page cannot print "Ω"
        if hasattr(stream, "reconfigure"):
            stream.reconfigure(errors="replace")

    problem = _python_problem()
    if problem:
        print(problem, file=sys.stderr)
        return 2
    try:
        _import_netaudit()
    except ImportError as exc:
        print(f"netaudit_bom.py: cannot load netaudit or a library it needs ({exc}). Install "
              "netaudit into this Python (pip install netaudit), or point KiCad at the "
              "netaudit_bom.py inside the installed plugin package, which carries them.",
              file=sys.stderr)
        return 2
    from netaudit.audit import audit_design
    from netaudit.errors import InputError
    from netaudit.readers.common import decode_text, read_bytes, sha256
    from netaudit.readers import kicad_xml
    from netaudit.report import json as json_report
    from netaudit.report.io import write_atomic

    xml_path = Path(args.xml)
    out = Path(args.out)
    if out.suffix.lower() in (".xml", ".html", ".json", ".csv", ".txt"):
        out = out.with_suffix("")   # "%O.csv" habits: keep the base name only
    try:
        data = read_bytes(xml_path)
        text = decode_text(data, xml_path)
        if not kicad_xml.looks_like(text):
            raise InputError("not KiCad's generator-script XML (no <export> root)", str(xml_path), 1, 1)
        design = kicad_xml.read(text, xml_path, sha256(data), bom=True)
        config = _config_for(xml_path, design.source, args.config)
        audit = audit_design(design, config, args.mode)
        json_path = out.with_name(out.name + ".json")
        write_atomic(json_path, json_report.render(audit))
        written = [json_path]
        try:
            from netaudit.report import html as html_report
        except ImportError as exc:
            html_note = f"HTML report not written: not available in this netaudit ({exc})"
        else:
            html_path = out.with_name(out.name + ".html")
            write_atomic(html_path, html_report.render(audit))
            written.append(html_path)
            html_note = ""
    except InputError as exc:
        print(f"netaudit: {exc}", file=sys.stderr)
        return 2

    for line in summary_lines(audit):
        print(line)
    print("reports: " + ", ".join(str(p) for p in written))
    if html_note:
        print(html_note)
    print(json_report.CAUTION)
    return 0


def main() -> int:
    return run(sys.argv[1:])


if __name__ == "__main__":
    sys.exit(main())
