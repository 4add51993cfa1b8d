"""The ``netaudit`` command line: parse options, call the library, choose a reporter."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from . import __version__
from .errors import InputError


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
    the datasheets, the applicable safety standards and your organisation's own review.
    """


@cli.command()
@click.argument("path", type=click.Path(path_type=Path))
@click.option("--json", "json_out", metavar="OUT", help="Write the JSON report (- for stdout).")
@click.option("--quiet", is_flag=True, help="No text summary on the terminal.")
def check(path: Path, json_out: str | None, quiet: bool) -> None:
    """Audit the design at PATH (netlist, XML netlist, project, schematic or folder)."""
    from .readers import read_design
    from .report import json as json_report
    from .report.io import write_output

    design = read_design(path)
    to_stdout = json_out == "-"
    if not quiet and not to_stdout:
        click.echo(f"{design.path}: {design.format}, {len(design.parts)} parts, "
                   f"{len(design.nets)} nets, KiCad {design.kicad_version or 'unknown'}")
    if json_out:
        write_output(json_out, json_report.render_design(design))


def main() -> None:
    cli(prog_name="netaudit")


if __name__ == "__main__":  # pragma: no cover
    main()
    sys.exit(0)
