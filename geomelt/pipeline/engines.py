"""Where windows are computed: in this thread, in a thread pool, or on a dask cluster.

Every engine runs the same :class:`WindowComputer` on the same windows, so the
pixels do not depend on the engine, the number of workers or the window order.
Results come back to the calling thread in window order (so totals add up the
same way on every run), and that thread alone writes the files. About one
window per worker is in flight, and inside a window each array is dropped as
soon as no later algorithm, output, total or second pass reads it, so memory
stays bounded whatever the grid size.
"""

from __future__ import annotations

import contextlib
import ctypes
import ctypes.util
import functools
import gc
import hashlib
import os
import pickle
import threading
from collections import deque
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import rasterio
from rasterio.enums import Resampling
from rasterio.windows import Window

from geomelt.errors import GeomeltError
from geomelt.io.rasters import AlignedRaster
from geomelt.layers import GRID_LAYERS, INPUT_LAYERS

__all__ = [
    "ENGINES",
    "SecondPassComputer",
    "WindowComputer",
    "WindowResult",
    "carry_path",
    "default_workers",
    "iterate_windows",
    "release_free_memory",
]

ENGINES = ("threads", "serial", "dask")
"""Engine names accepted by :func:`iterate_windows`."""

GDAL_CACHE_MIB = 8
"""GDAL block cache per process, MiB. Windows are read and written in whole tiles, each
once, so the cache only needs the few source blocks one window's reprojection reads; a
larger one holds finished, not yet compressed tiles of the ~70 outputs (32 MiB took
about 50 MiB more resident memory on the 4096^2 benchmark and was no faster). Reads
that reduce a grid do not lean on it (:func:`geomelt.io.rasters.nearest_sample`)."""


@contextlib.contextmanager
def bounded_gdal_cache():
    """GDAL's block cache bounded to :data:`GDAL_CACHE_MIB` (a ``with`` block, or a
    decorator as on :func:`geomelt.pipeline.runner.plan_run` and ``execute_run``).

    GDAL's default cache is 5 % of the machine's memory (1.2 GB on a 24 GB machine) and
    every block a run reads or writes passes through it: unbounded, the value pre-scans of
    an 8192^2 run's planning alone kept 250 MiB of blocks. rasterio hands an integer
    ``GDAL_CACHEMAX`` to ``GDALSetCacheMax64``, which counts bytes (checked with
    ``GDALGetCacheMax64`` on rasterio 1.4 / GDAL 3.10): ``32`` would be a 32-byte cache,
    under which a reduced read decompresses every block once per output row. Only a
    string in the environment of a new process is read as MB.
    """
    with rasterio.Env(GDAL_CACHEMAX=GDAL_CACHE_MIB * 1024 * 1024):
        yield


def release_free_memory() -> None:
    """Collect garbage and hand freed heap memory back to the system (glibc
    ``malloc_trim``; elsewhere only the collection). Called between the phases of a run,
    so what a window phase freed does not stay resident under the next phase."""
    gc.collect()
    trim = _malloc_trim()
    if trim is not None:
        trim(0)


@functools.cache
def _malloc_trim():
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        return libc.malloc_trim
    except (OSError, AttributeError):  # not glibc
        return None


def default_workers() -> int:
    """Worker threads by default: one per available core."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not on Linux
        return max(1, os.cpu_count() or 1)


@dataclass
class WindowResult:
    """Outputs of one window, what the second pass needs of it, its totals, and the
    cells of each input outside its plausible range."""

    window: Window
    arrays: dict[str, np.ndarray]
    implausible: dict[str, int] = field(default_factory=dict)
    carry: dict[str, np.ndarray] = field(default_factory=dict)
    summaries: dict[str, np.ndarray] = field(default_factory=dict)


def _grid_layers(plan, window: Window, names) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    if "cell_lon_deg" in names or "cell_lat_deg" in names:
        out["cell_lon_deg"], out["cell_lat_deg"] = plan.grid.lonlat(window)
    if "cell_area_km2" in names:
        out["cell_area_km2"] = plan.grid.cell_area_km2(window)
    return out


def _drop_schedule(algorithms, keep) -> list[frozenset[str]]:
    """Per algorithm of a stage, the arrays no later algorithm reads: dropped after it ran
    (unless in ``keep``: written outputs, what the second pass and the totals read)."""
    last_use: dict[str, int] = {}
    for i, alg in enumerate(algorithms):
        for n in (*alg.inputs, *alg.optional_inputs):
            last_use[n] = i
    schedule = []
    for i, _alg in enumerate(algorithms):
        later = {n for n, j in last_use.items() if j > i}
        schedule.append(frozenset(later) | frozenset(keep))
    return schedule


def _run_algorithms(algorithms, arrays: dict, parameters, schedule=None) -> None:
    """Run a stage on one window's arrays; with a ``schedule`` (:func:`_drop_schedule`),
    drop every array (not a vector layer) still needed by nothing after each algorithm."""
    for i, alg in enumerate(algorithms):
        args = {n: arrays[n] for n in alg.inputs}
        args.update({n: arrays[n] for n in alg.optional_inputs if n in arrays})
        arrays.update(alg.compute(args, parameters[alg.id]))
        del args
        if schedule is not None:
            needed = schedule[i]
            for name in [n for n, v in arrays.items() if isinstance(v, np.ndarray)]:
                if name not in needed:
                    del arrays[name]


COMPUTE_BAND_CELLS = 1 << 16
"""Most cells of a window the algorithms compute together (bands of whole rows) when every
algorithm of the stage is ``cellwise`` (all registered ones are: whole-grid layers are
computed between the passes), so a band gives the same values as the whole window. A
default 256 x 256 window is one band; larger windows (``--block-size``) keep the float64
temporaries of one. Smaller bands saved little: at 2^14 cells the 4096^2 benchmark's
first pass took ~8 MiB less and ~15 % longer (more Python per cell, shared by threads)."""


def _run_in_bands(algorithms, arrays: dict, parameters, schedule, keep) -> None:
    """:func:`_run_algorithms` on bands of whole rows of the window's ``arrays`` (each at
    most :data:`COMPUTE_BAND_CELLS` cells); the arrays named in ``keep`` that the
    algorithms made (or replaced) are put together again into window-sized arrays in
    ``arrays``."""
    shapes = {v.shape for v in arrays.values() if isinstance(v, np.ndarray)}
    if len(shapes) != 1 or len(next(iter(shapes))) != 2 or not all(a.cellwise for a in algorithms):
        _run_algorithms(algorithms, arrays, parameters, schedule)
        return
    ((height, width),) = shapes
    rows = max(1, COMPUTE_BAND_CELLS // max(1, width))
    if height <= rows:
        _run_algorithms(algorithms, arrays, parameters, schedule)
        return
    made: dict[str, np.ndarray] = {}
    for top in range(0, height, rows):
        given = {
            name: value[top : top + rows] if isinstance(value, np.ndarray) else value
            for name, value in arrays.items()
        }
        band = dict(given)
        _run_algorithms(algorithms, band, parameters, schedule)
        for name in keep:
            value = band.get(name)
            # What the algorithms made or replaced (an output may take an input's name).
            if not isinstance(value, np.ndarray) or value is given.get(name):
                continue
            if name not in made:
                made[name] = np.empty((height, width), dtype=value.dtype)
            made[name][top : top + rows] = value
        band = given = None
    arrays.update(made)


def _kept(plan, stage, written) -> set[str]:
    """Arrays of a window a stage must keep to its end: its written outputs, what the
    second pass reads, what the totals and the calibration counts read."""
    keep = {o.name for o in written} | set(plan.carry)
    for reducer in plan.reducers:
        keep |= set(reducer.inputs)
    ids = {a.id for a in stage}
    calibrated = [o.name for a, o in plan.outputs if a.id in ids and o.calibration]
    if calibrated:
        keep |= {*calibrated, "crustal_thickness_km", "heat_flow_mw_m2"}
    return keep


OUTSIDE_CALIBRATION = "outside_calibration:"
"""Prefix of the summaries counting, per output, valid cells a method left without a value."""


def _summaries(plan, arrays: dict, stage, reducers=None) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    for reducer in plan.reducers if reducers is None else reducers:
        if all(n in arrays for n in reducer.inputs):
            out.update(reducer(arrays))
    ids = {a.id for a in stage}
    checked = [o for a, o in plan.outputs if a.id in ids and o.calibration and o.name in arrays]
    if checked:
        valid = np.isfinite(arrays["crustal_thickness_km"])
        if "heat_flow_mw_m2" in arrays:
            valid &= np.isfinite(arrays["heat_flow_mw_m2"])
        for o in checked:
            masked = valid & np.isnan(np.asarray(arrays[o.name], dtype=np.float32))
            out[OUTSIDE_CALIBRATION + o.name] = np.array([np.count_nonzero(masked)], np.float64)
    return out


class WindowComputer:
    """Read a window's inputs, run the first-pass algorithms, return the written outputs
    (and what the second pass needs, and the window's totals).

    Readers are opened lazily, one set per thread (GDAL datasets must not be
    shared between threads), and closed by :meth:`close`.
    """

    def __init__(self, plan):
        self.plan = plan
        self._local = threading.local()
        self._opened: list[AlignedRaster] = []
        self._lock = threading.Lock()
        first = {a.id for a in plan.stages[0]}
        self._written = [o for a, o in plan.outputs if o.written and a.id in first]
        self._keep = _kept(plan, plan.stages[0], self._written)
        self._schedule = _drop_schedule(plan.stages[0], self._keep)

    def _readers(self) -> dict[str, AlignedRaster]:
        readers = getattr(self._local, "readers", None)
        if readers is None:
            readers = {}
            for name, path in sorted(self.plan.raster_inputs.items()):
                method = Resampling[INPUT_LAYERS[name].resampling]
                readers[name] = AlignedRaster(path, name, self.plan.grid, resampling=method)
            with self._lock:
                self._opened.extend(readers.values())
            self._local.readers = readers
        return readers

    def __call__(self, window: Window) -> WindowResult:
        plan = self.plan
        arrays: dict[str, Any] = dict(plan.vectors)
        implausible = {}
        with bounded_gdal_cache():
            for name, reader in self._readers().items():
                arr = reader.read(window)
                arrays[name] = arr
                lo_hi = INPUT_LAYERS[name].plausible_range
                if lo_hi is not None:
                    with np.errstate(invalid="ignore"):
                        bad = (arr < lo_hi[0]) | (arr > lo_hi[1])
                    implausible[name] = int(np.count_nonzero(bad))
        arrays.update(_grid_layers(plan, window, plan.grid_layers))
        _run_in_bands(plan.stages[0], arrays, plan.parameters, self._schedule, self._keep)
        return WindowResult(
            window,
            {o.name: arrays[o.name] for o in self._written},
            implausible,
            carry={n: arrays[n] for n in plan.carry},
            summaries=_summaries(plan, arrays, plan.stages[0]),
        )

    def close(self) -> None:
        with self._lock:
            for reader in self._opened:
                reader.close()
            self._opened.clear()


def carry_path(carry_dir, window: Window):
    """File holding a window's first-pass arrays for the second pass."""
    return carry_dir / f"{int(window.row_off)}_{int(window.col_off)}.npz"


class SecondPassComputer:
    """Second pass: the algorithms that read whole-grid layers (distance to melt).

    Reads what the first pass kept of each window (:func:`carry_path`), adds the
    neighbourhood layers for the window, runs the second-pass algorithms and
    returns their written outputs. Runs in this process (its inputs are files
    of this run's staging folder).
    """

    def __init__(self, plan, carry_dir, fields: dict):
        self.plan = plan
        self.carry_dir = carry_dir
        self.fields = fields
        second = {a.id for a in plan.stages[1]}
        self._written = [o for a, o in plan.outputs if o.written and a.id in second]
        self._keep = _kept(plan, plan.stages[1], self._written)
        self._schedule = _drop_schedule(plan.stages[1], self._keep)
        # Only the grid layers the second-pass algorithms read: the cell coordinates cost a
        # map-projection inverse per cell, the first pass's totals already have the areas.
        self._grid_layers = {
            n for a in plan.stages[1] for n in (*a.inputs, *a.optional_inputs)
        } & set(plan.grid_layers)
        # Totals whose inputs all exist in the first pass were added up there already.
        first = {o.name for a, o in plan.outputs if a.id not in second}
        first |= set(plan.raster_inputs) | set(GRID_LAYERS)
        self._reducers = [r for r in plan.reducers if not set(r.inputs) <= first]

    def __call__(self, window: Window) -> WindowResult:
        from geomelt.pipeline.neighbourhood import melt_mask

        plan = self.plan
        arrays: dict[str, Any] = dict(plan.vectors)
        with np.load(carry_path(self.carry_dir, window)) as npz:
            arrays.update({name: npz[name] for name in npz.files})
        if "distance_to_melt_km" in self.fields:
            melting = melt_mask(arrays["melting_mechanism"])
            arrays["distance_to_melt_km"] = self.fields["distance_to_melt_km"].distance_km(
                window, melting
            )
        arrays.update(_grid_layers(plan, window, self._grid_layers - set(arrays)))
        _run_in_bands(plan.stages[1], arrays, plan.parameters, self._schedule, self._keep)
        return WindowResult(
            window,
            {o.name: arrays[o.name] for o in self._written},
            summaries=_summaries(plan, arrays, plan.stages[1], self._reducers),
        )

    def close(self) -> None:
        pass


def _serial(computer: WindowComputer, windows) -> Iterator[WindowResult]:
    for w in windows:
        yield computer(w)


def _threads(computer: WindowComputer, windows, workers: int) -> Iterator[WindowResult]:
    """Windows on a thread pool, handed over in window order (so running totals add up in
    the same order on every run). ``workers + 1`` windows are in flight: one per worker
    and one queued, so a worker rarely waits; a window that finished before an earlier
    one waits for it."""
    if workers <= 1:
        yield from _serial(computer, windows)
        return
    pending: deque = deque()
    with ThreadPoolExecutor(max_workers=workers, thread_name_prefix="geomelt") as pool:
        it = iter(windows)
        for w in it:
            pending.append(pool.submit(computer, w))
            if len(pending) > workers:
                break
        while pending:
            result = pending.popleft().result()
            nxt = next(it, None)
            if nxt is not None:
                pending.append(pool.submit(computer, nxt))
            yield result
            del result


# ----------------------------------------------------------------------------- dask
_WORKER_CACHE: dict[str, WindowComputer] = {}
_WORKER_LOCK = threading.Lock()


WORKER_MALLOC_ENV = {
    "MALLOC_MMAP_THRESHOLD_": str(32 * 2**20),
    "MALLOC_TRIM_THRESHOLD_": str(64 * 2**20),
}
"""glibc heap settings of local dask workers (set before they start). dask's default
(``MALLOC_TRIM_THRESHOLD_=65536``) also freezes glibc's mmap threshold at 128 kB, so every
array of a window was a fresh ``mmap`` whose pages the kernel zeroed again: on 2 cores
that system time made the dask engine take about twice as long as the thread engine.
These are the values glibc itself settles on for a process that allocates such arrays."""


def _dask_window(plan_blob: bytes, key: str, window_tuple) -> WindowResult:
    """Runs on a dask worker: unpickle (once per worker) the client's plan, compute one
    window."""
    with _WORKER_LOCK:
        computer = _WORKER_CACHE.get(key)
        if computer is None:
            plan = pickle.loads(plan_blob)  # noqa: S301 - our own object, from our client
            computer = _WORKER_CACHE[key] = WindowComputer(plan)
    return computer(Window(*window_tuple))


def _dask(plan, windows, scheduler: str, workers: int) -> Iterator[WindowResult]:
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:  # pragma: no cover - optional dependency
        msg = (
            "the dask engine needs dask.distributed: pip install 'geomelt[dask]' (or "
            "'dask[distributed]'), or run with the default thread engine."
        )
        raise GeomeltError(msg) from None
    cluster = None
    if scheduler in ("", "local"):
        import dask

        spawn_env = dict(dask.config.get("distributed.nanny.pre-spawn-environ", {}) or {})
        spawn_env.update(WORKER_MALLOC_ENV)
        with dask.config.set({"distributed.nanny.pre-spawn-environ": spawn_env}):
            cluster = LocalCluster(
                n_workers=max(1, workers),
                threads_per_worker=1,
                processes=True,
                dashboard_address=None,
                env={"GDAL_CACHEMAX": str(GDAL_CACHE_MIB), "GDAL_NUM_THREADS": "1"},
            )
        client = Client(cluster)
    else:
        client = Client(scheduler)
    try:
        # The plan as checked here (not rebuilt on every worker), sent to each worker once.
        blob = pickle.dumps(plan)
        key = hashlib.sha256(blob).hexdigest()
        [blob_on_workers] = client.scatter([blob], broadcast=True, hash=False)
        it = iter(windows)
        cap = max(4, 2 * sum(client.nthreads().values()))
        pending: deque = deque()

        def submit(w) -> None:
            pending.append(
                client.submit(_dask_window, blob_on_workers, key, tuple(w.flatten()), pure=False)
            )

        for w in it:
            submit(w)
            if len(pending) >= cap:
                break
        # Handed over in window order, as the thread engine does.
        while pending:
            fut = pending.popleft()
            result = fut.result()
            fut.release()
            nxt = next(it, None)
            if nxt is not None:
                submit(nxt)
            yield result
            del result
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def iterate_windows(
    plan,
    windows,
    engine: str = "threads",
    workers: int = 0,
    scheduler: str | None = None,
    computer=None,
) -> Iterator[WindowResult]:
    """Compute every window with the chosen engine, yielding results as they finish.

    Parameters
    ----------
    plan : RunPlan
        The run plan.
    windows : iterable of Window
        Windows of the reference grid.
    engine : {"threads", "serial", "dask"}
        Thread pool in this process (default), this thread only, or a dask
        cluster.
    workers : int
        Threads (or, for a local dask cluster, processes); 0 means one per core.
    scheduler : str, optional
        dask scheduler address (``tcp://host:8786``) or ``"local"`` to start a
        local cluster.
    computer : callable, optional
        What to run on each window (default: a first-pass :class:`WindowComputer`);
        a :class:`SecondPassComputer` always runs in this process (threads).
    """
    if engine not in ENGINES:
        msg = f"unknown engine {engine!r}; choose one of {', '.join(ENGINES)}"
        raise GeomeltError(msg)
    workers = workers or default_workers()
    if engine == "dask" and computer is None:
        yield from _dask(plan, windows, scheduler or "local", workers)
        return
    if engine == "dask":
        engine = "threads"  # the second pass reads this machine's staging folder
    computer = computer or WindowComputer(plan)
    try:
        if engine == "serial":
            yield from _serial(computer, windows)
        else:
            yield from _threads(computer, windows, workers)
    finally:
        computer.close()
