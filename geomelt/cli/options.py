"""Shared click options, logging set-up and error handling for geomelt commands."""

from __future__ import annotations

import functools
import logging
import sys

import click

from geomelt.errors import (
    ConfigError,
    GeomeltError,
    GeomeltIOError,
    InputLayerError,
    LayerMismatchError,
    MissingLayerError,
    OutputExistsError,
    ParameterError,
)

EXIT_CODES: tuple[tuple[type[GeomeltError], int], ...] = (
    (ConfigError, 2),
    (ParameterError, 2),
    (MissingLayerError, 3),
    (InputLayerError, 3),
    (LayerMismatchError, 3),
    (OutputExistsError, 4),
    (GeomeltIOError, 4),
)
"""Exit code per error class (0 success; 1 other failures; 2 configuration or parameters;
3 input layers; 4 output location)."""


def exit_code_for(exc: GeomeltError) -> int:
    """Exit code for a geomelt error."""
    for cls, code in EXIT_CODES:
        if isinstance(exc, cls):
            return code
    return 1


def verbosity(func):
    """Add ``-v/--verbose`` and ``-q/--quiet`` (repeatable) and set the log level."""

    @click.option("-v", "--verbose", count=True, help="More log output on stderr (repeatable).")
    @click.option("-q", "--quiet", count=True, help="Less log output on stderr (repeatable).")
    @functools.wraps(func)
    def wrapper(*args, verbose: int, quiet: int, **kwargs):
        level = max(10, min(50, 30 - 10 * (verbose - quiet)))
        logging.basicConfig(
            level=level, format="%(levelname)s %(name)s: %(message)s", stream=sys.stderr
        )
        logging.getLogger("geomelt").setLevel(level)
        return func(*args, **kwargs)

    return wrapper


def handle_errors(func):
    """Turn geomelt errors into a one-paragraph message and a documented exit code."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        try:
            return func(*args, **kwargs)
        except GeomeltError as exc:
            click.echo(f"Error: {exc}", err=True)
            sys.exit(exit_code_for(exc))
        except KeyboardInterrupt:
            click.echo("Interrupted: no output was left under a final name.", err=True)
            sys.exit(130)

    return wrapper


def parse_assignments(values: tuple[str, ...], option: str) -> dict[str, str]:
    """Split repeated ``NAME=VALUE`` options into a mapping."""
    out = {}
    for item in values:
        name, sep, value = item.partition("=")
        if not sep or not name.strip():
            msg = f"expected NAME=VALUE, got {item!r}"
            raise click.BadParameter(msg, param_hint=option)
        out[name.strip()] = value.strip()
    return out
