"""The ``netaudit`` command line: parse options, call the library, choose a reporter."""

from __future__ import annotations

import math
import sys
from pathlib import Path

import click

from . import __version__
from .config import MODES
from .errors import InputError

FAIL_LEVELS = ("error", "warning", "info", "never")


class _Group(click.Group):
    """Turns user-caused errors into one line on stderr and exit code 2."""

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except InputError as exc:
            click.echo(f"netaudit: {exc}", err=True)
            ctx.exit(2)
        except RecursionError:
            click.echo("netaudit: input nests too deeply to read", err=True)
            ctx.exit(2)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="netaudit")
def cli() -> None:
    """Audit the I2C and SMBus buses of a KiCad design.

    netaudit flags risks; it does not certify a design. Confirm every result against
    the datasheets, the applicable safety standards and your organisation's own review
    and sign-off by qualified engineers.
    """


def _load_audit(path: Path, config: Path | None, mode: str | None, use_kicad_cli: bool = False):
    from .audit import audit

    return audit(path, config, mode, use_kicad_cli=use_kicad_cli)


_KICAD_CLI_HELP = ("Read a project or schematic through KiCad's own netlist export (kicad-cli) "
                   "instead of netaudit's schematic reader.")


@cli.command()
@click.argument("path", type=click.Path(path_type=Path))
@click.option("--config", "config", type=click.Path(path_type=Path), metavar="FILE",
              help="netaudit.yaml to use (default: the one beside PATH, if any).")
@click.option("--mode", type=click.Choice(MODES), help="Bus mode for buses the config does not set.")
@click.option("--fail-on", type=click.Choice(FAIL_LEVELS), default="error", show_default=True,
              help="Lowest severity that makes the exit code 1.")
@click.option("--json", "json_out", metavar="OUT", help="Write the JSON report (- for stdout).")
@click.option("--html", "html_out", metavar="OUT", help="Write the HTML release report (- for stdout).")
@click.option("--sarif", "sarif_out", metavar="OUT", help="Write SARIF 2.1.0 for code scanning (- for stdout).")
@click.option("--junit", "junit_out", metavar="OUT", help="Write JUnit XML, a test per rule and segment (- for stdout).")
@click.option("--markdown", "markdown_out", metavar="OUT", help="Write a Markdown summary (- for stdout).")
@click.option("--quiet", is_flag=True, help="No text summary on the terminal.")
@click.option("--use-kicad-cli", "use_kicad_cli", is_flag=True, help=_KICAD_CLI_HELP)
def check(path: Path, config: Path | None, mode: str | None, fail_on: str, json_out: str | None,
          html_out: str | None, sarif_out: str | None, junit_out: str | None, markdown_out: str | None,
          quiet: bool, use_kicad_cli: bool) -> None:
    """Audit the design at PATH (netlist, XML netlist, project, schematic or folder).

    Set SOURCE_DATE_EPOCH to fix the run date written into the HTML, SARIF, JUnit and
    Markdown reports, so that repeated runs give identical files.
    """
    from .report import json as json_report
    from .report import text as text_report
    from .report.io import write_output

    outputs = {"json": json_out, "html": html_out, "sarif": sarif_out, "junit": junit_out,
               "markdown": markdown_out}
    dashes = [f"--{k}" for k, v in outputs.items() if v == "-"]
    if len(dashes) > 1:
        raise InputError(f"only one report can go to standard output (-); {', '.join(dashes)} all ask for it")
    to_stdout = bool(dashes)
    release = html_out or sarif_out or junit_out or markdown_out
    if release:
        from .report import html as html_report
        from .report import junit as junit_report
        from .report import markdown as markdown_report
        from .report import sarif as sarif_report

        when = html_report.run_date()      # a bad SOURCE_DATE_EPOCH stops before any work
    result = _load_audit(path, config, mode, use_kicad_cli)
    if json_out:
        write_output(json_out, json_report.render(result))
    if release:
        for target, module in ((html_out, html_report), (sarif_out, sarif_report),
                               (junit_out, junit_report), (markdown_out, markdown_report)):
            if target:
                write_output(target, module.render(result, when))
    if not quiet and not to_stdout:
        click.echo(text_report.render(result, colour=sys.stdout.isatty()), nl=False)
    sys.exit(exit_code(result, fail_on))


def exit_code(result, fail_on: str) -> int:
    """0 when no unwaived finding reaches ``fail_on``, else 1 (CONTRACT.md)."""
    if fail_on == "never":
        return 0
    threshold = {"error": 3, "warning": 2, "info": 1}[fail_on]
    return int(any(not f.waived and f.severity.rank >= threshold for f in result.findings))


@cli.command()
@click.argument("path", type=click.Path(path_type=Path))
@click.option("--config", "config", type=click.Path(path_type=Path), metavar="FILE")
@click.option("--json", "as_json", is_flag=True, help="Print the inventory as JSON.")
@click.option("--use-kicad-cli", "use_kicad_cli", is_flag=True, help=_KICAD_CLI_HELP)
def buses(path: Path, config: Path | None, as_json: bool, use_kicad_cli: bool) -> None:
    """Inventory: buses, segments, lines, devices and pull-ups found in PATH."""
    from .report import json as json_report
    from .report import text as text_report

    result = _load_audit(path, config, None, use_kicad_cli)
    if as_json:
        doc = json_report.report(result)
        inventory = {k: doc[k] for k in ("schema", "tool", "design", "rails", "buses")}
        click.echo(json_report.dumps(inventory), nl=False)
    else:
        click.echo(text_report.render_inventory(result), nl=False)


@cli.command()
@click.argument("rule_id", required=False, metavar="[RULE]")
def rules(rule_id: str | None) -> None:
    """List the rules, or explain one (what, why, fix, source)."""
    from .checks import all_rules

    table = all_rules()
    if rule_id is None:
        width = max(len(r) for r in table)
        for r in table.values():
            click.echo(f"{r.id:<{width}}  {r.severity.value:<7}  {r.summary}")
        return
    if rule_id not in table:
        raise InputError(f"unknown rule '{rule_id}'; `netaudit rules` lists them")
    r = table[rule_id]
    click.echo(f"{r.id} (default severity: {r.severity.value})\n")
    click.echo(r.doc)


@cli.command()
@click.argument("path", type=click.Path(path_type=Path))
def init(path: Path) -> None:
    """Write a starter netaudit.yaml beside PATH from what was detected (never overwrites)."""
    from .audit import audit_design
    from .config import CONFIG_FILENAME, Config, starter_yaml
    from .readers import read_design
    from .report.io import write_new

    design = read_design(path)
    result = audit_design(design, Config.empty())
    target = (path if path.is_dir() else path.parent) / CONFIG_FILENAME
    used = {p.rail for b in result.buses for s in b.segments for line in s.lines for p in line.pullups}
    rails = {r.net: r.volts for r in result.rails if r.net in used and r.volts != 0.0}
    bus_rows = []
    for b in result.buses:
        root = b.segments[0]
        bus_rows.append((b.name, list(root.sda.nets) if root.sda else [],
                         list(root.scl.nets) if root.scl else []))
    write_new(target, starter_yaml(rails, bus_rows, result.mode))
    click.echo(f"wrote {target}: {len(rails)} rails, {len(bus_rows)} buses; review it before use")


@cli.command()
@click.option("--vdd", required=True, type=float, help="Pull-up supply in volts, e.g. 3.3")
@click.option("--cb", required=True, help="Bus capacitance, e.g. 200p or 200pF")
@click.option("--mode", type=click.Choice(MODES), default="fast", show_default=True)
@click.option("--iol", help="Sink current of the weakest device, e.g. 3m or 3mA (default: the mode's)")
def pullup(vdd: float, cb: str, mode: str, iol: str | None) -> None:
    """Pull-up window for one line, with E-series picks (UM10204 section 7.1)."""
    from .electrical.budget import pullup_window
    from .electrical.modes import get_mode
    from .report.text import render_window
    from .units import parse_value

    cb_f = parse_value(cb, "F")
    if cb_f is None or cb_f <= 0:
        raise InputError(f"--cb: cannot read '{cb}' as a capacitance (try 200p)")
    iol_a = None
    if iol is not None:
        iol_a = parse_value(iol, "A")
        if iol_a is None or iol_a <= 0:
            raise InputError(f"--iol: cannot read '{iol}' as a current (try 3m)")
    if not math.isfinite(vdd) or vdd <= 0:
        raise InputError(f"--vdd: must be a voltage above 0 V, not {vdd:g}")
    try:
        window = pullup_window(vdd, cb_f, get_mode(mode), iol_a=iol_a)
    except ValueError as exc:  # e.g. a supply not above the mode's V_OL(max)
        raise InputError(f"--vdd {vdd:g} V: {exc}") from None
    click.echo(render_window(window), nl=False)


def main() -> None:
    cli(prog_name="netaudit")


if __name__ == "__main__":  # pragma: no cover
    main()
