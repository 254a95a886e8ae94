"""Registry of processing algorithms.

Built-in algorithms are listed here in run order; third-party packages add
theirs through the ``geomelt.algorithms`` entry-point group (the object
named must be an :class:`~geomelt.algorithms.base.Algorithm`).
"""

from __future__ import annotations

import logging
from importlib.metadata import entry_points

from geomelt.algorithms.base import Algorithm
from geomelt.algorithms.melting import CRUSTAL_MELTING, DECOMPRESSION_MELTING, FLUX_MELTING
from geomelt.algorithms.productivity import MELT_PRODUCTIVITY
from geomelt.algorithms.screening import GEOTHERMAL_SCREENING, MINERAL_SCREENING
from geomelt.algorithms.tectonics import BOUNDARY_PROXIMITY, TECTONIC_SETTING
from geomelt.algorithms.thermal import THERMAL_STATE
from geomelt.errors import ConfigError, GeomeltError
from geomelt.layers import GRID_LAYERS, INPUT_LAYERS, NEIGHBOURHOOD_LAYERS

__all__ = ["Algorithm", "algorithm_chain", "get_algorithm", "registered_algorithms"]

log = logging.getLogger(__name__)

_BUILTIN: tuple[Algorithm, ...] = (
    THERMAL_STATE,
    DECOMPRESSION_MELTING,
    FLUX_MELTING,
    CRUSTAL_MELTING,
    BOUNDARY_PROXIMITY,
    TECTONIC_SETTING,
    MELT_PRODUCTIVITY,
    MINERAL_SCREENING,
    GEOTHERMAL_SCREENING,
)


def registered_algorithms() -> dict[str, Algorithm]:
    """All algorithms by id: built-ins first, then entry-point plugins."""
    found = {alg.id: alg for alg in _BUILTIN}
    for ep in entry_points(group="geomelt.algorithms"):
        if ep.name in found:
            continue
        try:
            alg = ep.load()
        except Exception as exc:  # noqa: BLE001 - a broken plugin must not stop geomelt
            log.warning("algorithm plugin %r could not be loaded: %s", ep.name, exc)
            continue
        if isinstance(alg, Algorithm):
            found[alg.id] = alg
        else:
            log.warning("entry point %r is not a geomelt Algorithm; ignored", ep.name)
    return found


def get_algorithm(algorithm_id: str) -> Algorithm:
    """Look an algorithm up by id; the error lists the known ids."""
    algs = registered_algorithms()
    if algorithm_id not in algs:
        msg = (
            f"unknown algorithm {algorithm_id!r}; known: {', '.join(algs)}. Run "
            "'geomelt algorithms' to list them with their titles."
        )
        raise ConfigError(msg)
    return algs[algorithm_id]


def algorithm_chain(ids: list[str] | None = None) -> list[Algorithm]:
    """Algorithms to run, ordered so each runs after those producing its inputs.

    Algorithms that produce a layer another chosen algorithm reads are added.

    Raises
    ------
    GeomeltError
        An input is produced by no algorithm, or the dependencies form a cycle.
    """
    algs = registered_algorithms()
    chosen = [get_algorithm(i) for i in ids] if ids else list(algs.values())
    producer = {}
    for alg in algs.values():
        for out in alg.output_layers():
            producer.setdefault(out.name, alg.id)
    ordered: list[Algorithm] = []
    visiting: set[str] = set()

    def visit(alg: Algorithm) -> None:
        if alg in ordered:
            return
        if alg.id in visiting:
            msg = f"algorithm {alg.id!r} depends on itself through its inputs"
            raise GeomeltError(msg)
        visiting.add(alg.id)
        for name in alg.inputs:
            if name in INPUT_LAYERS or name in GRID_LAYERS:
                continue
            if name in NEIGHBOURHOOD_LAYERS:
                # built by the pipeline between its passes, from layers of the first pass
                for source in NEIGHBOURHOOD_LAYERS[name].sources:
                    visit(algs[producer[source]])
                continue
            if name not in producer:
                msg = f"algorithm {alg.id!r} reads {name!r}, which no algorithm produces"
                raise GeomeltError(msg)
            visit(algs[producer[name]])
        for name in alg.optional_inputs:
            if name not in INPUT_LAYERS and name not in GRID_LAYERS and name in producer:
                visit(algs[producer[name]])
        visiting.discard(alg.id)
        ordered.append(alg)

    for alg in chosen:
        visit(alg)
    return ordered
