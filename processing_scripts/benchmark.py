#!/usr/bin/env python3
"""Benchmark geomelt against its I/O floor, a per-cell reference path and the dask engine.

Usage::

    python processing_scripts/benchmark.py --sizes 4096 8192 --repeats 3 \
        --out benchmark_output [--sample-cells 200] [--skip-dask]

For every size N the script

1. generates (once; cached in ``OUT/inputs/N``) the invented sample region at a finer
   scale with ``processing_scripts/make_sample_layers.py`` and crops its reference
   rasters to an N x N grid (see :func:`prepare_inputs`);
2. measures, each in a fresh subprocess whose peak resident memory is read from
   ``os.wait4`` (the kernel's ``ru_maxrss`` of that process and the descendants it
   waited for), together with the summed resident memory of the process tree sampled
   from ``/proc``:

   (a) ``io_floor`` - the same inputs read on the reference grid through geomelt's own
       window computer and engine (same readers, block size and threads) and the same
       output GeoTIFFs written with :class:`geomelt.io.geotiff.GeoTiffWriter` (dtype,
       profile, tags, style sidecars) through the run's writer threads
       (:class:`geomelt.pipeline.writing.OutputSink`) and finished as the run finishes
       them (:func:`geomelt.pipeline.runner.finish_outputs`: Cloud-Optimized GeoTIFFs
       with overviews), but filled with the pixels of an earlier run (or a cheap
       function of the inputs) instead of the physics; with the earlier run's pixels it
       also writes that run's other outputs (quick-look PNGs encoded again,
       ``results.gpkg`` and ``report.html`` copied), so that every output is counted;
   (b) ``geomelt`` - ``geomelt run CONFIG -o DIR --overwrite`` (default engine);
   (c) ``per_cell`` - the same physics for a seeded random sample of cells, one cell at a
       time with scalar calls (root finding for the lithosphere base, the reference
       ``solve_ivp`` melting column, scalar melt fractions, ``pyproj.Geod.inv`` to the
       densified boundary vertices); time per cell x valid cells = extrapolated time;
   (d) ``dask`` - ``geomelt run ... --engine dask --scheduler local -w 2``, whose
       GeoTIFFs are compared with those of (b) pixel by pixel (NaN equal to NaN);

3. prints min/median/max of every measurement, the ratios b/a, c/b and d/b (from the
   medians, and per repeat) and the peak memory against the targets, and writes every
   number to ``OUT/benchmark.json``.

The measurements of one repeat run back to back (a, b, c, d) so that the per-repeat
ratios compare runs made under the same machine load.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import platform
import shutil
import statistics
import subprocess
import sys
import threading
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
GENERATOR = REPO / "processing_scripts" / "make_sample_layers.py"

# Targets (design section 6 and the performance brief).
TARGET_RUN_OVER_FLOOR = 1.3  # full run <= 1.3 x I/O floor, checked at 4096 x 4096
TARGET_FLOOR_CHECK_SIZE = 4096
TARGET_PER_CELL_SPEEDUP = 1000.0  # full run >= 1000 x faster than the per-cell path
TARGET_PEAK_RSS_MIB = 400.0  # at 4096^2 and 8192^2
TARGET_DASK_OVER_RUN = 1.2  # dask engine <= 1.2 x default engine, identical outputs

INPUT_STAMP = "prepared.json"
INPUT_FORMAT = 1
"""Version of the prepared-inputs layout; a stamp of another version is regenerated."""

KIB_PER_MIB = 1024.0
_PAGE_BYTES = os.sysconf("SC_PAGE_SIZE") if hasattr(os, "sysconf") else 4096


# =====================================================================================
# Inputs: a scaled copy of the sample region, cropped to N x N
# =====================================================================================
def generator_scale(size: int) -> tuple[str, int, int]:
    """Smallest ``--scale`` whose grid is at least ``size`` cells on its short side.

    The generator makes ``round(400 s) x round(300 s)`` cells and refuses cells that are
    not square, so ``s`` must be a multiple of 0.01 (3 rows and 4 columns per step).

    Returns
    -------
    scale : str
        The ``--scale`` argument, exactly two decimals.
    width, height : int
        The grid the generator writes.
    """
    steps = math.ceil(size / 3)
    return f"{steps / 100:.2f}", 4 * steps, 3 * steps


def _read_stamp(folder: Path) -> dict | None:
    try:
        stamp = json.loads((folder / INPUT_STAMP).read_text())
    except (OSError, ValueError):
        return None
    return stamp if stamp.get("format") == INPUT_FORMAT else None


def _crop_raster(src_path: Path, dst_path: Path, col_off: int, row_off: int, size: int) -> None:
    """Copy a size x size window of a raster with its profile, tags, description and unit."""
    import rasterio
    from rasterio.windows import Window
    from rasterio.windows import transform as window_transform

    with rasterio.open(src_path) as src:
        profile = src.profile
        full = Window(col_off, row_off, size, size)
        profile.update(width=size, height=size, transform=window_transform(full, src.transform))
        with rasterio.open(dst_path, "w", **profile) as dst:
            step = 256
            for r in range(0, size, step):
                rows = min(step, size - r)
                data = src.read(1, window=Window(col_off, row_off + r, size, rows))
                dst.write(data, 1, window=Window(0, r, size, rows))
            dst.update_tags(**src.tags())
            dst.update_tags(
                1,
                **src.tags(1),
                benchmark_crop=f"col_off={col_off} row_off={row_off} size={size}",
            )
            dst.set_band_description(1, src.descriptions[0] or "")
            if src.units and src.units[0]:
                dst.set_band_unit(1, src.units[0])


def _count_valid_cells(config_path: Path) -> tuple[int, int]:
    """Cells of the reference grid where crustal thickness and heat flow are both valid."""
    import numpy as np

    from geomelt.io.config import load_config
    from geomelt.io.rasters import AlignedRaster, read_grid

    cfg = load_config(config_path)
    ref = cfg.run["reference_grid"]
    grid = read_grid(cfg.inputs[ref], ref)
    names = ("crustal_thickness_km", "heat_flow_mw_m2")
    readers = [AlignedRaster(cfg.inputs[n], n, grid) for n in names]
    valid = 0
    try:
        for window in grid.windows(1024):
            ok = None
            for reader in readers:
                finite = np.isfinite(reader.read(window))
                ok = finite if ok is None else ok & finite
            valid += int(np.count_nonzero(ok))
    finally:
        for reader in readers:
            reader.close()
    return valid, grid.width * grid.height


def prepare_inputs(size: int, out: Path, log=print) -> dict:
    """Sample region on an N x N reference grid, generated once and cached.

    The generator (``make_sample_layers.py --scale S``, with S the smallest two-decimal
    scale giving at least ``size`` rows) writes the invented region on a
    ``4k x 3k`` grid; the reference-grid rasters (crustal thickness and heat flow) are
    cropped to their central ``size x size`` cells. The geographic slab raster, the
    vector layers and ``region.toml`` are kept as written (the slab grid is reprojected
    onto the reference grid by every run, as in the unscaled sample).

    Returns the stamp (generator scale and grid, crop window, valid-cell count, seconds).
    """
    folder = out / "inputs" / str(size)
    stamp = _read_stamp(folder)
    if stamp is not None and stamp.get("size") == size:
        return stamp
    scale, width, height = generator_scale(size)
    raw = folder / "_generated"
    if folder.exists():
        shutil.rmtree(folder)
    raw.mkdir(parents=True)
    log(f"[inputs {size}] make_sample_layers.py --scale {scale} ({width} x {height} cells) ...")
    t0 = time.perf_counter()
    subprocess.run(
        [sys.executable, str(GENERATOR), "--out", str(raw), "--scale", scale],
        check=True,
        stdout=subprocess.DEVNULL,
    )
    t_gen = time.perf_counter() - t0
    import rasterio

    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib

    region = tomllib.loads((raw / "region.toml").read_text())
    ref_name = region.get("run", {}).get("reference_grid", "crustal_thickness_km")
    ref_file = raw / region["inputs"][ref_name]
    with rasterio.open(ref_file) as ref:
        ref_grid = (ref.crs, ref.transform, ref.width, ref.height)
    if ref_grid[2] < size or ref_grid[3] < size:
        msg = f"generator grid {ref_grid[2]} x {ref_grid[3]} is smaller than {size}"
        raise RuntimeError(msg)
    col_off, row_off = (ref_grid[2] - size) // 2, (ref_grid[3] - size) // 2
    cropped = []
    t0 = time.perf_counter()
    for path in sorted(raw.iterdir()):
        target = folder / path.name
        same_grid = False
        if path.suffix.lower() in (".tif", ".tiff"):
            with rasterio.open(path) as ds:
                same_grid = (ds.crs, ds.transform, ds.width, ds.height) == ref_grid
        if same_grid:
            _crop_raster(path, target, col_off, row_off, size)
            cropped.append(path.name)
        else:
            shutil.move(str(path), target)
    shutil.rmtree(raw)
    t_crop = time.perf_counter() - t0
    valid, total = _count_valid_cells(folder / "region.toml")
    stamp = {
        "format": INPUT_FORMAT,
        "size": size,
        "generator": "processing_scripts/make_sample_layers.py",
        "generator_scale": scale,
        "generator_grid": [ref_grid[2], ref_grid[3]],
        "crop": {"col_off": col_off, "row_off": row_off, "width": size, "height": size},
        "cropped_files": cropped,
        "valid_cells": valid,
        "total_cells": total,
        "input_bytes": sum(p.stat().st_size for p in folder.iterdir() if p.is_file()),
        "generate_s": round(t_gen, 3),
        "crop_s": round(t_crop, 3),
    }
    (folder / INPUT_STAMP).write_text(json.dumps(stamp, indent=1))
    log(
        f"[inputs {size}] generated in {t_gen:.0f} s, cropped {', '.join(cropped)} to "
        f"{size} x {size} at ({col_off}, {row_off}) in {t_crop:.0f} s"
    )
    return stamp


# =====================================================================================
# Running one measurement in a fresh process
# =====================================================================================
def _proc_table() -> dict[int, tuple[int, int]]:
    """pid -> (parent pid, resident bytes) for every process in /proc."""
    table = {}
    for entry in os.scandir("/proc"):
        if not entry.name.isdigit():
            continue
        try:
            with open(f"/proc/{entry.name}/stat", "rb") as fh:
                text = fh.read().decode("ascii", "replace")
        except OSError:
            continue
        fields = text[text.rfind(")") + 2 :].split()
        # fields[0] is the state (field 3 of stat): ppid is field 4, rss (pages) field 24
        try:
            table[int(entry.name)] = (int(fields[1]), int(fields[21]) * _PAGE_BYTES)
        except (IndexError, ValueError):
            continue
    return table


def _tree_rss_bytes(root: int) -> int:
    table = _proc_table()
    children: dict[int, list[int]] = {}
    for pid, (ppid, _) in table.items():
        children.setdefault(ppid, []).append(pid)
    total, stack = 0, [root]
    while stack:
        pid = stack.pop()
        if pid in table:
            total += table[pid][1]
        stack.extend(children.get(pid, ()))
    return total


class _TreeSampler(threading.Thread):
    """Sample the summed resident memory of a process and its descendants."""

    def __init__(self, pid: int, interval: float = 0.5):
        super().__init__(daemon=True)
        self.pid, self.interval = pid, interval
        self.peak = 0
        self._stop_event = threading.Event()

    def run(self) -> None:
        if not os.path.isdir("/proc"):
            return
        while not self._stop_event.is_set():
            try:
                self.peak = max(self.peak, _tree_rss_bytes(self.pid))
            except OSError:
                pass
            self._stop_event.wait(self.interval)

    def stop(self) -> None:
        self._stop_event.set()
        self.join()


def run_measured(cmd: list[str], log_path: Path, env: dict | None = None) -> dict:
    """Run ``cmd`` in a fresh process; wall time and peak memory of it (and its children).

    ``peak_rss_mib`` is the kernel's ``ru_maxrss`` from ``os.wait4`` for this child: the
    largest resident set of the process itself or of any descendant it waited for.
    ``tree_peak_rss_mib`` is the largest sum over the live process tree, sampled every
    0.5 s (shared pages counted once per process, so an upper bound for several
    processes).
    """
    log_path.parent.mkdir(parents=True, exist_ok=True)
    with open(log_path, "wb") as log_fh:
        t0 = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=log_fh, stderr=subprocess.STDOUT, env=env)
        sampler = _TreeSampler(proc.pid)
        sampler.start()
        try:
            _, status, usage = os.wait4(proc.pid, 0)
        except BaseException:
            proc.kill()
            proc.wait()
            sampler.stop()
            raise
        wall = time.perf_counter() - t0
        sampler.stop()
    proc.returncode = os.waitstatus_to_exitcode(status)
    if proc.returncode != 0:
        tail = log_path.read_text(errors="replace")[-3000:]
        msg = f"command failed ({proc.returncode}): {' '.join(cmd)}\n--- log tail ---\n{tail}"
        raise RuntimeError(msg)
    return {
        "wall_s": wall,
        "peak_rss_mib": usage.ru_maxrss / KIB_PER_MIB,  # Linux: KiB
        "tree_peak_rss_mib": sampler.peak / 2**20,
        "user_s": usage.ru_utime,
        "system_s": usage.ru_stime,
    }


def _geomelt_command() -> list[str]:
    exe = Path(sys.executable).with_name("geomelt")
    if exe.exists():
        return [str(exe)]
    return [sys.executable, "-c", "import sys; from geomelt.cli import main; sys.exit(main())"]


def _child_command(mode: str, *args: str) -> list[str]:
    return [sys.executable, str(Path(__file__).resolve()), "--child", mode, *args]


def _tif_bytes(folder: Path) -> int:
    return sum(p.stat().st_size for p in folder.glob("*.tif"))


# =====================================================================================
# (a) I/O floor, in a child process
# =====================================================================================
def child_io_floor(
    config_path: str, out_dir: str, result_path: str, block_size, workers, replay_dir: str
) -> None:
    """Read the run's inputs and write the run's GeoTIFFs without the physics.

    The windows go through geomelt's thread engine (``engines._threads``, as
    :func:`~geomelt.pipeline.engines.iterate_windows` uses it: same worker count, windows
    in flight and :class:`~geomelt.pipeline.engines.WindowComputer` readers) with
    the plan's algorithms replaced by one that does no physics; grid longitude/latitude
    are not computed. Writers are built exactly as
    :func:`geomelt.pipeline.runner.execute_run` builds them (staging folder, profile and
    codec per dtype, overviews, band and dataset tags with input checksums, colour tables
    and style sidecars for class rasters).

    The pixels written are either

    - ``replay_dir`` given: the same window of an earlier geomelt run's GeoTIFF of that
      output (so the floor compresses exactly the bytes the run compresses; the extra
      reads are timed and reported as ``replay_read_s``); then that run's other outputs
      are written too (:func:`_replay_products`), or
    - ``replay_dir`` empty: a cheap fill, ``crust + k * heat_flow`` (float outputs) or a
      class code picked from the crustal thickness (class outputs). Such fields are dense
      and compress worse than the run's outputs, many of which are mostly nodata or 0.
      Only the GeoTIFFs are written.
    """
    t_start = time.perf_counter()
    import dataclasses

    import numpy as np
    import rasterio

    from geomelt.algorithms import Algorithm
    from geomelt.classes import SCHEMES
    from geomelt.io.config import load_config
    from geomelt.pipeline import engines, runner
    from geomelt.pipeline.runner import _sha256, plan_run
    from geomelt.pipeline.writing import OutputSink, write_threads

    t_imports = time.perf_counter()
    cfg = load_config(config_path)
    if block_size:
        cfg = cfg.with_overrides(run={"block_size": int(block_size)})
    plan = plan_run(cfg)
    written = [(alg, o) for alg, o in plan.outputs if o.written]
    raster_names = sorted(plan.raster_inputs)

    replay = Path(replay_dir) if replay_dir else None
    local = threading.local()
    replay_read = [0.0]
    replay_lock = threading.Lock()

    def replayed(window):
        sources = getattr(local, "sources", None)
        if sources is None:
            sources = local.sources = {
                o.name: rasterio.open(replay / f"{o.name}.tif") for _, o in written
            }
            with replay_lock:
                opened.extend(sources.values())
        t0 = time.perf_counter()
        out = {name: ds.read(1, window=window) for name, ds in sources.items()}
        with replay_lock:
            replay_read[0] += time.perf_counter() - t0
        return out

    opened: list = []
    codes = {}
    for _, o in written:
        if o.dtype != "float32":
            scheme = SCHEMES.get(o.scheme) if o.scheme else None
            values = [e.code for e in scheme.entries] if scheme else [0, 1]
            codes[o.name] = np.asarray(values, dtype=np.int64)

    def cheap(arrays, _params):
        if replay is not None:
            return replayed(local.window)
        crust = arrays["crustal_thickness_km"]
        heat = arrays["heat_flow_mw_m2"]
        out = {}
        for i, (_, o) in enumerate(written):
            if o.name in codes:
                table = codes[o.name]
                valid = np.isfinite(crust)
                idx = np.where(valid, crust, 0.0).astype(np.int64) // 8 % table.size
                out[o.name] = np.where(valid, table[idx], o.nodata).astype(o.dtype)
            else:
                out[o.name] = (crust + (1e-3 * (i + 1)) * heat).astype(np.float32)
        return out

    base = plan.algorithms[0]
    fake = Algorithm(
        id="io_floor",
        version="0",
        title="I/O floor",
        description="cheap fill of every output",
        inputs=tuple(raster_names),
        parameters=base.parameters,
        outputs=lambda _p: tuple(o for _, o in written),
        compute=cheap,
        cellwise=False,  # replays whole windows
    )
    floor_plan = dataclasses.replace(
        plan,
        algorithms=[fake],
        stages=[[fake]],
        outputs=[(fake, o) for _, o in written],
        carry=(),
        reducers=[],
        parameters={**plan.parameters, fake.id: base.parameters()},
        grid_layers=set(),
    )

    class FloorComputer(engines.WindowComputer):
        """geomelt's window computer, remembering (per thread) the window it computes."""

        def __call__(self, window):
            local.window = window
            return super().__call__(window)

    out = Path(out_dir)
    if out.exists():
        shutil.rmtree(out)
    staging = out / ".staging"
    staging.mkdir(parents=True)
    t_plan = time.perf_counter()

    input_meta = {
        name: {"file": path.name, "sha256": _sha256(path)}
        for name, path in sorted(plan.config.inputs.items())
    }
    writers = {}
    files = []
    with engines.bounded_gdal_cache():  # as execute_run
        for alg, o in written:
            # the run's own writer: same format options, styles and provenance tags
            writers[o.name] = runner.open_output_writer(
                plan, alg, o, out / f"{o.name}.tif", staging, input_meta
            )
        t_open = time.perf_counter()
        windows = list(plan.grid.windows(plan.block_size))
        # What iterate_windows(plan, windows, "threads", workers) does, with the computer
        # above: the same thread pool and bound on windows in flight.
        computer = FloorComputer(floor_plan)
        # The run's writing: the same writer threads (OutputSink), without the statistics.
        sink = OutputSink(writers, write_threads(workers))
        try:
            n_workers = int(workers or 0) or engines.default_workers()
            for result in engines._threads(computer, windows, n_workers):
                sink.put(result.window, result.arrays)
            sink.close()
        finally:
            sink.abandon()
            computer.close()
            for ds in opened:
                ds.close()
        t_windows = time.perf_counter()
        files.extend(runner.finish_outputs(writers, workers))  # as execute_run
    t_finished = time.perf_counter()
    products = _replay_products(replay, out) if replay is not None else {}
    shutil.rmtree(staging, ignore_errors=True)
    t_end = time.perf_counter()
    result = {
        "fill": "replay" if replay is not None else "cheap",
        "replay_read_s": replay_read[0],
        "outputs": len(written),
        "windows": len(windows),
        "block_size": plan.block_size,
        "grid": [plan.grid.width, plan.grid.height],
        "out_bytes": _tif_bytes(out),
        "phases_s": {
            "imports": t_imports - t_start,
            "plan": t_plan - t_imports,
            "checksums_and_open": t_open - t_plan,
            "windows": t_windows - t_open,
            "finish_outputs": t_finished - t_windows,
            "products": t_end - t_finished,
        },
        "products": products,
        "work_s": t_end - t_imports,
    }
    Path(result_path).write_text(json.dumps(result))


def _replay_products(reference: Path, out: Path) -> dict:
    """Write the run's other outputs with the content of the reference run's.

    The quick-look PNGs are decoded and encoded again with Pillow (the PNG encoder
    matplotlib's ``savefig`` uses, default settings as there): the floor pays for the
    encoding, not for drawing the maps. ``results.gpkg`` and ``report.html`` are copied
    byte for byte (their size is small; making their content is the run's work).
    """
    from PIL import Image

    pngs = sorted((reference / "quicklook").glob("*.png"))
    if pngs:
        (out / "quicklook").mkdir(exist_ok=True)
    for src in pngs:
        with Image.open(src) as img:
            img.load()
            info = img.info
            img.save(out / "quicklook" / src.name, format="PNG", dpi=info.get("dpi"))
    copied = []
    for name in ("results.gpkg", "report.html"):
        if (reference / name).is_file():
            shutil.copyfile(reference / name, out / name)
            copied.append(name)
    return {"png_files": len(pngs), "copied": copied}


# =====================================================================================
# (c) Per-cell reference path, in a child process
# =====================================================================================
def _densified_boundary_vertices(frame, max_segment_km: float = 5.0):
    """Boundary vertices (lon, lat arrays) per boundary type, no farther apart than
    ``max_segment_km``: straight lines of a projected layer are densified in its CRS,
    then every segment along its geodesic (``pyproj.Geod.npts``)."""
    import numpy as np
    import shapely
    from pyproj import CRS, Geod, Transformer

    geod = Geod(ellps="WGS84")
    crs = CRS.from_user_input(frame.crs)
    to_ll = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    step = max_segment_km * 1000.0
    if crs.is_projected and crs.axis_info:
        step /= crs.axis_info[0].unit_conversion_factor or 1.0
    per_type: dict[str, list] = {}
    types = frame["boundary_type"].astype(str).str.strip().str.lower()
    for geom, btype in zip(frame.geometry.array, types, strict=True):
        if geom is None or geom.is_empty:
            continue
        for part in shapely.get_parts(geom):
            if crs.is_projected:
                part = shapely.segmentize(part, step)
            xy = shapely.get_coordinates(part)
            lon, lat = to_ll.transform(xy[:, 0], xy[:, 1])
            pts = [(lon[0], lat[0])]
            for i in range(1, len(lon)):
                _, _, dist = geod.inv(lon[i - 1], lat[i - 1], lon[i], lat[i])
                n_mid = max(0, math.ceil(dist / (max_segment_km * 1000.0)) - 1)
                if n_mid:
                    pts.extend(geod.npts(lon[i - 1], lat[i - 1], lon[i], lat[i], n_mid))
                pts.append((lon[i], lat[i]))
            per_type.setdefault(btype, []).extend(pts)
    return {
        t: (np.array([p[0] for p in v]), np.array([p[1] for p in v])) for t, v in per_type.items()
    }


def _lab_root(excess, zmax: float) -> float:
    """Shallowest depth in [0, zmax] where ``excess`` (geotherm minus adiabat) crosses zero.

    ``excess`` is negative at the surface. When it is positive at ``zmax`` the crossing is
    bracketed at once; otherwise the largest excess is searched (bounded Brent) and, if
    positive, the crossing is bracketed between the surface and it. Then ``brentq``.
    """
    from scipy.optimize import brentq, minimize_scalar

    f0 = excess(0.0)
    if math.isnan(f0):
        return math.nan
    if f0 >= 0.0:
        return 0.0
    f_end = excess(zmax)
    if math.isnan(f_end):
        return math.nan
    if f_end > 0.0:
        return brentq(excess, 0.0, zmax, xtol=1e-9, rtol=1e-12)
    best = minimize_scalar(lambda z: -excess(z), bounds=(0.0, zmax), method="bounded")
    if -best.fun > 0.0:
        return brentq(excess, 0.0, float(best.x), xtol=1e-9, rtol=1e-12)
    return math.nan


def _isotherm_root(temp, iso: float, zmax: float) -> float:
    """Depth of the ``iso`` isotherm on a geotherm that does not cool with depth."""
    from scipy.optimize import brentq

    t0, t_end = temp(0.0) - iso, temp(zmax) - iso
    if math.isnan(t0) or math.isnan(t_end):
        return math.nan
    if t0 >= 0.0:
        return 0.0
    if t_end < 0.0:
        return math.nan
    return brentq(lambda z: temp(z) - iso, 0.0, zmax, xtol=1e-9, rtol=1e-12)


def child_per_cell(config_path: str, result_path: str, n_cells: int, seed: int, run_dir) -> None:
    """Time the same physics computed cell by cell with scalar calls."""
    t_start = time.perf_counter()
    import warnings

    import numpy as np
    import rasterio
    from pyproj import Geod
    from rasterio.enums import Resampling
    from rasterio.windows import Window

    from geomelt.io.config import load_config
    from geomelt.io.rasters import AlignedRaster
    from geomelt.layers import INPUT_LAYERS
    from geomelt.physics import geotherm as geo
    from geomelt.physics import oceanic as oce
    from geomelt.physics.crustal_melting import (
        crustal_melt_fraction,
        underplating_temperature_increase_k,
    )
    from geomelt.physics.decompression import lithostatic_pressure_gpa, melting_column
    from geomelt.physics.flux_melting import slab_water_supply
    from geomelt.physics.peridotite import melt_fraction
    from geomelt.pipeline.runner import plan_run
    from geomelt.tectonics.hotspots import hotspot_excess_temperature_k

    warnings.simplefilter("ignore")
    t_imports = time.perf_counter()
    plan = plan_run(load_config(config_path))
    grid = plan.grid
    pt = plan.parameters["thermal_state"]
    pm = plan.parameters["decompression_melting"]
    pf = plan.parameters["flux_melting"]
    pc = plan.parameters["crustal_melting"]
    reach_km = plan.parameters["boundary_proximity"].boundary_reach_km
    readers = {
        name: AlignedRaster(path, name, grid, resampling=Resampling[INPUT_LAYERS[name].resampling])
        for name, path in plan.raster_inputs.items()
    }
    rng = np.random.default_rng(seed)
    cells = []
    attempts = 0
    while len(cells) < n_cells and attempts < 200 * n_cells:
        attempts += 1
        row, col = int(rng.integers(grid.height)), int(rng.integers(grid.width))
        window = Window(col, row, 1, 1)
        values = {name: float(r.read(window)[0, 0]) for name, r in readers.items()}
        if math.isfinite(values["crustal_thickness_km"]) and math.isfinite(
            values["heat_flow_mw_m2"]
        ):
            lon, lat = grid.lonlat(window)
            cells.append((row, col, float(lon[0, 0]), float(lat[0, 0]), values))
    for r in readers.values():
        r.close()
    hotspots = plan.vectors.get("hotspots")
    if hotspots is not None and len(hotspots):
        hotspots = hotspots.with_defaults(pm.hotspot_excess_temperature_k, pm.hotspot_radius_km)
    vertices = (
        _densified_boundary_vertices(plan.frames["plate_boundaries"])
        if "plate_boundaries" in plan.frames
        else {}
    )
    geod = Geod(ellps="WGS84")
    t_setup = time.perf_counter()

    timing = {"thermal": 0.0, "decompression": 0.0, "flux": 0.0, "crustal": 0.0, "distance": 0.0}
    per_cell_times = []
    results = []
    tp0, grad = pt.mantle_potential_temperature_c, pt.adiabat_gradient_k_km
    zmax = pt.lab_max_depth_km
    wedge_p = float(lithostatic_pressure_gpa(pf.wedge_melting_depth_km))
    for row, col, lon, lat, v in cells:
        crust, q0 = v["crustal_thickness_km"], v["heat_flow_mw_m2"]
        res = {"row": row, "col": col}
        # ---- thermal state: lithosphere base by root finding on scalar geotherm calls
        t0 = time.perf_counter()
        oceanic = pt.oceanic_geotherm == "half_space" and crust < pt.oceanic_crust_max_thickness_km
        if oceanic:
            age = float(oce.gdh1_age_from_heat_flow_ma(q0, pt.oceanic_max_age_ma))
            lab = float(oce.oceanic_lab_depth_km(age, pt))

            def temp(z, age=age):
                return float(oce.oceanic_geotherm_temperature_c(z, age, pt))

            moho_t = temp(crust)
        else:

            def excess(z, q0=q0, crust=crust):
                return float(geo.conductive_temperature_c(z, q0, crust, pt)) - float(
                    geo.mantle_adiabat_temperature_c(z, tp0, grad)
                )

            lab = _lab_root(excess, zmax)

            def temp(z, q0=q0, crust=crust):
                return float(geo.geotherm_temperature_c(z, q0, crust, pt))

            moho_t = temp(crust)
        for depth in pt.temperature_depths_km:
            temp(depth)
        for iso in pt.isotherms_c:
            _isotherm_root(temp, iso, zmax)
        res["lab_depth_km"] = lab
        res["moho_temperature_c"] = moho_t
        t1 = time.perf_counter()
        # ---- decompression melting: direct integration of the column (solve_ivp)
        tp = pm.mantle_potential_temperature_c
        if hotspots is not None and len(hotspots):
            tp += float(hotspot_excess_temperature_k(np.array(lon), np.array(lat), hotspots))
        lid = lab if math.isfinite(lab) else pm.melting_table_max_depth_km
        column = melting_column(
            tp,
            pm.mantle_water_wt_pct,
            lid_depth_km=lid,
            max_depth_km=pm.melting_table_max_depth_km,
            cpx_mass_fraction=pm.cpx_mass_fraction,
            water_partition_coefficient=pm.water_partition_coefficient,
            density_scaling=pm.melt_thickness_density_scaling,
        )
        res["melt_thickness_km"] = column.melt_thickness_km
        res["melt_fraction_max"] = column.melt_fraction_max
        t2 = time.perf_counter()
        # ---- flux melting: scalar melt fractions
        slab = v.get("slab_depth_km", math.nan)
        supply = float(
            slab_water_supply(
                slab, pf.arc_slab_depth_km, pf.arc_window_half_width_km, pf.behind_arc_taper_km
            )
        )
        wedge = 0.0
        if supply > 0.0:
            bg = pf.mantle_water_wt_pct
            water = bg + supply * (pf.wedge_water_wt_pct - bg)
            kw = {
                "cpx_mass_fraction": pf.cpx_mass_fraction,
                "water_partition_coefficient": pf.water_partition_coefficient,
            }
            wedge = max(
                float(melt_fraction(wedge_p, pf.wedge_temperature_c, water, **kw))
                - float(melt_fraction(wedge_p, pf.wedge_temperature_c, bg, **kw)),
                0.0,
            )
        res["wedge_melt_fraction"] = wedge
        t3 = time.perf_counter()
        # ---- crustal melting: scalar calls
        continental = crust >= pc.oceanic_crust_max_thickness_km
        mantle_melt = (column.melt_thickness_km or 0.0) + pc.wedge_melt_column_km * wedge
        underplate = pc.underplate_trapped_fraction * mantle_melt if continental else 0.0
        heating = float(
            underplating_temperature_increase_k(
                underplate,
                moho_t,
                heated_thickness_km=pc.underplate_heated_thickness_km,
                crust_density_kg_m3=pc.crust_density_kg_m3,
            )
        )
        heating = heating if math.isfinite(heating) else 0.0
        frac = float(crustal_melt_fraction(moho_t + heating, depth_km=crust, params=pc))
        res["crustal_melt_fraction"] = frac if continental else 0.0
        t4 = time.perf_counter()
        # ---- geodesic distance to the densified boundary vertices (pyproj.Geod.inv)
        for btype, (vlon, vlat) in vertices.items():
            _, _, dist = geod.inv(np.full(vlon.size, lon), np.full(vlon.size, lat), vlon, vlat)
            d_km = float(np.min(dist)) / 1000.0
            res[f"distance_to_{btype}_km"] = d_km if d_km <= reach_km else math.nan
        t5 = time.perf_counter()
        for key, dt in zip(timing, (t1 - t0, t2 - t1, t3 - t2, t4 - t3, t5 - t4), strict=True):
            timing[key] += dt
        per_cell_times.append(t5 - t0)
        results.append(res)
    t_end = time.perf_counter()
    n = len(results)
    compute_s = sum(timing.values())
    per_cell = compute_s / n if n else math.nan
    agreement = _compare_with_run(results, run_dir) if run_dir else {}
    out = {
        "cells": n,
        "seed": seed,
        "per_cell_s": per_cell,
        "per_cell_standard_error_s": float(np.std(per_cell_times, ddof=1) / math.sqrt(n))
        if n > 1
        else None,
        "per_cell_max_s": max(per_cell_times) if per_cell_times else None,
        "per_cell_components_s": {k: t / n for k, t in timing.items()} if n else {},
        "compute_s": compute_s,
        "setup_s": t_setup - t_imports,
        "work_s": t_end - t_imports,
        "boundary_vertices": {t: int(v[0].size) for t, v in vertices.items()},
        "agreement_with_run": agreement,
        "oceanic_share": float(
            np.mean(
                [c[4]["crustal_thickness_km"] < pt.oceanic_crust_max_thickness_km for c in cells]
            )
        )
        if cells
        else math.nan,
        "imports_s": t_imports - t_start,
    }
    _ = rasterio  # imported for its GDAL environment, as the run does
    Path(result_path).write_text(json.dumps(out))


def _compare_with_run(results: list[dict], run_dir: str) -> dict:
    """Largest and median absolute difference between the per-cell values and the run's
    GeoTIFFs at the same cells (a check that both paths compute the same quantities)."""
    import numpy as np
    import rasterio
    from rasterio.windows import Window

    report = {}
    keys = sorted({k for r in results for k in r} - {"row", "col"})
    for key in keys:
        path = Path(run_dir) / f"{key}.tif"
        if not path.exists():
            continue
        diffs, both_nan, one_nan = [], 0, 0
        with rasterio.open(path) as ds:
            for r in results:
                if key not in r:
                    continue
                mapped = float(ds.read(1, window=Window(r["col"], r["row"], 1, 1))[0, 0])
                ref = float(r[key])
                if math.isnan(mapped) and math.isnan(ref):
                    both_nan += 1
                elif math.isnan(mapped) or math.isnan(ref):
                    one_nan += 1
                else:
                    diffs.append(abs(mapped - ref))
        report[key] = {
            "compared": len(diffs),
            "max_abs_diff": float(np.max(diffs)) if diffs else None,
            "median_abs_diff": float(np.median(diffs)) if diffs else None,
            "both_nodata": both_nan,
            "nodata_mismatch": one_nan,
        }
    return report


# =====================================================================================
# (d) pixel comparison of two output folders
# =====================================================================================
def compare_outputs(dir_a: Path, dir_b: Path) -> dict:
    """Compare every GeoTIFF of ``dir_a`` with the same file in ``dir_b``, block by block."""
    import numpy as np
    import rasterio

    names_a = sorted(p.name for p in dir_a.glob("*.tif"))
    names_b = sorted(p.name for p in dir_b.glob("*.tif"))
    report = {
        "files": len(names_a),
        "missing": sorted(set(names_a) ^ set(names_b)),
        "different": {},
    }
    for name in sorted(set(names_a) & set(names_b)):
        with rasterio.open(dir_a / name) as a, rasterio.open(dir_b / name) as b:
            problems = []
            if (a.width, a.height, a.dtypes, a.crs, a.transform) != (
                b.width,
                b.height,
                b.dtypes,
                b.crs,
                b.transform,
            ):
                problems.append("grid or dtype differs")
            else:
                n_diff = 0
                for _, window in a.block_windows(1):
                    x, y = a.read(1, window=window), b.read(1, window=window)
                    nan_ok = x.dtype.kind == "f"
                    if not np.array_equal(x, y, equal_nan=nan_ok):
                        if nan_ok:
                            same = (x == y) | (np.isnan(x) & np.isnan(y))
                        else:
                            same = x == y
                        n_diff += int(np.count_nonzero(~same))
                if n_diff:
                    problems.append(f"{n_diff} cell(s) differ")
            if problems:
                report["different"][name] = "; ".join(problems)
    report["identical"] = not report["missing"] and not report["different"] and bool(names_a)
    return report


# =====================================================================================
# Orchestration, statistics and report
# =====================================================================================
def _stats(values: list[float]) -> dict:
    vals = [v for v in values if v is not None and math.isfinite(v)]
    if not vals:
        return {"min": None, "median": None, "max": None, "n": 0}
    return {
        "min": min(vals),
        "median": statistics.median(vals),
        "max": max(vals),
        "n": len(vals),
    }


def _ratio(a, b):
    if a is None or b is None or not b or not math.isfinite(a) or not math.isfinite(b):
        return None
    return a / b


def _clean(obj):
    """Round floats and turn non-finite numbers into None (the JSON is written with
    ``allow_nan=False``)."""
    if isinstance(obj, float):
        return round(obj, 6) if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return obj


def measure_size(size: int, args, report: dict, log=print) -> dict:
    out = Path(args.out).resolve()
    stamp = prepare_inputs(size, out, log)
    config = out / "inputs" / str(size) / "region.toml"
    runs = out / "runs" / str(size)
    logs = out / "logs" / str(size)
    dirs = {k: runs / k for k in ("io_floor", "geomelt", "dask", "reference")}
    extra = []
    if args.block_size:
        extra += ["--block-size", str(args.block_size)]
    workers = str(args.workers or 0)
    kinds = ["io_floor", "geomelt", "per_cell"] + ([] if args.skip_dask else ["dask"])
    reps: dict[str, list[dict]] = {k: [] for k in kinds}
    repeats = args.repeats_per_size[size]
    entry = {"inputs": stamp, "repeats": repeats, "measurements": {}}
    report["sizes"][str(size)] = entry
    replay = ""
    if args.floor == "replay":
        # Untimed for the statistics: the outputs the floor replays; it also brings the
        # inputs into the page cache before the first timed measurement.
        cmd = _geomelt_command() + [
            "run", str(config), "-o", str(dirs["reference"]), "--overwrite", "--no-progress",
            *extra, *(["-w", workers] if args.workers else []),
        ]  # fmt: skip
        warm = run_measured(cmd, logs / "reference.log")
        entry["reference_run"] = warm
        replay = str(dirs["reference"])
        log(f"[{size} reference] geomelt run for the replayed floor: {warm['wall_s']:.1f} s")
    for rep in range(repeats):
        for kind in kinds:
            tag = f"[{size} rep {rep + 1}/{repeats}] {kind:8s}"
            result_file = logs / f"{kind}-{rep}.json"
            result_file.unlink(missing_ok=True)
            if kind == "io_floor":
                cmd = _child_command(
                    "io-floor", str(config), str(dirs[kind]), str(result_file),
                    str(args.block_size or 0), workers, replay,
                )  # fmt: skip
            elif kind == "geomelt":
                cmd = _geomelt_command() + [
                    "run", str(config), "-o", str(dirs[kind]), "--overwrite", "--no-progress",
                    *extra, *(["-w", workers] if args.workers else []),
                ]  # fmt: skip
            elif kind == "dask":
                cmd = _geomelt_command() + [
                    "run", str(config), "-o", str(dirs[kind]), "--overwrite", "--no-progress",
                    "--engine", "dask", "--scheduler", "local", "-w", str(args.dask_workers),
                    *extra,
                ]  # fmt: skip
            else:
                cmd = _child_command(
                    "per-cell", str(config), str(result_file), str(args.sample_cells),
                    str(args.seed), str(dirs["geomelt"]),
                )  # fmt: skip
            before = _source_hash()
            m = run_measured(cmd, logs / f"{kind}-{rep}.log")
            m["repeat"] = rep
            after = _source_hash()
            m["source_hash"] = before if before == after else f"{before}->{after}"
            m["cpu_s"] = m["user_s"] + m["system_s"]
            if result_file.exists():
                m["child"] = json.loads(result_file.read_text())
            if kind in ("io_floor", "geomelt", "dask"):
                m["out_bytes"] = _tif_bytes(dirs[kind])
                m["out_files"] = len(list(dirs[kind].glob("*.tif")))
            if kind == "per_cell":
                per_cell = m["child"]["per_cell_s"]
                m["per_cell_s"] = per_cell
                m["extrapolated_s"] = per_cell * stamp["valid_cells"]
                shown = (
                    f"{per_cell * 1e3:8.1f} ms/cell -> {m['extrapolated_s']:10.0f} s extrapolated"
                )
            else:
                shown = f"{m['wall_s']:8.2f} s"
            log(
                f"{tag} {shown}  peak RSS {m['peak_rss_mib']:7.1f} MiB "
                f"(tree {m['tree_peak_rss_mib']:7.1f} MiB)"
            )
            reps[kind].append(m)
        entry["measurements"] = summarise(reps, stamp)
    if "dask" in kinds:
        t0 = time.perf_counter()
        cmp_ = compare_outputs(dirs["geomelt"], dirs["dask"])
        cmp_["compare_s"] = time.perf_counter() - t0
        hashes = {reps["geomelt"][-1]["source_hash"], reps["dask"][-1]["source_hash"]}
        cmp_["same_source"] = len(hashes) == 1 and "->" not in next(iter(hashes))
        if not cmp_["same_source"]:
            cmp_["note"] = (
                "the geomelt sources changed between the compared runs "
                f"({sorted(hashes)}); a difference may come from the code, not the engine"
            )
        entry["dask_vs_geomelt_outputs"] = cmp_
    entry["ratios"] = ratios(reps)
    entry["targets"] = targets(size, entry)
    return entry


def summarise(reps: dict, stamp: dict) -> dict:
    summary = {}
    for kind, items in reps.items():
        s = {
            "wall_s": _stats([m["wall_s"] for m in items]),
            "cpu_s": _stats([m["cpu_s"] for m in items]),
            "peak_rss_mib": _stats([m["peak_rss_mib"] for m in items]),
            "tree_peak_rss_mib": _stats([m["tree_peak_rss_mib"] for m in items]),
            "per_repeat": items,
        }
        if kind == "per_cell":
            s["per_cell_s"] = _stats([m["per_cell_s"] for m in items])
            s["extrapolated_s"] = _stats([m["extrapolated_s"] for m in items])
            s["valid_cells"] = stamp["valid_cells"]
        summary[kind] = s
    return summary


def _time_of(kind: str, m: dict) -> float:
    return m["extrapolated_s"] if kind == "per_cell" else m["wall_s"]


def ratios(reps: dict) -> dict:
    out = {}
    pairs = {"b_over_a": ("geomelt", "io_floor"), "c_over_b": ("per_cell", "geomelt")}
    if reps.get("dask"):
        pairs["d_over_b"] = ("dask", "geomelt")
    for name, (num, den) in pairs.items():
        med_num = statistics.median(_time_of(num, m) for m in reps[num])
        med_den = statistics.median(_time_of(den, m) for m in reps[den])
        per_rep = [
            _ratio(_time_of(num, x), _time_of(den, y))
            for x, y in zip(reps[num], reps[den], strict=True)
        ]
        min_num = min(_time_of(num, m) for m in reps[num])
        min_den = min(_time_of(den, m) for m in reps[den])
        out[name] = {
            "numerator": num,
            "denominator": den,
            "from_medians": _ratio(med_num, med_den),
            "from_minima": _ratio(min_num, min_den),
            "per_repeat": per_rep,
            "per_repeat_stats": _stats(per_rep),
        }
        if num != "per_cell":
            cpu = [
                _ratio(x["cpu_s"], y["cpu_s"]) for x, y in zip(reps[num], reps[den], strict=True)
            ]
            out[name]["cpu_time_per_repeat"] = cpu
            out[name]["cpu_time_from_medians"] = _ratio(
                statistics.median(m["cpu_s"] for m in reps[num]),
                statistics.median(m["cpu_s"] for m in reps[den]),
            )
    return out


def targets(size: int, entry: dict) -> dict:
    r, ms = entry["ratios"], entry["measurements"]
    t = {}
    if size == TARGET_FLOOR_CHECK_SIZE:
        v = r["b_over_a"]["from_medians"]
        t["run_over_io_floor"] = {
            "target": f"<= {TARGET_RUN_OVER_FLOOR}",
            "value": v,
            "met": v is not None and v <= TARGET_RUN_OVER_FLOOR,
        }
    else:
        t["run_over_io_floor"] = {
            "target": f"<= {TARGET_RUN_OVER_FLOOR} (checked at {TARGET_FLOOR_CHECK_SIZE}^2 only)",
            "value": r["b_over_a"]["from_medians"],
            "met": None,
        }
    v = r["c_over_b"]["from_medians"]
    t["speedup_over_per_cell"] = {
        "target": f">= {TARGET_PER_CELL_SPEEDUP:g}",
        "value": v,
        "met": v is not None and v >= TARGET_PER_CELL_SPEEDUP,
    }
    peak = ms["geomelt"]["peak_rss_mib"]["max"]
    t["geomelt_peak_rss_mib"] = {
        "target": f"<= {TARGET_PEAK_RSS_MIB:g} (largest of the repeats)",
        "value": peak,
        "met": peak is not None and peak <= TARGET_PEAK_RSS_MIB,
    }
    if "d_over_b" in r:
        v = r["d_over_b"]["from_medians"]
        same = entry.get("dask_vs_geomelt_outputs", {}).get("identical")
        t["dask_over_run"] = {
            "target": f"<= {TARGET_DASK_OVER_RUN} with identical outputs",
            "value": v,
            "identical_outputs": same,
            "met": v is not None and v <= TARGET_DASK_OVER_RUN and bool(same),
        }
    return t


def _fmt(v, spec=".2f") -> str:
    return "-" if v is None else format(v, spec)


def print_table(size: int, entry: dict) -> None:
    ms, r, t = entry["measurements"], entry["ratios"], entry["targets"]
    cells = entry["inputs"]["total_cells"]
    print()
    print(
        f"== {size} x {size} ({cells / 1e6:.1f} M cells, {entry['inputs']['valid_cells'] / 1e6:.1f} "
        f"M valid; {entry['repeats']} repeat(s)) =="
    )
    head = f"{'measurement':<34}{'time s  min / median / max':>34}   {'peak RSS MiB min/med/max':>26}   tree MiB (max)"
    print(head)
    print("-" * len(head))
    labels = {
        "io_floor": "(a) I/O floor",
        "geomelt": "(b) geomelt run (threads)",
        "per_cell": "(c) per-cell path (extrapolated)",
        "dask": "(d) dask local -w 2",
    }
    for kind, label in labels.items():
        if kind not in ms:
            continue
        s = ms[kind]
        tm = s["extrapolated_s"] if kind == "per_cell" else s["wall_s"]
        fmt = ".0f" if kind == "per_cell" else ".2f"
        pr = s["peak_rss_mib"]
        print(
            f"{label:<34}{_fmt(tm['min'], fmt):>12} /{_fmt(tm['median'], fmt):>9} /"
            f"{_fmt(tm['max'], fmt):>9}   {_fmt(pr['min'], '.0f'):>8} /{_fmt(pr['median'], '.0f'):>6} /"
            f"{_fmt(pr['max'], '.0f'):>6}   {_fmt(s['tree_peak_rss_mib']['max'], '.0f'):>8}"
        )
        if kind == "per_cell":
            pc = s["per_cell_s"]
            comp = s["per_repeat"][-1]["child"]["per_cell_components_s"]
            parts = ", ".join(f"{k} {v * 1e3:.1f}" for k, v in comp.items())
            print(
                f"{'':<6}per cell ms {_fmt(pc['min'] * 1e3, '.1f')} / {_fmt(pc['median'] * 1e3, '.1f')}"
                f" / {_fmt(pc['max'] * 1e3, '.1f')} x {s['valid_cells']} valid cells "
                f"(last repeat: {parts})"
            )
    print()
    for name, label in (("b_over_a", "b/a"), ("c_over_b", "c/b"), ("d_over_b", "d/b")):
        if name not in r:
            continue
        x = r[name]
        per = ", ".join(_fmt(v, ".3g") for v in x["per_repeat"])
        line = (
            f"ratio {label}: {_fmt(x['from_medians'], '.3g')} from medians, "
            f"{_fmt(x['from_minima'], '.3g')} from minima; per repeat [{per}]"
        )
        if "cpu_time_from_medians" in x:
            line += f"; CPU-time ratio {_fmt(x['cpu_time_from_medians'], '.3g')} (medians)"
        print(line)
    print()
    for name, x in t.items():
        met = {True: "MET", False: "NOT MET", None: "n/a"}[x["met"]]
        extra = ""
        if "identical_outputs" in x:
            extra = f", outputs identical: {x['identical_outputs']}"
        print(
            f"target {name:<24} {x['target']:<44} value {_fmt(x['value'], '.3g'):>8}  {met}{extra}"
        )
    cmp_ = entry.get("dask_vs_geomelt_outputs")
    if cmp_ and not cmp_["identical"]:
        diff = ", ".join(f"{k}: {v}" for k, v in list(cmp_["different"].items())[:6])
        more = len(cmp_["different"]) - 6
        print(
            f"  dask outputs differ in {len(cmp_['different'])} file(s): {diff}"
            + (f" (+{more} more)" if more > 0 else "")
            + (f"; missing {cmp_['missing']}" if cmp_["missing"] else "")
        )
    if cmp_ and cmp_.get("note"):
        print(f"  NOTE: {cmp_['note']}")


def _source_hash() -> str:
    """Hash of every geomelt source file (Python and Cython): tells whether the code changed
    between measurements (other people may be editing the package while the benchmark runs)."""
    import hashlib

    h = hashlib.sha256()
    for path in sorted([*(REPO / "geomelt").rglob("*.py"), *(REPO / "geomelt").rglob("*.pyx")]):
        h.update(path.relative_to(REPO).as_posix().encode())
        h.update(path.read_bytes())
    return h.hexdigest()[:12]


def _git_state() -> dict:
    def git(*cmd):
        done = subprocess.run(
            ["git", "-C", str(REPO), *cmd], capture_output=True, text=True, check=False
        )
        return done.stdout.strip() if done.returncode == 0 else None

    status = git("status", "--short", "--", "geomelt")
    return {
        "head": git("rev-parse", "HEAD"),
        "modified_geomelt_files": status.splitlines() if status else [],
    }


def _environment() -> dict:
    info = {
        "python": platform.python_version(),
        "platform": platform.platform(),
        "cpus": os.cpu_count(),
        "affinity": len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else None,
    }
    try:
        import dask
        import numpy
        import rasterio

        import geomelt

        info.update(
            geomelt=geomelt.__version__,
            numpy=numpy.__version__,
            rasterio=rasterio.__version__,
            gdal=rasterio.__gdal_version__,
            dask=dask.__version__,
        )
    except ImportError:
        pass
    try:
        with open("/proc/meminfo") as fh:
            info["mem_total_mib"] = int(fh.readline().split()[1]) / 1024.0
    except OSError:
        pass
    return info


def parse_args(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--sizes", type=int, nargs="+", default=[4096], help="grid sizes N (N x N)")
    p.add_argument(
        "--repeats",
        type=int,
        nargs="+",
        default=[3],
        help="repeats of every measurement: one number for all sizes, or one per size",
    )
    p.add_argument("--out", default="benchmark_output", help="output folder (inputs cached)")
    p.add_argument("--sample-cells", type=int, default=200, help="cells of the per-cell path")
    p.add_argument("--seed", type=int, default=20240, help="seed of the per-cell sample")
    p.add_argument("--skip-dask", action="store_true", help="leave out the dask measurement")
    p.add_argument(
        "--floor",
        choices=("replay", "cheap"),
        default="replay",
        help="pixels the I/O floor writes: those of an untimed reference run (default; the "
        "same bytes to compress as the run) or a cheap function of the inputs",
    )
    p.add_argument("--dask-workers", type=int, default=2, help="local dask worker processes")
    p.add_argument(
        "--block-size", type=int, default=0, help="window size passed to every run (0: default)"
    )
    p.add_argument("--workers", type=int, default=0, help="threads of (a) and (b) (0: default)")
    p.add_argument("--keep-outputs", action="store_true", help="keep the run folders at the end")
    p.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = p.parse_args(argv)
    if not args.child:
        if len(args.repeats) not in (1, len(args.sizes)):
            p.error("give one --repeats value, or one per size")
        if any(s < 16 for s in args.sizes) or min(args.repeats) < 1 or args.sample_cells < 1:
            p.error("sizes must be >= 16, repeats and sample cells >= 1")
        per_size = args.repeats * len(args.sizes) if len(args.repeats) == 1 else args.repeats
        args.repeats_per_size = dict(zip(args.sizes, per_size, strict=True))
    return args


def main(argv=None) -> int:
    args = parse_args(argv)
    if args.child:
        mode, rest = args.child[0], args.child[1:]
        if mode == "io-floor":
            config, out_dir, result, block, workers, replay = rest
            child_io_floor(config, out_dir, result, int(block), int(workers), replay)
        elif mode == "per-cell":
            config, result, n, seed, run_dir = rest
            child_per_cell(config, result, int(n), int(seed), run_dir)
        else:
            msg = f"unknown child mode {mode!r}"
            raise SystemExit(msg)
        return 0
    out = Path(args.out).resolve()
    out.mkdir(parents=True, exist_ok=True)
    t0 = time.perf_counter()
    report = {
        "command": " ".join(
            [Path(sys.argv[0]).name, *(argv if argv is not None else sys.argv[1:])]
        ),
        "started_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
        "environment": _environment(),
        "git": _git_state(),
        "settings": {
            "sizes": args.sizes,
            "repeats": args.repeats_per_size,
            "sample_cells": args.sample_cells,
            "seed": args.seed,
            "skip_dask": args.skip_dask,
            "floor": args.floor,
            "dask_workers": args.dask_workers,
            "block_size": args.block_size or "config default",
            "workers": args.workers or "default (one per core)",
        },
        "targets": {
            "run_over_io_floor_max": TARGET_RUN_OVER_FLOOR,
            "run_over_io_floor_checked_at": TARGET_FLOOR_CHECK_SIZE,
            "per_cell_speedup_min": TARGET_PER_CELL_SPEEDUP,
            "peak_rss_mib_max": TARGET_PEAK_RSS_MIB,
            "dask_over_run_max": TARGET_DASK_OVER_RUN,
        },
        "sizes": {},
    }
    json_path = out / "benchmark.json"

    def save():
        report["elapsed_s"] = time.perf_counter() - t0
        tmp = json_path.with_suffix(".json.tmp")
        tmp.write_text(json.dumps(_clean(report), indent=1, allow_nan=False))
        os.replace(tmp, json_path)

    def log(text):
        print(text, flush=True)

    for size in args.sizes:
        entry = measure_size(size, args, report, log)
        save()
        print_table(size, entry)
        sys.stdout.flush()
        if not args.keep_outputs:
            shutil.rmtree(out / "runs" / str(size), ignore_errors=True)
    save()
    print(f"\nwrote {json_path} ({report['elapsed_s']:.0f} s)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
