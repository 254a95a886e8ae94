"""geomelt command line: a thin layer over the algorithm registry and the pipeline."""

from __future__ import annotations

import click

import geomelt
from geomelt.cli.algorithms_cmd import algorithms_cmd, describe_cmd
from geomelt.cli.check_cmd import check_cmd
from geomelt.cli.column_cmd import column_cmd
from geomelt.cli.run_cmd import run_cmd

__all__ = ["main"]


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(geomelt.__version__, prog_name="geomelt")
def main() -> None:
    """Regional screening maps of lithosphere thermal state and melting.

    Results are screening estimates from regional data, not a substitute for
    site investigation, hazard assessment, drilling design or permitting.
    """


main.add_command(run_cmd)
main.add_command(check_cmd)
main.add_command(algorithms_cmd)
main.add_command(describe_cmd)
main.add_command(column_cmd)
