"""Where windows are computed: in this thread, in a thread pool, or on a dask cluster.

Every engine runs the same :class:`WindowComputer` on the same windows, so the
pixels do not depend on the engine, the number of workers or the window order.
Results come back to the calling thread, which alone writes the files; at most
a few windows per worker are in flight, so memory stays bounded whatever the
grid size.
"""

from __future__ import annotations

import hashlib
import os
import pickle
import threading
from collections import deque
from collections.abc import Iterator
from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import rasterio
from rasterio.enums import Resampling
from rasterio.windows import Window

from geomelt.errors import GeomeltError
from geomelt.io.rasters import AlignedRaster
from geomelt.layers import INPUT_LAYERS

__all__ = [
    "ENGINES",
    "SecondPassComputer",
    "WindowComputer",
    "WindowResult",
    "carry_path",
    "default_workers",
    "iterate_windows",
]

ENGINES = ("threads", "serial", "dask")
"""Engine names accepted by :func:`iterate_windows`."""

GDAL_CACHE_MB = 128
"""GDAL block cache per process, MB (bounded so memory does not grow with the grid)."""


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


def _run_algorithms(algorithms, arrays: dict, parameters) -> None:
    for alg in algorithms:
        args = {n: arrays[n] for n in alg.inputs}
        args.update({n: arrays[n] for n in alg.optional_inputs if n in arrays})
        arrays.update(alg.compute(args, parameters[alg.id]))


OUTSIDE_CALIBRATION = "outside_calibration:"
"""Prefix of the summaries counting, per output, valid cells a method left without a value."""


def _summaries(plan, arrays: dict, stage) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    for reducer in plan.reducers:
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
        with rasterio.Env(GDAL_CACHEMAX=GDAL_CACHE_MB):
            for name, reader in self._readers().items():
                arr = reader.read(window)
                arrays[name] = arr
                lo_hi = INPUT_LAYERS[name].plausible_range
                if lo_hi is not None:
                    with np.errstate(invalid="ignore"):
                        bad = (arr < lo_hi[0]) | (arr > lo_hi[1])
                    implausible[name] = int(np.count_nonzero(bad))
        arrays.update(_grid_layers(plan, window, plan.grid_layers))
        _run_algorithms(plan.stages[0], arrays, plan.parameters)
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
        arrays.update(_grid_layers(plan, window, plan.grid_layers - set(arrays)))
        _run_algorithms(plan.stages[1], arrays, plan.parameters)
        return WindowResult(
            window,
            {o.name: arrays[o.name] for o in self._written},
            summaries=_summaries(plan, arrays, plan.stages[1]),
        )

    def close(self) -> None:
        pass


def _serial(computer: WindowComputer, windows) -> Iterator[WindowResult]:
    for w in windows:
        yield computer(w)


def _threads(computer: WindowComputer, windows, workers: int) -> Iterator[WindowResult]:
    if workers <= 1:
        yield from _serial(computer, windows)
        return
    in_flight = 2 * workers
    pending: deque = deque()
    with ThreadPoolExecutor(max_workers=workers, thread_name_prefix="geomelt") as pool:
        it = iter(windows)
        for w in it:
            pending.append(pool.submit(computer, w))
            if len(pending) >= in_flight:
                done, _ = wait(pending, return_when=FIRST_COMPLETED)
                for fut in list(pending):
                    if fut in done:
                        pending.remove(fut)
                        yield fut.result()
        while pending:
            yield pending.popleft().result()


# ----------------------------------------------------------------------------- dask
_WORKER_CACHE: dict[str, WindowComputer] = {}
_WORKER_LOCK = threading.Lock()


def _dask_window(config_blob: bytes, key: str, algorithm_ids, window_tuple) -> WindowResult:
    """Runs on a dask worker: rebuild (once per worker) the plan, compute one window."""
    with _WORKER_LOCK:
        computer = _WORKER_CACHE.get(key)
        if computer is None:
            from geomelt.pipeline.runner import plan_run

            config = pickle.loads(config_blob)  # noqa: S301 - our own object, from our client
            computer = _WORKER_CACHE[key] = WindowComputer(plan_run(config, algorithm_ids))
    return computer(Window(*window_tuple))


def _dask(plan, windows, scheduler: str, workers: int) -> Iterator[WindowResult]:
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:  # pragma: no cover - optional dependency
        msg = (
            "the dask engine needs dask.distributed: pip install 'geomelt[dask]' (or "
            "'dask[distributed]'), or run with the default thread engine."
        )
        raise GeomeltError(msg) from None
    cluster = None
    if scheduler in ("", "local"):
        cluster = LocalCluster(
            n_workers=max(1, workers),
            threads_per_worker=1,
            processes=True,
            dashboard_address=None,
            env={"GDAL_CACHEMAX": str(GDAL_CACHE_MB), "GDAL_NUM_THREADS": "1"},
        )
        client = Client(cluster)
    else:
        client = Client(scheduler)
    try:
        blob = pickle.dumps(plan.config)
        key = hashlib.sha256(blob + repr([a.id for a in plan.algorithms]).encode()).hexdigest()
        ids = [a.id for a in plan.algorithms]
        it = iter(windows)
        cap = max(4, 2 * sum(client.nthreads().values()))
        futures = as_completed()
        n = 0
        for w in it:
            futures.add(client.submit(_dask_window, blob, key, ids, tuple(w.flatten()), pure=False))
            n += 1
            if n >= cap:
                break
        for fut in futures:
            result = fut.result()
            fut.release()
            nxt = next(it, None)
            if nxt is not None:
                futures.add(
                    client.submit(_dask_window, blob, key, ids, tuple(nxt.flatten()), pure=False)
                )
            yield result
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
