"""Write the run's GeoPackage (``results.gpkg``).

Layers are written with pyogrio and GeoPackage version 1.2 so that GDAL
3.6-era readers (QGIS 3.22) open them without compatibility warnings.
"""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path

import pandas as pd
import pyogrio

__all__ = ["GPKG_DATASET_OPTIONS", "write_attribute_table", "write_run_metadata"]

GPKG_DATASET_OPTIONS = {"VERSION": "1.2"}
"""GeoPackage 1.2: readable and valid for GDAL 3.6 readers (newer GDAL writes 1.4)."""


def write_attribute_table(
    path, layer: str, frame: pd.DataFrame, description: str, append_layer: bool = True
) -> None:
    """Write a table without geometry as a GeoPackage ``attributes`` layer."""
    pyogrio.write_dataframe(
        frame,
        Path(path),
        layer=layer,
        driver="GPKG",
        dataset_options=GPKG_DATASET_OPTIONS,
        layer_options={"DESCRIPTION": description, "IDENTIFIER": layer},
    )


def write_run_metadata(path, records: Iterable[tuple[str, str, str]]) -> None:
    """Write the ``run_metadata`` table: one row per (section, key, value)."""
    frame = pd.DataFrame(list(records), columns=["section", "key", "value"])
    write_attribute_table(
        path, "run_metadata", frame, "geomelt run provenance: versions, inputs, parameters"
    )
