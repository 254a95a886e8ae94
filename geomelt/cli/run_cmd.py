"""``geomelt run``: run every registered algorithm over a region."""

from __future__ import annotations

import json
import sys
from pathlib import Path

import click

import geomelt
from geomelt.cli.options import (
    algorithm_option,
    handle_errors,
    input_option,
    param_option,
    parse_assignments,
    verbosity,
)
from geomelt.io.config import load_config, parse_value
from geomelt.pipeline import RunResult, execute_run, plan_run
from geomelt.pipeline.engines import ENGINES


def _fmt(value) -> str:
    if value is None:
        return "-"
    return f"{value:.4g}"


def print_summary(result: RunResult) -> None:
    """Closing summary on stdout: files, value ranges, warnings, caution."""
    click.echo(
        f"geomelt {geomelt.__version__}: wrote {len(result.files)} file(s) to {result.out_dir}"
    )
    click.echo(f"grid: {result.grid.describe()}; {result.elapsed_s:.1f} s")
    width = max(len(n) for n in result.stats) + 4
    click.echo(
        f"{'output':<{width}} {'min':>10} {'mean':>10} {'max':>10}  unit          nodata % "
        " outside calibration"
    )
    for name, st in result.stats.items():
        d = st.as_dict()
        total = st.valid_cells + st.nodata_cells
        pct = 100.0 * st.nodata_cells / total if total else 0.0
        outside = result.outside_calibration.get(name)
        click.echo(
            f"{name + '.tif':<{width}} {_fmt(d['min']):>10} {_fmt(d['mean']):>10} "
            f"{_fmt(d['max']):>10}  {st.unit:<13} {pct:6.1f}"
            + (f"  {outside:>19}" if outside is not None else "")
        )
    if result.melt_production_km3_yr is not None:
        click.echo(f"melt production of the region: {result.melt_production_km3_yr:.3g} km3/yr")
    click.echo(
        "results.gpkg: settings polygons, plate_boundaries (melt production per line), "
        f"{result.prospects} ranked prospect(s), run_metadata (inputs with checksums, "
        "parameters, totals, warnings)"
    )
    if result.report is not None:
        click.echo(f"report: {result.report} (open it in a web browser)")
    if result.warnings:
        click.echo(f"{len(result.warnings)} warning(s):")
        for text in result.warnings:
            click.echo(f"  - {text}")
    else:
        click.echo("no warnings")
    click.echo(f"CAUTION: {geomelt.CAUTION}")


@click.command("run")
@click.argument("config", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "-o",
    "--out",
    "out_dir",
    required=True,
    type=click.Path(path_type=Path),  # a file here is refused by the run (exit 4)
    help="Output folder (created; refused if it exists and is not empty, unless --overwrite).",
)
@click.option("--overwrite", is_flag=True, help="Replace geomelt outputs in an existing folder.")
@input_option
@param_option
@algorithm_option("Run")
@click.option("--block-size", type=int, default=None, help="Window size in cells (multiple of 16).")
@click.option(
    "--engine",
    type=click.Choice(ENGINES),
    default=None,
    help=(
        "Where windows are computed: a thread pool here, this thread only, or a dask cluster "
        "(the one --scheduler or [run] scheduler names; a local one without it). Default: "
        "dask when [run] scheduler is set, else threads."
    ),
)
@click.option(
    "-w",
    "--workers",
    type=click.IntRange(min=0),
    default=0,
    help="Worker threads (or local dask worker processes); 0 = one per core.",
)
@click.option(
    "--scheduler",
    metavar="ADDRESS",
    default=None,
    help=(
        "dask scheduler address (tcp://host:8786), or 'local' for a cluster of worker "
        "processes on this machine; implies --engine dask. Default: [run] scheduler of CONFIG."
    ),
)
@click.option(
    "--progress/--no-progress",
    default=None,
    help="Progress bar on stderr (default: only when stderr is a terminal).",
)
@click.option(
    "-n",
    "--dry-run",
    is_flag=True,
    help="Check the configuration and inputs, print the plan as JSON, write nothing.",
)
@verbosity
@handle_errors
def run_cmd(
    config,
    out_dir,
    overwrite,
    inputs,
    params,
    algorithm_ids,
    block_size,
    engine,
    workers,
    scheduler,
    progress,
    dry_run,
):
    """Compute the maps for the region described by CONFIG (a TOML file).

    Writes one GeoTIFF per quantity and results.gpkg into the output folder.
    """
    cfg = load_config(config)
    run_over = {"block_size": block_size} if block_size is not None else {}
    cfg = cfg.with_overrides(
        inputs=parse_assignments(inputs, "--input"),
        parameters={k: parse_value(v) for k, v in parse_assignments(params, "--param").items()},
        run=run_over,
    )
    plan = plan_run(cfg, list(algorithm_ids) or None)
    if dry_run:
        click.echo(json.dumps(plan.as_dict(), indent=2, allow_nan=False))
        return
    show = sys.stderr.isatty() if progress is None else progress
    if scheduler:  # the option names a cluster: dask, whatever --engine says
        engine = "dask"
    elif engine in (None, "dask"):  # an engine given explicitly wins over the configuration
        scheduler = plan.config.run["scheduler"] or None
        engine = "dask" if scheduler else (engine or "threads")
    result = execute_run(
        plan,
        out_dir,
        overwrite=overwrite,
        progress=show,
        engine=engine,
        workers=workers,
        scheduler=scheduler,
    )
    print_summary(result)
