"""Plan and execute a geomelt run window by window.

:func:`plan_run` resolves algorithms, parameters, inputs and the reference
grid without writing anything. :func:`execute_run` reads every input window
on the reference grid, runs the algorithm chain on the arrays, and writes each
output window. Outputs are staged in a hidden folder inside the output folder
and moved into place only when complete.
"""

from __future__ import annotations

import dataclasses
import difflib
import hashlib
import json
import logging
import math
import os
import shutil
import time
import warnings
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import rasterio
from rasterio.enums import Resampling

import geomelt
from geomelt.algorithms import Algorithm, algorithm_chain, registered_algorithms
from geomelt.classes import SCHEMES
from geomelt.constants import CONSTANTS
from geomelt.errors import (
    GeomeltIOError,
    GeomeltWarning,
    MissingLayerError,
    OutputExistsError,
    ParameterError,
)
from geomelt.io.config import RunConfig
from geomelt.io.geopackage import write_run_metadata
from geomelt.io.geotiff import GeoTiffWriter
from geomelt.io.prospects import prospect_polygons, standard_screens, write_prospects_layer
from geomelt.io.rasters import AlignedRaster, RasterGrid, check_raster_values, read_grid
from geomelt.io.vectors import read_hotspots, read_plate_boundaries
from geomelt.layers import GRID_LAYERS, INPUT_LAYERS, NEIGHBOURHOOD_LAYERS, OutputLayer
from geomelt.parameters import ParameterSet
from geomelt.pipeline import products, reporting, summaries
from geomelt.pipeline.engines import (
    OUTSIDE_CALIBRATION,
    SecondPassComputer,
    bounded_gdal_cache,
    carry_path,
    default_workers,
    iterate_windows,
    release_free_memory,
)
from geomelt.pipeline.neighbourhood import MeltProximityCollector, melt_mask
from geomelt.pipeline.writing import OutputSink, write_threads
from geomelt.tectonics.boundaries import BoundarySet, suggest_tile_km
from geomelt.tectonics.hotspots import HotspotSet

__all__ = [
    "OutputStats",
    "RunPlan",
    "RunResult",
    "check_output_location",
    "execute_run",
    "finish_outputs",
    "open_output_writer",
    "plan_run",
    "resolve_chain",
]

log = logging.getLogger(__name__)

STAGING_DIR = ".geomelt-partial"
MANIFEST = ".geomelt-manifest.json"
RESULTS_GPKG = "results.gpkg"


@dataclass
class OutputStats:
    """Running statistics of one output layer."""

    name: str
    unit: str
    minimum: float = np.inf
    maximum: float = -np.inf
    total: float = 0.0
    valid_cells: int = 0
    nodata_cells: int = 0

    def update(self, arr: np.ndarray, nodata: float) -> None:
        a = np.asarray(arr)
        if a.dtype.kind == "f":
            valid = np.isfinite(a)
            if not np.isnan(nodata):
                valid &= a != nodata
        else:
            valid = a != nodata
        n = int(np.count_nonzero(valid))
        self.valid_cells += n
        self.nodata_cells += int(a.size - n)
        if n:
            v = a if n == a.size else a[valid]
            self.minimum = min(self.minimum, float(v.min()))
            self.maximum = max(self.maximum, float(v.max()))
            self.total += float(v.sum(dtype=np.float64))

    @property
    def mean(self) -> float:
        return self.total / self.valid_cells if self.valid_cells else float("nan")

    def as_dict(self) -> dict[str, Any]:
        has = self.valid_cells > 0
        return {
            "unit": self.unit,
            "min": self.minimum if has else None,
            "max": self.maximum if has else None,
            "mean": self.mean if has else None,
            "valid_cells": self.valid_cells,
            "nodata_cells": self.nodata_cells,
        }


@dataclass
class RunPlan:
    """Everything a run will do, resolved and checked, before anything is written."""

    config: RunConfig
    algorithms: list[Algorithm]
    parameters: dict[str, ParameterSet]
    raster_inputs: dict[str, Path]
    vector_inputs: dict[str, Path]
    grid: RasterGrid
    outputs: list[tuple[Algorithm, OutputLayer]]
    block_size: int
    notes: list[str] = field(default_factory=list)
    vectors: dict[str, Any] = field(default_factory=dict)
    """Vector inputs prepared for the algorithms (e.g. ``hotspots`` as a HotspotSet)."""
    grid_layers: set[str] = field(default_factory=set)
    """Grid-derived layers (cell longitude/latitude) some algorithm reads."""
    frames: dict[str, Any] = field(default_factory=dict)
    """Vector inputs as read (GeoDataFrames), for the vector products and maps."""
    warnings: list[str] = field(default_factory=list)
    """Problems found in the inputs that a run can live with (reported with the run's)."""
    stages: list[list[Algorithm]] = field(default_factory=list)
    """Algorithms of the first pass, and of the second pass (those that read whole-grid
    layers such as the distance to melt) when there is one."""
    carry: tuple[str, ...] = ()
    """First-pass arrays the second pass reads, kept per window in the staging folder."""
    reducers: list[Any] = field(default_factory=list)
    """Totals gathered window by window (:mod:`geomelt.pipeline.summaries`)."""

    def as_dict(self) -> dict[str, Any]:
        """JSON-ready summary of the plan."""
        return {
            "grid": {
                "crs": self.grid.crs.to_string(),
                "width": self.grid.width,
                "height": self.grid.height,
                "transform": list(self.grid.transform)[:6],
                "reference_layer": self.config.run["reference_grid"],
            },
            "algorithms": [a.id for a in self.algorithms],
            "inputs": {k: str(v) for k, v in {**self.raster_inputs, **self.vector_inputs}.items()},
            "outputs": [f"{o.name}.tif" for _, o in self.outputs if o.written]
            + [RESULTS_GPKG, "report.html"],
            "block_size": self.block_size,
            "passes": [[a.id for a in stage] for stage in self.stages],
            "notes": self.notes,
            "warnings": self.warnings,
        }


@dataclass
class RunResult:
    """What a finished run wrote and measured."""

    out_dir: Path
    files: list[Path]
    stats: dict[str, OutputStats]
    warnings: list[str]
    grid: RasterGrid
    elapsed_s: float
    outside_calibration: dict[str, int] = field(default_factory=dict)
    """Per output: cells with valid inputs its method left without a value (outside its
    calibrated range)."""
    report: Path | None = None
    """The HTML run report."""
    prospects: int = 0
    """Prospect polygons written to results.gpkg."""
    melt_production_km3_yr: float | None = None
    """Melt made in the whole region per year (when the run computes productivity)."""
    phases_s: dict[str, float] = field(default_factory=dict)
    """Wall time of each step of the run in seconds (logged with -v)."""


class _PhaseClock:
    """Wall time of the consecutive steps of a run, for the log and the benchmark."""

    def __init__(self) -> None:
        self.phases: dict[str, float] = {}
        self._last = time.perf_counter()
        self._last_cpu = time.process_time()

    def lap(self, name: str) -> None:
        now, cpu = time.perf_counter(), time.process_time()
        wall = now - self._last
        self.phases[name] = self.phases.get(name, 0.0) + wall
        log.info(
            "step %s took %.1f s, %.1f CPU s on all threads (peak memory so far %.0f MiB)",
            name,
            wall,
            cpu - self._last_cpu,
            _peak_rss_mib(),
        )
        self._last, self._last_cpu = now, cpu


def _peak_rss_mib() -> float:
    """Peak resident memory of this process so far, MiB (0 where unknown)."""
    try:
        import resource
    except ImportError:  # not on Windows
        return 0.0
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # KiB on Linux


def _resolve_parameters(config: RunConfig, algorithms: list[Algorithm]) -> dict[str, ParameterSet]:
    known: dict[str, str] = {}
    # parameters of every registered algorithm are known, so that one configuration serves
    # runs of a few algorithms (-a) too; those of algorithms not run are validated and unused
    for alg in list(algorithms) + list(registered_algorithms().values()):
        for f in dataclasses.fields(alg.parameters):
            known.setdefault(f.name, alg.id)
    unknown = sorted(set(config.parameters) - set(known))
    if unknown:
        hints = []
        for name in unknown:
            close = difflib.get_close_matches(name, list(known), n=1)
            hints.append(f"{name!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
        msg = (
            f"unknown parameter(s) {', '.join(hints)}. Run 'geomelt describe ALGORITHM' to list "
            "each algorithm's parameters with units and valid ranges."
        )
        raise ParameterError(msg)
    chosen = {alg.id for alg in algorithms}
    for alg in registered_algorithms().values():
        if alg.id not in chosen:  # refuse bad values even where they go unused
            alg.parameters.from_mapping(config.parameters)
    return {alg.id: alg.parameters.from_mapping(config.parameters) for alg in algorithms}


def resolve_chain(
    config: RunConfig, algorithm_ids: list[str] | None = None
) -> tuple[list[Algorithm], dict[str, ParameterSet]]:
    """The algorithms to run (dependency order) and each one's validated parameters."""
    algorithms = algorithm_chain(algorithm_ids)
    return algorithms, _resolve_parameters(config, algorithms)


@bounded_gdal_cache()
def plan_run(config: RunConfig, algorithm_ids: list[str] | None = None) -> RunPlan:
    """Resolve and check a run without writing anything.

    Problems in the inputs that a run can live with end in ``RunPlan.warnings``.

    Raises
    ------
    ParameterError, MissingLayerError, InputLayerError, LayerMismatchError
        With a message naming the parameter or layer and the fix.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeomeltWarning)
        plan = _plan_run(config, algorithm_ids)
    for w in caught:
        if not issubclass(w.category, GeomeltWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        elif str(w.message) not in plan.warnings:
            plan.warnings.append(str(w.message))
    return plan


def _plan_run(config: RunConfig, algorithm_ids: list[str] | None) -> RunPlan:
    algorithms, params = resolve_chain(config, algorithm_ids)

    needed: set[str] = set()
    optional: set[str] = set()
    for alg in algorithms:
        needed.update(n for n in alg.inputs if n in INPUT_LAYERS)
        optional.update(n for n in alg.optional_inputs if n in INPUT_LAYERS)
    ref_name = config.run["reference_grid"]
    needed.add(ref_name)
    for name in sorted(needed):
        if name not in config.inputs:
            users = [a.id for a in algorithms if name in a.inputs] or ["the reference grid"]
            msg = (
                f"input layer '{name}' ({INPUT_LAYERS[name].description}, "
                f"{INPUT_LAYERS[name].unit or 'vector'}) is required by {', '.join(users)} but "
                f"was not given. Add it to the [inputs] table or pass --input {name}=PATH."
            )
            raise MissingLayerError(msg)

    grid = read_grid(config.inputs[ref_name], ref_name)
    notes = [f"reference grid from '{ref_name}': {grid.describe()}"]
    raster_inputs: dict[str, Path] = {}
    vector_inputs: dict[str, Path] = {}
    for name, path in config.inputs.items():
        layer = INPUT_LAYERS[name]
        if layer.kind == "raster":
            if name in needed or name in optional:
                raster_inputs[name] = path
        else:
            vector_inputs[name] = path
    value_warnings: list[str] = []
    for name, path in sorted(raster_inputs.items()):
        value_warnings += check_raster_values(path, name, grid)
    for name, path in sorted(raster_inputs.items()):
        if name == ref_name:
            continue
        src = read_grid(path, name)
        if not src.same_as(grid):
            notes.append(
                f"'{name}' ({src.describe()}) will be reprojected onto the reference grid "
                f"with {INPUT_LAYERS[name].resampling} resampling"
            )
    vectors: dict[str, Any] = {}
    frames: dict[str, Any] = {}
    for name, path in sorted(vector_inputs.items()):
        if name == "plate_boundaries":
            gdf = read_plate_boundaries(path)
            vectors[name] = BoundarySet.from_frame(gdf, tile_km=suggest_tile_km(_cell_km(grid)))
        else:
            gdf = read_hotspots(path)
            vectors[name] = HotspotSet.from_frame(gdf)
        frames[name] = gdf
        notes.append(f"'{name}': {len(gdf)} feature(s) read and checked")
    stages, carry = _split_passes(algorithms, set(raster_inputs) | set(vectors))
    produced = {o.name for alg in algorithms for o in alg.output_layers(params[alg.id])}
    reducers: list[Any] = []
    if "setting" in produced:
        reducers.append(
            summaries.SettingTotals(
                tuple(n for n in summaries.PRODUCTION_BY_SETTING if n in produced)
            )
        )
    if "setting" in produced and all(
        layer in produced for _, layer in summaries.GEOTHERMAL_REACH_LAYERS
    ):
        reach = params["thermal_state"].screening_temperature_depth_km
        reducers.append(summaries.GeothermalReach(reach))
    if "plate_boundaries" in frames and all(
        layer in produced for _, layer in summaries.SEGMENT_PRODUCTION
    ):
        reducers.append(summaries.SegmentTotals(len(frames["plate_boundaries"])))
    grid_layers = {
        n for alg in algorithms for n in alg.inputs + alg.optional_inputs if n in GRID_LAYERS
    }
    grid_layers |= {n for r in reducers for n in r.inputs if n in GRID_LAYERS}
    if len(stages) > 1:
        notes.append(
            "two passes: " + ", ".join(a.id for a in stages[1]) + " read(s) layers that need "
            "the whole grid ("
            + ", ".join(sorted(n for a in stages[1] for n in a.inputs if n in NEIGHBOURHOOD_LAYERS))
            + ")"
        )

    outputs: list[tuple[Algorithm, OutputLayer]] = []
    seen: dict[str, str] = {}
    for alg in algorithms:
        for out in alg.output_layers(params[alg.id]):
            if out.name in seen:
                msg = f"output {out.name!r} is produced by both {seen[out.name]} and {alg.id}"
                raise ParameterError(msg)
            seen[out.name] = alg.id
            outputs.append((alg, out))
    input_paths = {p.resolve() for p in config.inputs.values()}
    return RunPlan(
        config=config,
        algorithms=algorithms,
        parameters=params,
        raster_inputs=raster_inputs,
        vector_inputs=vector_inputs,
        grid=grid,
        outputs=outputs,
        block_size=int(config.run["block_size"]),
        notes=notes + [f"{len(input_paths)} input file(s); {len(outputs)} raster output(s)"],
        vectors=vectors,
        grid_layers=grid_layers,
        frames=frames,
        warnings=value_warnings,
        stages=stages,
        carry=carry,
        reducers=reducers,
    )


def _split_passes(
    algorithms: list[Algorithm], available: set[str]
) -> tuple[list[list[Algorithm]], tuple[str, ...]]:
    """First-pass and second-pass algorithms, and the arrays the second pass reads.

    An algorithm runs in the second pass when it reads a whole-grid layer
    (:data:`geomelt.layers.NEIGHBOURHOOD_LAYERS`) or an output of a second-pass
    algorithm.
    """
    second: list[Algorithm] = []
    second_outputs: set[str] = set()
    for alg in algorithms:
        reads = set(alg.inputs) | set(alg.optional_inputs)
        if reads & set(NEIGHBOURHOOD_LAYERS) or reads & second_outputs:
            second.append(alg)
            second_outputs |= {o.name for o in alg.output_layers()}
    if not second:
        return [list(algorithms)], ()
    first = [a for a in algorithms if a not in second]
    first_outputs = {o.name for a in first for o in a.output_layers()}
    carry: list[str] = []
    for alg in second:
        for name in alg.inputs + alg.optional_inputs:
            if name in NEIGHBOURHOOD_LAYERS:
                wanted = NEIGHBOURHOOD_LAYERS[name].sources
            elif name in GRID_LAYERS or name in second_outputs:
                continue
            elif name in INPUT_LAYERS and INPUT_LAYERS[name].kind != "raster":
                continue
            else:
                wanted = (name,)
            for n in wanted:
                if n not in carry and (n in first_outputs or n in available):
                    carry.append(n)
    return [first, second], tuple(carry)


def _cell_km(grid: RasterGrid) -> float:
    """Approximate cell size of the grid in km (for search tiling only)."""
    dx, dy = grid.cell_size
    if grid.is_geographic:
        left, bottom, right, top = grid.bounds
        mid_lat = math.radians(max(-89.0, min(89.0, 0.5 * (bottom + top))))
        return max(1e-3, 0.5 * (dx * math.cos(mid_lat) + dy) * 111.32)
    factor = grid.crs.linear_units_factor[1] if grid.crs is not None else 1.0
    return max(1e-3, 0.5 * (dx + dy) * factor / 1000.0)


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def check_output_location(out_dir, overwrite: bool, plan: RunPlan) -> Path:
    """Refuse an output folder a run must not write to, writing nothing; return it resolved.

    Raises
    ------
    OutputExistsError
        It is a file, holds files and ``overwrite`` is not set, or an output
        would replace an input.
    GeomeltIOError
        It cannot be created (a parent is a file or is not writable).
    """
    out_dir = Path(out_dir).expanduser().resolve()
    if out_dir.exists() and not out_dir.is_dir():
        msg = f"output location {str(out_dir)!r} exists and is not a folder; choose a folder."
        raise OutputExistsError(msg)
    finals = {out_dir / f"{o.name}.tif" for _, o in plan.outputs if o.written}
    finals.add(out_dir / RESULTS_GPKG)
    for name, path in plan.config.inputs.items():
        if path.resolve() in finals:
            msg = (
                f"output folder {str(out_dir)!r} would overwrite the input layer '{name}' "
                f"({path.name}); choose another output folder."
            )
            raise OutputExistsError(msg)
    if out_dir.exists():
        existing = [p for p in out_dir.iterdir() if p.name != STAGING_DIR]
        if existing and not overwrite:
            msg = (
                f"output folder {str(out_dir)!r} already exists and is not empty. Choose a new "
                "folder or pass --overwrite to replace geomelt's outputs in it."
            )
            raise OutputExistsError(msg)
    parent = out_dir
    while not parent.exists():
        parent = parent.parent
    if not parent.is_dir() or not os.access(parent, os.W_OK | os.X_OK):
        why = "is a file, not a folder" if not parent.is_dir() else "is not writable"
        msg = (
            f"cannot create output folder {str(out_dir)!r}: {str(parent)!r} {why}. Choose "
            "an output folder in a writable location."
        )
        raise GeomeltIOError(msg)
    return out_dir


def _prepare_out_dir(out_dir: Path, overwrite: bool, plan: RunPlan) -> Path:
    out_dir = check_output_location(out_dir, overwrite, plan)
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        staging = out_dir / STAGING_DIR
        if staging.exists():
            shutil.rmtree(staging)
        staging.mkdir()
    except OSError as exc:
        msg = f"cannot create output folder {str(out_dir)!r}: {exc.strerror or exc}."
        raise GeomeltIOError(msg) from None
    return staging


@bounded_gdal_cache()
def execute_run(
    plan: RunPlan,
    out_dir,
    *,
    overwrite: bool = False,
    progress: bool = False,
    on_window: Callable[[int, int], None] | None = None,
    engine: str = "threads",
    workers: int = 0,
    scheduler: str | None = None,
) -> RunResult:
    """Run the plan and write every output into ``out_dir``.

    Parameters
    ----------
    plan : RunPlan
        From :func:`plan_run`.
    out_dir : path-like
        Output folder; refused when it exists and is not empty, unless
        ``overwrite``.
    overwrite : bool
        Replace geomelt's outputs in an existing folder.
    progress : bool
        Show a progress bar on stderr.
    on_window : callable, optional
        Called as ``on_window(done, total)`` after each window.
    engine : {"threads", "serial", "dask"}
        Where windows are computed (see :mod:`geomelt.pipeline.engines`); the
        pixels are the same with every engine.
    workers : int
        Worker threads or local dask processes; 0 means one per core.
    scheduler : str, optional
        dask scheduler address, or ``"local"`` for a local cluster.
    """
    t0 = time.perf_counter()
    clock = _PhaseClock()
    out_dir = Path(out_dir).expanduser().resolve()
    staging = _prepare_out_dir(out_dir, overwrite, plan)
    release_free_memory()  # what planning read (input checks, reprojection) is not kept
    # Finished files wait in ``ready`` until every output is done, then all move into place
    # together: a failed or killed run leaves no output of its own under a final name.
    ready = staging / "ready"
    ready.mkdir()
    grid = plan.grid
    input_meta = {
        name: {"file": path.name, "sha256": _sha256(path)}
        for name, path in sorted(plan.config.inputs.items())
    }
    run_warnings: list[str] = list(plan.warnings)
    written = [(alg, o) for alg, o in plan.outputs if o.written]
    stats = {o.name: OutputStats(o.name, o.unit) for _, o in written}
    writers: dict[str, GeoTiffWriter] = {}
    readers: dict[str, AlignedRaster] = {}
    implausible: dict[str, int] = {}
    flagged: dict[str, int] = {}
    totals: dict[str, np.ndarray] = {}
    by_name = {o.name: o for _, o in written}
    sink: OutputSink | None = None
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            for name, path in sorted(plan.raster_inputs.items()):
                resampling = Resampling[INPUT_LAYERS[name].resampling]
                readers[name] = AlignedRaster(path, name, grid, resampling=resampling)
                if readers[name].overlap_fraction < 0.999 and not INPUT_LAYERS[name].sparse:
                    run_warnings.append(
                        f"input layer '{name}' covers only "
                        f"{100 * readers[name].overlap_fraction:.0f} % of the reference grid; "
                        "cells outside it are nodata"
                    )
            for alg, out in written:
                writers[out.name] = open_output_writer(
                    plan, alg, out, ready / f"{out.name}.tif", staging, input_meta
                )
            for reader in readers.values():
                reader.close()
            readers.clear()
            clock.lap("open")
            windows = list(grid.windows(plan.block_size))
            n_steps = len(windows) * len(plan.stages)
            bar = _progress_bar(n_steps, progress)
            two_pass = len(plan.stages) > 1
            carry_dir = staging / "carry"
            collector = None
            if two_pass:
                carry_dir.mkdir()
                if any("distance_to_melt_km" in a.inputs for a in plan.stages[1]):
                    collector = MeltProximityCollector(grid)
            done = 0

            def inspect(name: str, values: np.ndarray) -> None:
                # On the writer thread that owns output ``name`` (see OutputSink).
                out = by_name[name]
                stats[name].update(values, out.nodata)
                if out.flag_message:
                    flagged[name] = flagged.get(name, 0) + int(np.count_nonzero(values == 1))

            sink = OutputSink(writers, write_threads(workers), inspect)

            def consume(results) -> None:
                nonlocal done
                for result in results:
                    arrays, window = result.arrays, result.window
                    for name, n in result.implausible.items():
                        implausible[name] = implausible.get(name, 0) + n
                    sink.put(window, arrays)
                    summaries.add_summaries(totals, result.summaries)
                    if result.carry:
                        np.savez(carry_path(carry_dir, window), **result.carry)
                        if collector is not None:
                            collector.add(window, melt_mask(result.carry["melting_mechanism"]))
                    # Let go of the window's arrays before waiting for the next one.
                    result = arrays = None
                    done += 1
                    bar.update(1)
                    if on_window is not None:
                        on_window(done, n_steps)

            consume(iterate_windows(plan, windows, engine, workers, scheduler))
            release_free_memory()
            clock.lap("first_pass")
            if two_pass:
                fields = {}
                if collector is not None:
                    field_ = collector.finish(workers or default_workers())
                    fields["distance_to_melt_km"] = field_
                    proximity_note = (
                        f"distance to melt measured to {field_.n_edge_cells} melt-edge cell(s) on "
                        f"a lattice of every {field_.stride} cell(s)"
                    )
                    plan.notes.append(proximity_note)
                clock.lap("distance_field")
                second = SecondPassComputer(plan, carry_dir, fields)
                consume(iterate_windows(plan, windows, engine, workers, scheduler, computer=second))
                shutil.rmtree(carry_dir, ignore_errors=True)
                fields = second = collector = None
                release_free_memory()
                clock.lap("second_pass")
            sink.close()
            sink = None
            bar.close()
            files = finish_outputs(writers, workers)
            writers.clear()
            release_free_memory()
            clock.lap("finish_geotiffs")
        seen: set[str] = set(run_warnings)
        for w in caught:
            text = str(w.message)
            if text not in seen:
                seen.add(text)
                run_warnings.append(text)
        for _, out in written:
            if flagged.get(out.name):
                run_warnings.append(f"{flagged[out.name]} {out.flag_message}")
        for name, n in implausible.items():
            if n:
                lo, hi = INPUT_LAYERS[name].plausible_range
                run_warnings.append(
                    f"input layer '{name}': {n} cell(s) outside the plausible range "
                    f"{lo:g}-{hi:g} {INPUT_LAYERS[name].unit}; check its units"
                )
        gpkg_stage = staging / RESULTS_GPKG
        if (ready / "setting.tif").exists() and "setting" in stats:
            n = products.write_setting_polygons(gpkg_stage, ready)
            log.info("settings: %d polygon(s)", n)
            release_free_memory()  # each product step's grids, before the next one's
            clock.lap("setting_polygons")
        boundaries = None
        if "plate_boundaries" in plan.frames:
            segment_km3_yr = totals.get("segment_production_km3_yr")
            boundaries = products.boundaries_with_production(
                plan.frames["plate_boundaries"], segment_km3_yr
            )
            products.write_boundaries_layer(
                gpkg_stage, plan.frames["plate_boundaries"], segment_km3_yr
            )
        prospects = None
        screens = [s for s in standard_screens(*_screen_parameters(plan)) if s.score_layer in stats]
        if screens:
            min_area = _first_parameter(plan, "prospect_min_area_km2")
            prospects = prospect_polygons(ready, screens, min_area)
            write_prospects_layer(gpkg_stage, prospects)
            products.style_prospects_layer(gpkg_stage)
            log.info("prospects: %d polygon(s)", len(prospects))
        clock.lap("boundaries_and_prospects")
        outside = {
            name.removeprefix(OUTSIDE_CALIBRATION): int(values[0])
            for name, values in totals.items()
            if name.startswith(OUTSIDE_CALIBRATION)
        }
        records = _metadata_records(plan, input_meta, stats, run_warnings)
        records += reporting.totals_as_records(totals)
        for _, out in written:
            if out.name in outside:
                entry = {"cells": outside[out.name], "where": out.calibration}
                records.append(("outside_calibration", f"{out.name}.tif", json.dumps(entry)))
        write_run_metadata(gpkg_stage, records)
        release_free_memory()  # before matplotlib comes in
        pairs = products.write_quicklooks(
            staging,
            ready,
            boundaries=plan.frames.get("plate_boundaries"),
            hotspots=plan.frames.get("hotspots"),
            prospects=prospects,
        )
        clock.lap("quicklooks")
        figures = [(_quicklook_title(staged), staged) for staged, _ in pairs]
        report_stage = staging / reporting.REPORT_NAME
        final_names = [p.relative_to(ready).as_posix() for p in files] + [RESULTS_GPKG]
        reporting.write_run_report(
            report_stage,
            plan=plan,
            out_dir=out_dir,
            figures=figures,
            stats=stats,
            totals=totals,
            boundaries=boundaries,
            prospects=prospects,
            warnings=run_warnings,
            input_meta=input_meta,
            elapsed_s=time.perf_counter() - t0,
            outside_calibration=outside,
            files=[n for n in final_names if n.endswith((".tif", ".gpkg"))],
        )
        files.extend(products.move_into_place(pairs))
        os.replace(report_stage, ready / reporting.REPORT_NAME)
        files.append(ready / reporting.REPORT_NAME)
        os.replace(gpkg_stage, ready / RESULTS_GPKG)
        files.append(ready / RESULTS_GPKG)
        files = products.move_into_place([(p, out_dir / p.relative_to(ready)) for p in files])
        _replace_manifest(out_dir, files, keep={p.resolve() for p in plan.config.inputs.values()})
        clock.lap("report_and_move")
    except BaseException:
        if sink is not None:
            sink.abandon()
        for reader in readers.values():
            reader.close()
        for writer in writers.values():
            writer.abort()
        raise
    finally:
        shutil.rmtree(staging, ignore_errors=True)
    for text in run_warnings:
        log.warning(text)
    total = totals.get("melt_production_m3_km2_yr_km3_yr")
    return RunResult(
        out_dir=out_dir,
        files=files,
        stats=stats,
        warnings=run_warnings,
        grid=grid,
        elapsed_s=time.perf_counter() - t0,
        outside_calibration=outside,
        report=out_dir / reporting.REPORT_NAME,
        prospects=0 if prospects is None else len(prospects),
        melt_production_km3_yr=None if total is None else float(total.sum()),
        phases_s=clock.phases,
    )


def _screen_parameters(plan: RunPlan) -> tuple[Any, Any, Any]:
    """Geothermal, mineral and thermal parameter sets of the run (None when not run)."""
    p = plan.parameters
    return (
        p.get("geothermal_screening"),
        p.get("mineral_screening"),
        p.get("thermal_state"),
    )


def _first_parameter(plan: RunPlan, name: str) -> Any:
    for params in plan.parameters.values():
        if hasattr(params, name):
            return getattr(params, name)
    return CONSTANTS[name].value


def _quicklook_title(png: Path) -> str:
    tif = png.parents[1] / "ready" / f"{png.stem}.tif"
    if not tif.exists():
        return png.stem.replace("_", " ").capitalize()
    with rasterio.open(tif) as ds:
        return ds.tags(1).get("long_name") or png.stem


def open_output_writer(
    plan: RunPlan, alg: Algorithm, out: OutputLayer, path: Path, staging: Path, input_meta
) -> GeoTiffWriter:
    """The GeoTIFF writer of one output, with its format, style and provenance tags."""
    return GeoTiffWriter(
        path,
        staging,
        plan.grid,
        dtype=out.dtype,
        nodata=out.nodata,
        description=out.name,
        unit=out.unit,
        categorical=out.categorical,
        scheme=SCHEMES[out.scheme] if out.scheme else None,
        block_size=plan.block_size,
        band_tags={"long_name": out.long_name, "description": out.description, "units": out.unit},
        dataset_tags={
            "producer": f"geomelt {geomelt.__version__}",
            "algorithm": f"{alg.id} {alg.version}",
            "parameters": plan.parameters[alg.id].as_dict(),
            "inputs": input_meta,
            "references": list(alg.references),
            "caution": geomelt.CAUTION,
        },
    )


def finish_outputs(writers: dict[str, GeoTiffWriter], workers: int = 0) -> list[Path]:
    """Finish every written output (see :meth:`GeoTiffWriter.finish`) and return the
    finished files and their sidecars, in the order of ``writers``.

    The working files are closed first, so their compression state is gone before the
    copies start; the copies run outside the GIL, one file per writer thread at a time.
    On an error the copies not started are cancelled and the others awaited.
    """
    for w in writers.values():
        w.close()
    release_free_memory()
    files: list[Path] = []
    with ThreadPoolExecutor(write_threads(workers), "geomelt-finish") as pool:
        try:
            finishing = {name: pool.submit(w.finish) for name, w in writers.items()}
            for name, w in writers.items():
                files.append(finishing[name].result())
                files.extend(w.sidecars)
        except BaseException:
            pool.shutdown(wait=True, cancel_futures=True)
            raise
    return files


def _progress_bar(total: int, enabled: bool):
    from tqdm import tqdm

    return tqdm(total=total, unit="window", desc="geomelt", disable=not enabled, leave=False)


def _replace_manifest(
    out_dir: Path, files: list[Path], keep: frozenset | set = frozenset()
) -> None:
    """Record what this run wrote; remove outputs of an earlier run that this run did not write
    (never a file in ``keep``: the run's inputs)."""
    manifest = out_dir / MANIFEST
    names = sorted(p.relative_to(out_dir).as_posix() for p in files)
    if manifest.exists():
        try:
            old = json.loads(manifest.read_text())["files"]
        except (ValueError, KeyError, TypeError):
            old = []
        for stale in set(old) - set(names):
            target = (out_dir / stale).resolve()
            # Only files inside the output folder that an earlier run listed.
            if isinstance(stale, str) and out_dir in target.parents and target not in keep:
                target.unlink(missing_ok=True)
    tmp = out_dir / (MANIFEST + ".tmp")
    tmp.write_text(json.dumps({"producer": "geomelt", "files": names}, indent=1))
    os.replace(tmp, manifest)


def _metadata_records(plan: RunPlan, input_meta, stats, run_warnings) -> list[tuple[str, str, str]]:
    import platform

    import numpy
    import pyogrio
    import pyproj

    rec: list[tuple[str, str, str]] = [
        ("run", "producer", f"geomelt {geomelt.__version__}"),
        ("run", "caution", geomelt.CAUTION),
        ("run", "finished_utc", time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())),
        ("run", "configuration", str(plan.config.source) if plan.config.source else ""),
        ("run", "algorithms", ", ".join(f"{a.id} {a.version}" for a in plan.algorithms)),
        ("grid", "crs", plan.grid.crs.to_wkt()),
        ("grid", "size", f"{plan.grid.width} x {plan.grid.height}"),
        ("grid", "transform", json.dumps(list(plan.grid.transform)[:6])),
        ("grid", "reference_layer", plan.config.run["reference_grid"]),
        ("versions", "python", platform.python_version()),
        ("versions", "numpy", numpy.__version__),
        ("versions", "rasterio", rasterio.__version__),
        ("versions", "gdal (rasterio)", rasterio.__gdal_version__),
        ("versions", "pyogrio", pyogrio.__version__),
        ("versions", "pyproj", pyproj.__version__),
    ]
    for name, meta in input_meta.items():
        rec.append(("input", name, json.dumps({"path": str(plan.config.inputs[name]), **meta})))
    for alg in plan.algorithms:
        p = plan.parameters[alg.id]
        consts = type(p).constants()
        for key, value in p.as_dict().items():
            unit = consts[key].unit
            rec.append(("parameter", f"{alg.id}.{key}", json.dumps({"value": value, "unit": unit})))
    for name, st in stats.items():
        rec.append(("output", f"{name}.tif", json.dumps(st.as_dict())))
    for note in plan.notes:
        rec.append(("note", "plan", note))
    for i, text in enumerate(run_warnings):
        rec.append(("warning", str(i + 1), text))
    return rec
