"""Read a run configuration (TOML) into a :class:`RunConfig`.

The file is parsed as data only (TOML has no expressions). Layout::

    [inputs]                       # paths relative to this file
    crustal_thickness_km = "crustal_thickness_km.tif"
    heat_flow_mw_m2 = "heat_flow_mw_m2.tif"
    slab_depth_km = "slab_depth_km.tif"            # optional
    plate_boundaries = "plate_boundaries.gpkg"
    hotspots = "hotspots.gpkg"                     # optional

    [parameters]                   # any algorithm parameter, by name
    mantle_potential_temperature_c = 1350.0

    [run]
    reference_grid = "crustal_thickness_km"        # which input defines the grid
    block_size = 256                               # window size in cells
    scheduler = "tcp://host:8786"                  # optional: a dask cluster
"""

from __future__ import annotations

import difflib
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from geomelt.errors import ConfigError
from geomelt.layers import INPUT_LAYERS

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["RUN_OPTIONS", "TABLES", "RunConfig", "load_config", "parse_value"]

RUN_OPTIONS: dict[str, tuple[type, Any, str]] = {
    "reference_grid": (str, "crustal_thickness_km", "input raster that defines the output grid"),
    "block_size": (int, 256, "window size in cells (multiple of 16)"),
    "scheduler": (
        str,
        "",
        "dask scheduler address (tcp://host:8786) or 'local' to compute the windows on a dask "
        "cluster; empty: this machine's thread pool",
    ),
}
"""Keys of the ``[run]`` table: (type, default, meaning)."""

TABLES = ("inputs", "parameters", "run")
"""The tables a configuration file may hold."""


@dataclass
class RunConfig:
    """A run's inputs, parameters and run options (paths are absolute)."""

    inputs: dict[str, Path] = field(default_factory=dict)
    parameters: dict[str, Any] = field(default_factory=dict)
    run: dict[str, Any] = field(default_factory=lambda: {k: v[1] for k, v in RUN_OPTIONS.items()})
    source: Path | None = None

    def with_overrides(
        self,
        inputs: dict[str, str] | None = None,
        parameters: dict[str, Any] | None = None,
        run: dict[str, Any] | None = None,
    ) -> RunConfig:
        """Copy with inputs (paths relative to the working directory), parameters or run options replaced."""
        new_inputs = dict(self.inputs)
        for name, p in (inputs or {}).items():
            _check_input_name(name, "--input")
            new_inputs[name] = Path(p).expanduser().resolve()
        new_run = dict(self.run)
        for key, value in (run or {}).items():
            new_run[key] = _check_run_option(key, value, "command line")
        return RunConfig(
            inputs=new_inputs,
            parameters={**self.parameters, **(parameters or {})},
            run=new_run,
            source=self.source,
        )


def _did_you_mean(name: str, known) -> str:
    close = difflib.get_close_matches(str(name), list(known), n=1)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _check_input_name(name: str, where: str) -> None:
    if name not in INPUT_LAYERS:
        msg = (
            f"{where}: unknown input layer {name!r}{_did_you_mean(name, INPUT_LAYERS)}. "
            f"Known input layers: {', '.join(INPUT_LAYERS)}."
        )
        raise ConfigError(msg)


def _check_run_option(key: str, value: Any, where: str) -> Any:
    if key not in RUN_OPTIONS:
        msg = (
            f"{where}: unknown [run] option {key!r}{_did_you_mean(key, RUN_OPTIONS)}. "
            f"Known options: {', '.join(RUN_OPTIONS)}."
        )
        raise ConfigError(msg)
    typ = RUN_OPTIONS[key][0]
    example = f"{key} = {RUN_OPTIONS[key][1]!r}".replace("'", '"')
    if typ is int and (isinstance(value, bool) or not isinstance(value, int)):
        msg = f"{where}: [run] {key} must be a whole number, got {value!r}; e.g. {example}."
        raise ConfigError(msg)
    if typ is str and not isinstance(value, str):
        msg = f"{where}: [run] {key} must be text in quotes, got {value!r}; e.g. {example}."
        raise ConfigError(msg)
    if key == "block_size" and not (16 <= value <= 8192 and value % 16 == 0):
        msg = (
            f"{where}: [run] block_size must be a multiple of 16 between 16 and 8192, got {value}."
        )
        raise ConfigError(msg)
    if key == "scheduler" and value not in ("", "local") and "://" not in value:
        msg = (
            f"{where}: [run] scheduler must be a dask scheduler address such as "
            f'"tcp://host:8786", "local" for a cluster of worker processes on this machine, '
            f'or "" for none; got {value!r}.'
        )
        raise ConfigError(msg)
    if key == "reference_grid":
        _check_input_name(value, f"{where}: [run] reference_grid")
        if INPUT_LAYERS[value].kind != "raster":
            rasters = [n for n, layer in INPUT_LAYERS.items() if layer.kind == "raster"]
            msg = (
                f"{where}: [run] reference_grid must name a raster input ({', '.join(rasters)}), "
                f"got {value!r}."
            )
            raise ConfigError(msg)
    return value


def parse_value(text: str) -> Any:
    """Parse a command-line value as a TOML value (number, string, list, boolean).

    Bare words that are not valid TOML are taken as strings, so
    ``--param heat_flow_partition=pollack_chapman`` works without quotes.
    """
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except tomllib.TOMLDecodeError:
        return text


def load_config(path) -> RunConfig:
    """Load and check a TOML run configuration.

    Raises
    ------
    ConfigError
        The file is missing, is not valid TOML, or has unknown tables or keys.
    """
    path = Path(path).expanduser().resolve()
    if not path.is_file():
        what = "is a folder" if path.is_dir() else "does not exist"
        msg = (
            f"configuration file {str(path)!r} {what}. Give the path of the run's TOML file "
            "(see 'Running your own region' in the README for its layout)."
        )
        raise ConfigError(msg)
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        msg = (
            f"configuration file {path.name} is not valid TOML: {exc}. Fix that line; text "
            'values need quotes (path = "file.tif"), numbers do not.'
        )
        raise ConfigError(msg) from None
    except OSError as exc:
        msg = f"configuration file {path.name} cannot be read: {exc.strerror or exc}."
        raise ConfigError(msg) from None
    unknown = set(data) - set(TABLES)
    if unknown:
        hints = ", ".join(f"{k!r}{_did_you_mean(k, TABLES)}" for k in sorted(unknown))
        msg = (
            f"configuration file {path.name}: unknown table(s) or key(s) outside a table: "
            f"{hints}. Allowed tables: [inputs], [parameters], [run]."
        )
        raise ConfigError(msg)
    for table in TABLES:
        if not isinstance(data.get(table, {}), dict):
            msg = (
                f"configuration file {path.name}: '{table}' must be a table ([{table}] on its "
                f"own line, then name = value lines), got {data[table]!r}."
            )
            raise ConfigError(msg)
    cfg = RunConfig(source=path)
    for name, value in data.get("inputs", {}).items():
        _check_input_name(name, f"{path.name} [inputs]")
        if not isinstance(value, str) or not value.strip():
            msg = (
                f"{path.name} [inputs] {name} must be a file path in quotes, got {value!r}; "
                f'e.g. {name} = "{name}.tif".'
            )
            raise ConfigError(msg)
        cfg.inputs[name] = (path.parent / Path(value).expanduser()).resolve()
    cfg.parameters.update(data.get("parameters", {}))
    for key, value in data.get("run", {}).items():
        cfg.run[key] = _check_run_option(key, value, f"{path.name}")
    return cfg
