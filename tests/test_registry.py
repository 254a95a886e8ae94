"""Meta-tests over every registered algorithm's declaration table."""

from __future__ import annotations

import dataclasses
import json
import math

import pytest

from geomelt.algorithms import algorithm_chain, registered_algorithms
from geomelt.layers import GRID_LAYERS, INPUT_LAYERS, NEIGHBOURHOOD_LAYERS

ALGORITHMS = list(registered_algorithms().values())
UNIT_SUFFIX = {
    # unit text -> suffix a parameter or output name with that unit must end with
    "km": "_km",
    "degC": "_c",
    "K": "_k",
    "Ma": "_ma",
    "wt%": "_wt_pct",
    "mW m-2": "_mw_m2",
    "uW m-3": "_uw_m3",
    "W m-1 K-1": "_w_m_k",
    "K km-1": "_k_km",
    "m2 s-1": "_m2_s",
    "kg m-3": "_kg_m3",
    "J kg-1 K-1": "_j_kg_k",
    "mm yr-1": "_mm_yr",
    "m3 km-2 yr-1": "_m3_km2_yr",
    "km2": "_km2",
}
DIMENSIONLESS = ("", "1", "class")


@pytest.mark.parametrize("alg", ALGORITHMS, ids=lambda a: a.id)
def test_declaration_is_complete(alg):
    assert alg.id and alg.title and alg.description and alg.version
    assert alg.references, "every algorithm cites its published method"
    for f in dataclasses.fields(alg.parameters):
        const = f.metadata["constant"]
        assert const.source, f"{f.name} has no source"
        assert const.description, f"{f.name} has no description"
        if const.unit not in DIMENSIONLESS:
            assert const.unit in UNIT_SUFFIX, f"add the unit {const.unit!r} to UNIT_SUFFIX"
            assert f.name.endswith(UNIT_SUFFIX[const.unit]), (
                f"parameter {f.name} ({const.unit}) does not carry its unit in its name"
            )
    for out in alg.output_layers():
        assert out.unit, f"{out.name} has no unit"
        if out.unit not in DIMENSIONLESS:
            assert out.name.endswith(UNIT_SUFFIX[out.unit]), f"{out.name} lacks its unit"
        assert out.long_name and out.description


@pytest.mark.parametrize("alg", ALGORITHMS, ids=lambda a: a.id)
def test_describe_is_valid_json_with_units(alg):
    doc = alg.describe()
    text = json.dumps(doc, allow_nan=False)  # NaN nodata must have become null
    again = json.loads(text)
    assert again["id"] == alg.id
    for name in alg.inputs:
        assert name in again["inputs"]
    for f in dataclasses.fields(alg.parameters):
        schema = again["inputs"][f.name]["schema"]
        assert "default" in schema
    for out in alg.output_layers():
        if out.written:
            assert again["outputs"][out.name]["schema"]["x-unit"] == out.unit
        else:
            assert out.name not in again["outputs"], "unwritten arrays are not process outputs"


def test_chain_orders_producers_first():
    chain = algorithm_chain()
    produced = set(INPUT_LAYERS) | set(GRID_LAYERS)
    for alg in chain:
        for name in alg.inputs:
            if name in NEIGHBOURHOOD_LAYERS:
                # built between the passes: its sources must come first
                for source in NEIGHBOURHOOD_LAYERS[name].sources:
                    assert source in produced, f"{alg.id} runs before the producer of {source}"
                continue
            assert name in produced, f"{alg.id} runs before the producer of {name}"
        produced.update(o.name for o in alg.output_layers())


def test_whole_grid_layers_split_the_run_into_two_passes():
    from geomelt.pipeline.runner import _split_passes

    chain = algorithm_chain()
    stages, carry = _split_passes(chain, {"crustal_thickness_km", "heat_flow_mw_m2"})
    assert [a.id for a in stages[1]] == ["geothermal_screening"]
    assert "melting_mechanism" in carry and "distance_to_melt_km" not in carry
    assert "geothermal_screening" not in [a.id for a in stages[0]]
    # without a whole-grid layer there is one pass and nothing is carried
    stages, carry = _split_passes(algorithm_chain(["melt_productivity"]), set())
    assert len(stages) == 1 and carry == ()


def test_parameter_names_mean_the_same_everywhere():
    seen = {}
    for alg in ALGORITHMS:
        for f in dataclasses.fields(alg.parameters):
            const = f.metadata["constant"]
            if f.name in seen:
                assert seen[f.name] is const, f"{f.name} defined differently in two algorithms"
            seen[f.name] = const
            if isinstance(const.value, float):
                assert math.isfinite(const.value)
