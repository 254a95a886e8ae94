"""Exceptions and warnings raised by geomelt.

Every error derives from :class:`GeomeltError` and also from the builtin it
replaces, so callers may catch either. Messages name the layer or parameter,
what is wrong and how to fix it.
"""

from __future__ import annotations

__all__ = [
    "ConfigError",
    "GeomeltError",
    "GeomeltIOError",
    "GeomeltWarning",
    "InputLayerError",
    "LayerMismatchError",
    "MissingLayerError",
    "OutputExistsError",
    "OutsideCalibrationWarning",
    "ParameterError",
]


class GeomeltError(Exception):
    """Root of every geomelt error."""


class ParameterError(GeomeltError, ValueError):
    """A run parameter is unknown, of the wrong type or outside its valid range."""


class ConfigError(GeomeltError, ValueError):
    """The run configuration (TOML) cannot be understood."""


class InputLayerError(GeomeltError, ValueError):
    """An input layer is unreadable, has the wrong content, units or schema."""


class MissingLayerError(GeomeltError, KeyError):
    """A required input layer was not given or does not exist."""

    def __str__(self) -> str:  # KeyError would otherwise quote the message
        return str(self.args[0]) if self.args else ""


class LayerMismatchError(GeomeltError, ValueError):
    """Input layers cannot be put on one grid (no overlap, no CRS, ...)."""


class GeomeltIOError(GeomeltError, OSError):
    """A file could not be read or written."""


class OutputExistsError(GeomeltError, FileExistsError):
    """The output folder exists and ``--overwrite`` was not given."""


class GeomeltWarning(UserWarning):
    """Root of geomelt warnings."""


class OutsideCalibrationWarning(GeomeltWarning):
    """Values fall outside the range a published method was calibrated for."""
