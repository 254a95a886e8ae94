"""End-to-end tests of the ``geomelt`` command line on tiny synthetic inputs."""

from __future__ import annotations

import json

import numpy as np
import pyogrio
import pytest
import rasterio
from click.testing import CliRunner

import geomelt
from geomelt.cli import main

THERMAL_OUTPUTS = {
    "moho_temperature_c": "degC",
    "lab_depth_km": "km",
    "moho_heat_flow_mw_m2": "mW m-2",
    "oceanic_plate_age_ma": "Ma",
    "temperature_5km_c": "degC",
    "temperature_10km_c": "degC",
    "isotherm_150c_depth_km": "km",
}


def invoke(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def test_run_writes_every_output_with_metadata(tiny_region, tmp_path):
    out = tmp_path / "out"
    res = invoke("run", tiny_region, "--out", out)
    assert res.exit_code == 0, res.output
    assert "CAUTION" in res.output
    with rasterio.open(tiny_region.parent / "crust.tif") as ref:
        ref_crs, ref_tr, ref_shape = ref.crs, ref.transform, (ref.height, ref.width)
    for name, unit in THERMAL_OUTPUTS.items():
        with rasterio.open(out / f"{name}.tif") as ds:
            assert ds.crs == ref_crs
            assert ds.transform == ref_tr
            assert (ds.height, ds.width) == ref_shape
            assert np.isnan(ds.nodata)
            assert ds.descriptions[0] == name
            assert ds.units[0] == unit
            tags = ds.tags()
            assert tags["caution"] == geomelt.CAUTION
            assert tags["producer"].startswith("geomelt")
            inputs = json.loads(tags["inputs"])
            assert len(inputs["heat_flow_mw_m2"]["sha256"]) == 64
            assert json.loads(tags["parameters"])["mantle_potential_temperature_c"] == 1350.0
            assert ds.profile["tiled"] or ds.width < 512
            arr = ds.read(1)
            assert np.isnan(arr[0, 0]), "nodata input cell must give nodata output"
    assert not (out / ".geomelt-partial").exists()
    meta = pyogrio.read_dataframe(out / "results.gpkg", layer="run_metadata")
    assert set(meta["section"]) >= {"run", "grid", "input", "parameter", "output", "versions"}
    assert (meta["key"] == "caution").any()


def test_physical_ranges_west_to_east(tiny_region, tmp_path):
    out = tmp_path / "out"
    assert invoke("run", tiny_region, "-o", out).exit_code == 0
    with rasterio.open(out / "lab_depth_km.tif") as ds:
        lab = ds.read(1)
    # West: 7 km crust, 250 mW m-2 (young ocean); east: 45 km crust, 40 mW m-2 (craton-like).
    assert np.nanmax(lab[:, :3]) < 30.0
    assert np.nanmin(lab[:, -2:]) > 150.0
    with rasterio.open(out / "oceanic_plate_age_ma.tif") as ds:
        age = ds.read(1)
    assert np.isfinite(age[5, 2]) and np.isnan(age[5, -1])


def test_existing_output_folder_is_refused_without_overwrite(tiny_region, tmp_path):
    out = tmp_path / "out"
    assert invoke("run", tiny_region, "-o", out).exit_code == 0
    res = CliRunner().invoke(main, ["run", str(tiny_region), "-o", str(out)])
    assert res.exit_code == 4
    assert "--overwrite" in res.output
    assert "Traceback" not in res.output


def test_overwrite_removes_outputs_the_new_run_does_not_write(tiny_region, tmp_path):
    out = tmp_path / "out"
    assert invoke("run", tiny_region, "-o", out, "-p", "isotherms_c=[150.0, 600.0]").exit_code == 0
    assert (out / "isotherm_600c_depth_km.tif").exists()
    assert invoke("run", tiny_region, "-o", out, "--overwrite").exit_code == 0
    assert not (out / "isotherm_600c_depth_km.tif").exists()
    assert (out / "isotherm_150c_depth_km.tif").exists()


def test_unknown_parameter_suggests_the_right_name(tiny_region, tmp_path):
    res = CliRunner().invoke(
        main,
        ["run", str(tiny_region), "-o", str(tmp_path / "o"), "-p", "mantle_potential_temp=1400"],
    )
    assert res.exit_code == 2
    assert "mantle_potential_temperature_c" in res.output
    assert not (tmp_path / "o").exists()


def test_out_of_range_parameter(tiny_region, tmp_path):
    res = CliRunner().invoke(
        main,
        ["run", str(tiny_region), "-o", str(tmp_path / "o"), "-p", "crust_conductivity_w_m_k=40"],
    )
    assert res.exit_code == 2
    assert "valid range" in res.output


def test_missing_required_input(tiny_region, tmp_path):
    text = tiny_region.read_text().replace('heat_flow_mw_m2 = "heat.tif"\n', "")
    cfg = tiny_region.parent / "no_heat.toml"
    cfg.write_text(text)
    res = CliRunner().invoke(main, ["run", str(cfg), "-o", str(tmp_path / "o")])
    assert res.exit_code == 3
    assert "heat_flow_mw_m2" in res.output and "--input" in res.output


@pytest.mark.parametrize(
    ("in_config", "option", "expected"),
    [
        ("", [], ("threads", None)),
        ('scheduler = "tcp://127.0.0.1:8786"', [], ("dask", "tcp://127.0.0.1:8786")),
        ('scheduler = "tcp://127.0.0.1:8786"', ["--scheduler", "local"], ("dask", "local")),
        ("", ["--engine", "dask"], ("dask", None)),
        ('scheduler = "tcp://127.0.0.1:8786"', ["--engine", "threads"], ("threads", None)),
        (
            'scheduler = "tcp://127.0.0.1:8786"',
            ["--engine", "dask"],
            ("dask", "tcp://127.0.0.1:8786"),
        ),
    ],
    ids=[
        "default",
        "config-key",
        "option-wins",
        "engine-without-scheduler",
        "explicit-engine-wins",
        "dask-engine-takes-config-key",
    ],
)
def test_scheduler_from_config_or_option(
    tiny_region, tmp_path, monkeypatch, in_config, option, expected
):
    # [run] scheduler in the configuration picks the dask engine unless --engine names
    # another; --scheduler overrides the key.
    import importlib

    run_cmd = importlib.import_module("geomelt.cli.run_cmd")  # the module, not the command

    seen = {}

    class Stop(Exception):
        pass

    def fake_execute_run(plan, out_dir, **kwargs):
        seen.update(kwargs)
        raise Stop

    monkeypatch.setattr(run_cmd, "execute_run", fake_execute_run)
    cfg = tiny_region.parent / "scheduler.toml"
    cfg.write_text(tiny_region.read_text().replace("[run]\n", f"[run]\n{in_config}\n"))
    CliRunner().invoke(main, ["run", str(cfg), "-o", str(tmp_path / "o"), *option])
    assert (seen["engine"], seen["scheduler"]) == expected


def test_dry_run_writes_nothing(tiny_region, tmp_path):
    out = tmp_path / "o"
    res = invoke("run", tiny_region, "-o", out, "--dry-run")
    assert res.exit_code == 0
    plan = json.loads(res.output)
    assert "lab_depth_km.tif" in plan["outputs"]
    assert not out.exists()


def test_input_override_and_block_size_change_no_pixel(tiny_region, tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    assert invoke("run", tiny_region, "-o", a, "--block-size", "16").exit_code == 0
    assert invoke("run", tiny_region, "-o", b, "--block-size", "64").exit_code == 0
    for name in THERMAL_OUTPUTS:
        with rasterio.open(a / f"{name}.tif") as da, rasterio.open(b / f"{name}.tif") as db:
            np.testing.assert_array_equal(da.read(1), db.read(1), err_msg=name)


def test_algorithms_and_describe():
    res = invoke("algorithms")
    assert "thermal_state" in res.output
    res = invoke("describe", "thermal_state")
    doc = json.loads(res.output)
    assert doc["inputs"]["heat_flow_mw_m2"]["schema"]["x-unit"] == "mW m-2"
    assert doc["inputs"]["crust_conductivity_w_m_k"]["schema"]["default"] == 2.5
    assert doc["outputs"]["lab_depth_km"]["schema"]["x-nodata"] is None
    res = CliRunner().invoke(main, ["describe", "no_such_thing"])
    assert res.exit_code == 2 and "thermal_state" in res.output


def test_selected_algorithms_accept_parameters_of_the_others(tiny_region, tmp_path):
    # one configuration serves partial runs: a parameter of an algorithm not run is checked
    # but unused; a bad value is still refused, and so is an unknown algorithm id
    out = tmp_path / "o"
    res = invoke("run", tiny_region, "-o", out, "-a", "thermal_state", "-p", "vms_weight_magma=2")
    assert res.exit_code == 0, res.output
    res = CliRunner().invoke(
        main,
        ["run", str(tiny_region), "-o", str(tmp_path / "b"), "-a", "thermal_state"]
        + ["-p", "vms_weight_magma=-1"],
    )
    assert res.exit_code == 2 and "vms_weight_magma" in res.output
    res = CliRunner().invoke(
        main, ["run", str(tiny_region), "-o", str(tmp_path / "c"), "-a", "no_such_step"]
    )
    assert res.exit_code == 2 and "geomelt algorithms" in res.output
    assert not (tmp_path / "c").exists()


@pytest.mark.parametrize("flag", ["--version", "--help"])
def test_top_level_flags(flag):
    assert invoke(flag).exit_code == 0
