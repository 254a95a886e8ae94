"""Run every geomelt algorithm over a region described by a TOML configuration.

A thin script over the library, for batch jobs and schedulers that prefer a
plain Python entry point to the ``geomelt`` command::

    python processing_scripts/run_region.py sample_layers/region.toml demo_output --overwrite
"""

from __future__ import annotations

import argparse
import logging
import sys

from geomelt.errors import GeomeltError
from geomelt.io.config import load_config
from geomelt.pipeline import execute_run, plan_run


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("config", help="run configuration (TOML)")
    parser.add_argument("out_dir", help="output folder")
    parser.add_argument("--overwrite", action="store_true", help="replace earlier outputs")
    args = parser.parse_args(argv)
    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    try:
        plan = plan_run(load_config(args.config))
        result = execute_run(plan, args.out_dir, overwrite=args.overwrite)
    except GeomeltError as exc:
        print(f"Error: {exc}", file=sys.stderr)
        return 1
    for path in result.files:
        print(path)
    for text in result.warnings:
        print(f"warning: {text}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
