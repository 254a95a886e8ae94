"""``geomelt column``: explain one column, from a run's inputs at a place or typed-in values."""

from __future__ import annotations

import json
import math
from pathlib import Path

import click

import geomelt
from geomelt.cli.options import handle_errors, param_option, parse_assignments, verbosity
from geomelt.errors import ConfigError
from geomelt.io.config import RunConfig, load_config, parse_value
from geomelt.io.plots import column_plot_png
from geomelt.io.rasters import sample_inputs_at
from geomelt.pipeline.column import ColumnProbe, probe_column
from geomelt.pipeline.runner import plan_run, resolve_chain


def _print_probe(probe: ColumnProbe) -> None:
    loc = probe.location
    if loc:
        click.echo(
            f"column at x={loc['x']:.6g}, y={loc['y']:.6g} ({loc['crs']}); lon {loc['lon']:.4f}, "
            f"lat {loc['lat']:.4f}; grid cell row {loc['row']}, col {loc['col']}"
        )
    click.echo("inputs:")
    for k, v in probe.inputs.items():
        click.echo(f"  {k:<28} {v:10.3f}" if math.isfinite(v) else f"  {k:<28}     nodata")
    click.echo("results:")
    for k, v in probe.results.items():
        click.echo(f"  {k:<28} {v:10.3f}" if math.isfinite(v) else f"  {k:<28}     nodata")
    click.echo("why:")
    for line in probe.decisions:
        click.echo(f"  - {line}")
    click.echo(
        f"{'depth_km':>9} {'geotherm_c':>11} {'adiabat_c':>10} {'dry_sol_c':>10} "
        f"{'wet_sol_c':>10} {'path_c':>8} {'melt_frac':>10}"
    )

    def fmt(v, w, p=0):
        return f"{v:{w}.{p}f}" if math.isfinite(v) else " " * (w - 1) + "-"

    step = max(1, int(round(10.0 / (probe.depth_km[1] - probe.depth_km[0]))))
    for i in range(0, probe.depth_km.size, step):
        click.echo(
            f"{probe.depth_km[i]:9.0f} {fmt(probe.geotherm_c[i], 11)} {fmt(probe.adiabat_c[i], 10)} "
            f"{fmt(probe.dry_solidus_c[i], 10)} {fmt(probe.wet_solidus_c[i], 10)} "
            f"{fmt(probe.melting_path_c[i], 8)} {fmt(probe.melt_fraction[i], 10, 3)}"
        )


@click.command("column")
@click.argument("config", required=False, type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--at",
    "at_xy",
    nargs=2,
    type=float,
    metavar="X Y",
    help="Location in the CRS given by --crs (default: the reference grid's CRS).",
)
@click.option("--crs", default=None, help="CRS of --at, e.g. EPSG:4326 (default: grid CRS).")
@click.option("--lonlat", nargs=2, type=float, metavar="LON LAT", help="Location in degrees.")
@click.option("--heat-flow-mw-m2", type=float, help="Typed-in surface heat flow (no CONFIG).")
@click.option("--crustal-thickness-km", type=float, help="Typed-in crustal thickness.")
@click.option("--slab-depth-km", type=float, help="Typed-in slab depth (omit: no slab).")
@click.option("--potential-temperature-c", type=float, help="Mantle potential temperature.")
@click.option("--water-wt-pct", type=float, help="Bulk water of the mantle source, wt%.")
@param_option
@click.option(
    "--plot",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Write a temperature-depth PNG of the column here.",
)
@click.option("--json", "as_json", is_flag=True, help="Print the column as JSON.")
@verbosity
@handle_errors
def column_cmd(
    config,
    at_xy,
    crs,
    lonlat,
    heat_flow_mw_m2,
    crustal_thickness_km,
    slab_depth_km,
    potential_temperature_c,
    water_wt_pct,
    params,
    plot,
    as_json,
):
    """Explain why (and how much) one column melts.

    Either give CONFIG and a place (--at X Y [--crs ...] or --lonlat LON LAT)
    to read the run's inputs there, or type the values in
    (--heat-flow-mw-m2 and --crustal-thickness-km, optionally --slab-depth-km).
    """
    overrides = {k: parse_value(v) for k, v in parse_assignments(params, "--param").items()}
    if potential_temperature_c is not None:
        overrides["mantle_potential_temperature_c"] = potential_temperature_c
    if water_wt_pct is not None:
        overrides["mantle_water_wt_pct"] = water_wt_pct
    location: dict = {}
    extra: dict = {}
    if config is not None:
        if (at_xy is None) == (lonlat is None):
            msg = "give exactly one place: --at X Y (with optional --crs) or --lonlat LON LAT"
            raise ConfigError(msg)
        cfg = load_config(config).with_overrides(parameters=overrides)
        plan = plan_run(cfg)
        if lonlat is not None:
            x, y, where_crs = lonlat[0], lonlat[1], "EPSG:4326"
        else:
            x, y, where_crs = at_xy[0], at_xy[1], crs
        values, location = sample_inputs_at(plan.grid, plan.raster_inputs, x, y, where_crs)
        extra = dict(plan.vectors)
        extra["cell_lon_deg"], extra["cell_lat_deg"] = location["lon"], location["lat"]
        algorithms, parameters = plan.algorithms, plan.parameters
    else:
        if heat_flow_mw_m2 is None or crustal_thickness_km is None:
            msg = (
                "without CONFIG, give at least --heat-flow-mw-m2 and --crustal-thickness-km "
                "(and optionally --slab-depth-km)"
            )
            raise ConfigError(msg)
        values = {
            "crustal_thickness_km": crustal_thickness_km,
            "heat_flow_mw_m2": heat_flow_mw_m2,
            "slab_depth_km": slab_depth_km if slab_depth_km is not None else math.nan,
        }
        algorithms, parameters = resolve_chain(RunConfig(parameters=overrides))
        # No place: boundary distances are unknown (nodata), so the setting rules see no
        # boundary nearby.
        extra = {"cell_lon_deg": math.nan, "cell_lat_deg": math.nan}
    probe = probe_column(values, algorithms, parameters, extra)
    probe.location = location
    if as_json:
        click.echo(json.dumps(probe.as_dict(), indent=1, allow_nan=False))
    else:
        _print_probe(probe)
    if plot is not None:
        where = (
            f"lon {location['lon']:.2f}, lat {location['lat']:.2f}"
            if location
            else f"{values['heat_flow_mw_m2']:g} mW/m2, crust {values['crustal_thickness_km']:g} km"
        )
        column_plot_png(plot, probe, f"geomelt column: {where}", footnote=geomelt.CAUTION)
        if not as_json:
            click.echo(f"plot written to {plot}")
    if not as_json:
        click.echo(f"CAUTION: {geomelt.CAUTION}")
