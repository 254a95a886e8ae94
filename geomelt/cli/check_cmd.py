"""``geomelt check``: validate a run's configuration and inputs and say what a run would do.

Nothing is written. The checks are the ones ``geomelt run`` makes before it
writes anything (the run plan, the value pre-scan of every raster, the
vector schemas, the output location when ``--out`` is given), so a
configuration that passes ``check`` fails a run only on a fault that appears
while writing (a full disk) or on data the pre-scan did not sample. Exit
codes are those of ``run``.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import click

import geomelt
from geomelt.cli.options import (
    algorithm_option,
    config_with_overrides,
    handle_errors,
    input_option,
    param_option,
    verbosity,
)
from geomelt.errors import GeomeltWarning
from geomelt.io.rasters import crs_label, scan_raster_values
from geomelt.layers import INPUT_LAYERS
from geomelt.pipeline import runner
from geomelt.pipeline.runner import RESULTS_GPKG, RunPlan, plan_run

__all__ = ["check_cmd"]


def _vector_line(plan: RunPlan, name: str) -> str:
    frame = plan.frames.get(name)
    if frame is None:
        return "read and checked"
    kinds = ", ".join(f"{n} {k}" for k, n in frame.geom_type.value_counts().sort_index().items())
    text = f"{len(frame)} feature(s)" + (f" ({kinds})" if kinds else "")
    if len(frame):
        text += f", {crs_label(frame.crs)}"
    if name == "plate_boundaries" and len(frame):
        counts = frame["boundary_type"].value_counts().sort_index()
        text += "; " + ", ".join(f"{t} {n}" for t, n in counts.items())
    return text


def output_state(plan: RunPlan, out_dir: Path | None, overwrite: bool) -> str:
    """What a run would do with the output folder; raises as the run would refuse it."""
    if out_dir is None:
        return "not checked (give --out to check it)"
    where = runner.check_output_location(out_dir, overwrite, plan)
    if not where.exists():
        return f"{where} (would be created)"
    if any(where.iterdir()):
        return f"{where} (exists; geomelt's outputs in it would be replaced)"
    return f"{where} (exists and is empty)"


def print_report(plan: RunPlan, out_state: str) -> list[str]:
    """Print what a run would do; return the warnings (of the plan and the value pre-scan)."""
    cfg = plan.config
    ref = cfg.run["reference_grid"]
    found = list(plan.warnings)
    click.echo(f"configuration: {cfg.source or '(command line only)'}")
    click.echo(f"reference grid: '{ref}' ({cfg.inputs[ref].name}): {plan.grid.describe()}")
    click.echo(f"block size: {plan.block_size} cells")
    click.echo("inputs:")
    width = max(len(n) for n in INPUT_LAYERS)
    for name, path in sorted(plan.raster_inputs.items()):
        with warnings.catch_warnings():  # its warnings are already in the plan's
            warnings.simplefilter("ignore", GeomeltWarning)
            scan = scan_raster_values(path, name, plan.grid)
        how = (
            "on the reference grid"
            if scan.on_reference_grid
            else f"reprojected onto the reference grid ({INPUT_LAYERS[name].resampling})"
        )
        click.echo(f"  {name:<{width}}  {path.name}: {how}; {scan.describe()}")
        found += [w for w in scan.warnings if w not in found]
        if scan.overlap_share < 0.999 and not INPUT_LAYERS[name].sparse:
            found.append(
                f"input layer '{name}' covers only {100 * scan.overlap_share:.0f} % of the "
                "reference grid; cells outside it are nodata"
            )
    for name, path in sorted(plan.vector_inputs.items()):
        click.echo(f"  {name:<{width}}  {path.name}: {_vector_line(plan, name)}")
    unused = sorted(set(cfg.inputs) - set(plan.raster_inputs) - set(plan.vector_inputs))
    for name in unused:
        click.echo(f"  {name:<{width}}  {cfg.inputs[name].name}: not used by these algorithms")
    click.echo("algorithms (in run order):")
    for alg in plan.algorithms:
        click.echo(f"  {alg.id} {alg.version}: {alg.title}")
    written = [o.name for _, o in plan.outputs if o.written]
    click.echo(
        f"outputs: {len(written)} GeoTIFF(s), {RESULTS_GPKG}, report.html and quicklook/*.png"
    )
    click.echo("  " + ", ".join(f"{n}.tif" for n in written))
    click.echo(f"output folder: {out_state}")
    for note in plan.notes:
        if not _covered(note):
            click.echo(f"note: {note}")
    return found


def _covered(note: str) -> bool:
    """True for the plan notes the report above already says in more detail."""
    return (
        note.startswith("reference grid from")
        or note.endswith("feature(s) read and checked")
        or "will be reprojected onto the reference grid" in note
        or note.endswith("raster output(s)")
    )


@click.command("check")
@click.argument("config", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "-o",
    "--out",
    "out_dir",
    type=click.Path(path_type=Path),
    default=None,
    help="Also check this output folder, as 'run' would (nothing is created).",
)
@click.option("--overwrite", is_flag=True, help="Check the folder as 'run --overwrite' would.")
@input_option
@param_option
@algorithm_option("Check")
@click.option("--block-size", type=int, default=None, help="Window size in cells (multiple of 16).")
@verbosity
@handle_errors
def check_cmd(config, out_dir, overwrite, inputs, params, algorithm_ids, block_size) -> None:
    """Check CONFIG and its inputs and print what 'geomelt run' would do; write nothing.

    Exit codes as for run: 0 usable (warnings may be listed), 2 configuration
    or parameter error, 3 input layer error, 4 output location refused.
    """
    cfg = config_with_overrides(config, inputs, params, block_size)
    plan = plan_run(cfg, list(algorithm_ids) or None)
    found = print_report(plan, output_state(plan, out_dir, overwrite))
    if found:
        click.echo(f"{len(found)} warning(s):")
        for text in found:
            click.echo(f"  - {text}")
    else:
        click.echo("no warnings")
    click.echo("OK: a run with this configuration can start; nothing was written.")
    click.echo(f"CAUTION: {geomelt.CAUTION}")
