"""``geomelt algorithms`` and ``geomelt describe``: what the registry holds."""

from __future__ import annotations

import json

import click

from geomelt.algorithms import get_algorithm, registered_algorithms
from geomelt.cli.options import handle_errors


@click.command("algorithms")
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list instead of a table.")
def algorithms_cmd(as_json: bool) -> None:
    """List the registered processing algorithms."""
    algs = registered_algorithms()
    if as_json:
        rows = [{"id": a.id, "version": a.version, "title": a.title} for a in algs.values()]
        click.echo(json.dumps(rows, indent=2))
        return
    width = max(len(i) for i in algs)
    for alg in algs.values():
        outs = ", ".join(o.name for o in alg.output_layers())
        click.echo(f"{alg.id:<{width}}  {alg.title} (v{alg.version})")
        click.echo(f"{'':<{width}}  outputs: {outs}")


@click.command("describe")
@click.argument("algorithm_id")
@handle_errors
def describe_cmd(algorithm_id: str) -> None:
    """Print ALGORITHM_ID's process description as JSON (OGC API - Processes shape)."""
    doc = get_algorithm(algorithm_id).describe()
    click.echo(json.dumps(doc, indent=2, allow_nan=False))
