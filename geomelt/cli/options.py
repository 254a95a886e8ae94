"""Shared click options, logging set-up and error handling for geomelt commands."""

from __future__ import annotations

import errno
import functools
import logging
import os
import sys
from pathlib import Path

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
from geomelt.io.config import RunConfig, load_config, parse_value

log = logging.getLogger("geomelt.cli")

OUTPUT_ERRNOS = {errno.ENOSPC, errno.EDQUOT, errno.EROFS}
"""Operating-system errors that mean the output location cannot take the outputs (exit 4):
disk full, quota exceeded, read-only file system."""

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
    """Turn failures into a one-paragraph message and a documented exit code.

    geomelt errors carry their own message. Operating-system errors that mean
    the outputs cannot be written (disk full, read-only file system) exit with 4; other
    unexpected failures exit with 1 and say how to see the traceback (``-vv``).
    Click's own usage errors pass through (exit 2).
    """

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
        except (click.exceptions.ClickException, click.exceptions.Exit, click.exceptions.Abort):
            raise
        except BrokenPipeError:  # the reader of stdout went away (``geomelt ... | head``)
            _silence_stdout()
            sys.exit(1)
        except Exception as exc:  # noqa: BLE001 - the last line of defence: no tracebacks
            log.debug("traceback of the failure", exc_info=True)
            code, text = describe_failure(exc)
            click.echo(f"Error: {text}", err=True)
            sys.exit(code)

    return wrapper


def _silence_stdout() -> None:
    """Point stdout at the null device so that flushing it at exit raises nothing."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):  # not a real file (e.g. under a test runner)
        pass


def describe_failure(exc: BaseException) -> tuple[int, str]:
    """Exit code and message for a failure that is not a geomelt error."""
    reason = " ".join(str(exc).split()) or type(exc).__name__
    if isinstance(exc, OSError):
        reason = exc.strerror or reason
        if exc.filename:
            reason += f" ({exc.filename})"
    if getattr(exc, "errno", None) in OUTPUT_ERRNOS or "No space left" in reason:
        text = (
            f"writing the outputs failed: {reason}. Unfinished files were removed with the "
            "staging folder. Free space, or choose a writable output folder (-o), and run again."
        )
        return 4, text
    if isinstance(exc, OSError):
        return 1, f"{reason}. Check the file and its permissions, and run again."
    text = (
        f"unexpected failure ({type(exc).__name__}: {reason}). This is probably a bug in "
        "geomelt: run again with -vv to see the traceback, and report it."
    )
    return 1, text


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


def config_with_overrides(
    config: Path,
    inputs: tuple[str, ...] = (),
    params: tuple[str, ...] = (),
    block_size: int | None = None,
) -> RunConfig:
    """Load CONFIG and apply ``--input``, ``--param`` and ``--block-size`` as ``run`` does."""
    cfg = load_config(config)
    return cfg.with_overrides(
        inputs=parse_assignments(inputs, "--input"),
        parameters={k: parse_value(v) for k, v in parse_assignments(params, "--param").items()},
        run={"block_size": block_size} if block_size is not None else {},
    )


input_option = click.option(
    "-i",
    "--input",
    "inputs",
    multiple=True,
    metavar="NAME=PATH",
    help="Override an input layer, e.g. -i heat_flow_mw_m2=hf.tif (repeatable).",
)
"""Shared ``-i/--input NAME=PATH`` option."""

param_option = click.option(
    "-p",
    "--param",
    "params",
    multiple=True,
    metavar="NAME=VALUE",
    help="Override a parameter, e.g. -p mantle_potential_temperature_c=1400 (repeatable). "
    "Values are TOML: numbers, [lists], text.",
)
"""Shared ``-p/--param NAME=VALUE`` option."""


def algorithm_option(verb: str):
    """``-a/--algorithm ID`` (repeatable): ``verb`` says what happens to it ("Run", "Check")."""
    return click.option(
        "-a",
        "--algorithm",
        "algorithm_ids",
        multiple=True,
        metavar="ID",
        help=f"{verb} only this algorithm and those it depends on (repeatable; default: all).",
    )
