"""Run configuration parsing: data only, clear errors."""

from __future__ import annotations

import pytest

from geomelt.errors import ConfigError
from geomelt.io.config import load_config, parse_value


def test_paths_are_relative_to_the_toml(tiny_region):
    cfg = load_config(tiny_region)
    assert cfg.inputs["heat_flow_mw_m2"] == tiny_region.parent / "heat.tif"
    assert cfg.run["block_size"] == 32
    assert cfg.run["scheduler"] == ""  # default: no dask cluster
    assert cfg.parameters["isotherms_c"] == [150.0]


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("[inputs]\nheat_flow = 'x.tif'\n", "unknown input layer 'heat_flow'"),
        ("[outputs]\nx = 1\n", "unknown table"),
        ("[run]\nblock_size = 100\n", "multiple of 16"),
        ("[run]\nthreads = 2\n", "unknown \\[run\\] option"),
        ("[run]\nscheduler = 'host:8786'\n", "dask scheduler address such as"),
        ("[inputs]\nheat_flow_mw_m2 = 3\n", "must be a file path"),
        ("this is = = not toml", "not valid TOML"),
    ],
    ids=[
        "unknown-input",
        "unknown-table",
        "bad-block",
        "unknown-run-key",
        "scheduler-without-scheme",
        "path-type",
        "syntax",
    ],
)
def test_bad_configs(tmp_path, text, match):
    p = tmp_path / "c.toml"
    p.write_text(text)
    with pytest.raises(ConfigError, match=match):
        load_config(p)


def test_parse_value_is_data_only():
    assert parse_value("1400") == 1400
    assert parse_value("[1.0, 2.5]") == [1.0, 2.5]
    assert parse_value("pollack_chapman") == "pollack_chapman"
    assert parse_value("__import__('os')") == "__import__('os')"
