"""The algorithm record and its OGC API - Processes description.

An :class:`Algorithm` declares, in one place, what a processing step needs
and gives: its input layers, its output layers (names, units, dtypes,
nodata), its parameter set (names, units, defaults, valid ranges, sources)
and its references. The pipeline checks inputs and allocates outputs from
this record; ``geomelt describe`` prints it as a process description in the
shape of OGC API - Processes Part 1 (an open OGC standard).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from geomelt.layers import INPUT_LAYERS, NEIGHBOURHOOD_LAYERS, OutputLayer
from geomelt.parameters import ParameterSet

__all__ = ["Algorithm"]

ComputeFn = Callable[[Mapping[str, np.ndarray], ParameterSet], dict[str, np.ndarray]]
OutputsFn = Callable[[ParameterSet], tuple[OutputLayer, ...]]

_GEOTIFF_MEDIA = "image/tiff; application=geotiff"


def _json_number(value: Any) -> Any:
    """NaN and infinities are not JSON: map them to None (null)."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, tuple):
        return [_json_number(v) for v in value]
    return value


@dataclass(frozen=True)
class Algorithm:
    """A registered processing algorithm.

    Parameters
    ----------
    id : str
        Stable identifier (``thermal_state``).
    version : str
        Version of the algorithm's method; bump when its numbers change.
    title, description : str
        Human-readable title and description.
    inputs : tuple of str
        Layers it reads: input layer names (:data:`geomelt.layers.INPUT_LAYERS`)
        or outputs of other algorithms.
    optional_inputs : tuple of str
        Layers used when present.
    parameters : type of ParameterSet
        Its parameter set (defaults, units, ranges and sources).
    outputs : callable
        ``outputs(params) -> tuple[OutputLayer, ...]``; output names may depend
        on parameters (e.g. one temperature map per configured depth).
    compute : callable
        ``compute(arrays, params) -> {output name: array}``, pure and
        vectorised; arrays are float64 with NaN for nodata, one per input.
    references : tuple of str
        Published sources of the method.
    cellwise : bool
        True (the default) when each cell's outputs depend only on that cell's
        inputs (and the vector layers): the pipeline may then compute a window in
        bands of rows (:data:`geomelt.pipeline.engines.COMPUTE_BAND_CELLS`). An
        algorithm that looks at its neighbours within the window, or at the
        window's position, sets False.
    """

    id: str
    version: str
    title: str
    description: str
    inputs: tuple[str, ...]
    parameters: type[ParameterSet]
    outputs: OutputsFn
    compute: ComputeFn
    references: tuple[str, ...] = ()
    optional_inputs: tuple[str, ...] = ()
    keywords: tuple[str, ...] = ()
    cellwise: bool = True

    def output_layers(self, params: ParameterSet | None = None) -> tuple[OutputLayer, ...]:
        """Output layers for the given (or default) parameters."""
        return self.outputs(params if params is not None else self.parameters())

    def describe(self) -> dict[str, Any]:
        """Process description (OGC API - Processes Part 1 shape), JSON-ready."""
        inputs: dict[str, Any] = {}
        for name in self.inputs + self.optional_inputs:
            optional = name in self.optional_inputs
            layer = INPUT_LAYERS.get(name)
            if layer is not None and layer.kind == "raster":
                schema = {"type": "string", "format": "uri", "contentMediaType": _GEOTIFF_MEDIA}
                desc = layer.description
                unit = layer.unit
            elif layer is not None:
                schema = {
                    "type": "string",
                    "format": "uri",
                    "contentMediaType": "application/geopackage+sqlite3",
                }
                desc = layer.description
                unit = ""
            elif name in NEIGHBOURHOOD_LAYERS:
                schema = {"type": "string", "format": "uri", "contentMediaType": _GEOTIFF_MEDIA}
                desc = (
                    f"{NEIGHBOURHOOD_LAYERS[name].description}. Built by the run from the whole "
                    f"grid of {', '.join(NEIGHBOURHOOD_LAYERS[name].sources)}, between its passes"
                )
                unit = NEIGHBOURHOOD_LAYERS[name].unit
            else:
                schema = {"type": "string", "format": "uri", "contentMediaType": _GEOTIFF_MEDIA}
                desc = f"Layer '{name}' produced by another geomelt algorithm in the same run"
                unit = _unit_from_name(name)
            entry = {
                "title": name,
                "description": desc,
                "minOccurs": 0 if optional else 1,
                "maxOccurs": 1,
                "schema": schema,
            }
            if unit:
                entry["schema"]["x-unit"] = unit
            inputs[name] = entry
        for f in dataclasses.fields(self.parameters):
            const = f.metadata["constant"]
            if isinstance(const.value, tuple):
                item: dict[str, Any] = {"type": "number"}
                if const.minimum is not None:
                    item["minimum"] = const.minimum
                if const.maximum is not None:
                    item["maximum"] = const.maximum
                schema = {"type": "array", "items": item, "default": list(const.value)}
            elif const.choices is not None:
                schema = {"type": "string", "enum": list(const.choices), "default": const.value}
            else:
                schema = {"type": "number", "default": _json_number(const.value)}
                if const.minimum is not None:
                    schema["minimum"] = const.minimum
                if const.maximum is not None:
                    schema["maximum"] = const.maximum
            if const.unit:
                schema["x-unit"] = const.unit
            inputs[f.name] = {
                "title": f.name,
                "description": f"{const.description}. Source: {const.source}.",
                "minOccurs": 0,
                "maxOccurs": 1,
                "schema": schema,
            }
        outputs = {}
        for out in self.output_layers():
            if not out.written:
                continue
            schema = {
                "type": "string",
                "format": "uri",
                "contentMediaType": _GEOTIFF_MEDIA,
                "x-unit": out.unit,
                "x-dtype": out.dtype,
                "x-nodata": _json_number(float(out.nodata)),
            }
            outputs[out.name] = {
                "title": out.long_name,
                "description": out.description,
                "schema": schema,
            }
        return {
            "id": self.id,
            "version": self.version,
            "title": self.title,
            "description": self.description,
            "keywords": list(self.keywords),
            "jobControlOptions": ["sync-execute"],
            "outputTransmission": ["reference"],
            "inputs": inputs,
            "outputs": outputs,
            "metadata": [{"role": "reference", "title": ref} for ref in self.references],
        }


def _unit_from_name(name: str) -> str:
    for suffix, unit in (("_km", "km"), ("_c", "degC"), ("_mw_m2", "mW m-2"), ("_ma", "Ma")):
        if name.endswith(suffix):
            return unit
    return ""
