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
    block_size = 512                               # window size in cells
"""

from __future__ import annotations

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

__all__ = ["RUN_OPTIONS", "RunConfig", "load_config", "parse_value"]

RUN_OPTIONS: dict[str, tuple[type, Any, str]] = {
    "reference_grid": (str, "crustal_thickness_km", "input raster that defines the output grid"),
    "block_size": (int, 512, "window size in cells (multiple of 16)"),
}
"""Keys of the ``[run]`` table: (type, default, meaning)."""


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


def _check_input_name(name: str, where: str) -> None:
    if name not in INPUT_LAYERS:
        msg = (
            f"{where}: unknown input layer {name!r}. Known input layers: {', '.join(INPUT_LAYERS)}."
        )
        raise ConfigError(msg)


def _check_run_option(key: str, value: Any, where: str) -> Any:
    if key not in RUN_OPTIONS:
        msg = f"{where}: unknown [run] option {key!r}. Known options: {', '.join(RUN_OPTIONS)}."
        raise ConfigError(msg)
    typ = RUN_OPTIONS[key][0]
    if typ is int and (isinstance(value, bool) or not isinstance(value, int)):
        msg = f"{where}: [run] {key} must be a whole number, got {value!r}."
        raise ConfigError(msg)
    if typ is str and not isinstance(value, str):
        msg = f"{where}: [run] {key} must be text, got {value!r}."
        raise ConfigError(msg)
    if key == "block_size" and not (16 <= value <= 8192 and value % 16 == 0):
        msg = (
            f"{where}: [run] block_size must be a multiple of 16 between 16 and 8192, got {value}."
        )
        raise ConfigError(msg)
    if key == "reference_grid":
        _check_input_name(value, f"{where}: [run] reference_grid")
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
        msg = f"configuration file {str(path)!r} does not exist."
        raise ConfigError(msg)
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        msg = f"configuration file {path.name} is not valid TOML: {exc}."
        raise ConfigError(msg) from None
    unknown = set(data) - {"inputs", "parameters", "run"}
    if unknown:
        msg = (
            f"configuration file {path.name}: unknown table(s) {', '.join(sorted(unknown))}. "
            "Allowed tables: [inputs], [parameters], [run]."
        )
        raise ConfigError(msg)
    cfg = RunConfig(source=path)
    for name, value in data.get("inputs", {}).items():
        _check_input_name(name, f"{path.name} [inputs]")
        if not isinstance(value, str):
            msg = f"{path.name} [inputs] {name} must be a file path (text), got {value!r}."
            raise ConfigError(msg)
        cfg.inputs[name] = (path.parent / Path(value).expanduser()).resolve()
    params = data.get("parameters", {})
    if not isinstance(params, dict):
        msg = f"{path.name}: [parameters] must be a table."
        raise ConfigError(msg)
    cfg.parameters.update(params)
    for key, value in data.get("run", {}).items():
        cfg.run[key] = _check_run_option(key, value, f"{path.name}")
    return cfg
