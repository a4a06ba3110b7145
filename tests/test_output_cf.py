"""NetCDF output of the sample-winter run: contents, metadata, reproducibility, CF compliance."""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest
import xarray as xr

import icecolumn as ic
from icecolumn.config import config_from_toml_text

REQUIRED = [
    "ice_thickness", "snow_thickness", "surface_temperature", "air_temperature", "growth_rate",
    "temperature", "bulk_salinity", "liquid_fraction", "brine_salinity", "depth", "depth_bounds",
    "salt_content", "salt_entrained", "salt_released", "salt_released_melt", "salt_released_drainage",
    "salt_flux", "enthalpy_content", "energy_input", "energy_input_surface", "energy_input_ocean",
    "energy_input_water",
]


@pytest.fixture(scope="module")
def written(sample_run, tmp_path_factory):
    path = tmp_path_factory.mktemp("cf") / "sample_winter.nc"
    ic.write_netcdf(sample_run, path)
    return path


@pytest.fixture(scope="module")
def reopened(written):
    with xr.open_dataset(written) as ds:
        yield ds.load()


def _bounds_variables(ds):
    return {ds[v].attrs["bounds"] for v in ds.variables if "bounds" in ds[v].attrs}


def test_every_variable_present_with_units(sample_run, reopened):
    missing = [v for v in REQUIRED if v not in reopened.variables]
    assert not missing, missing
    no_units = [v for v in REQUIRED if not sample_run[v].attrs.get("units")]
    assert not no_units, no_units
    # in the file every variable except time (CF-encoded) and boundary variables carries units;
    # boundary variables inherit the units of their parent (CF-1.8 section 7.1), and xarray
    # drops an equal "units" from them on writing
    skip = {"time"} | _bounds_variables(reopened)
    others = [v for v in reopened.variables if v not in skip and not reopened[v].attrs.get("units")]
    assert not others, others
    assert reopened["depth"].attrs.get("bounds") in (None, "depth_bounds")


def test_global_attributes(reopened, sample_forcing_path):
    a = reopened.attrs
    for key in ("Conventions", "title", "history", "icecolumn_version", "icecolumn_config", "forcing_sha256"):
        assert a.get(key), key
    assert a["Conventions"].startswith("CF-")
    assert a["icecolumn_version"] == ic.__version__
    assert config_from_toml_text(a["icecolumn_config"]) == ic.default_config()
    digest = hashlib.sha256(sample_forcing_path.read_bytes()).hexdigest()
    assert a["forcing_sha256"] == digest


def test_two_runs_bitwise_identical(sample_run, sample_forcing):
    again = ic.run(sample_forcing, ic.default_config())
    assert set(again.data_vars) == set(sample_run.data_vars)
    for name in sample_run.variables:
        a, b = sample_run[name].values, again[name].values
        assert a.dtype == b.dtype and np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), name


def test_file_equals_in_memory(sample_run, reopened):
    assert set(reopened.variables) == set(sample_run.variables)
    bounds = _bounds_variables(sample_run)
    for name in sample_run.variables:
        a, b = sample_run[name], reopened[name]
        assert a.dims == b.dims, name
        assert a.dtype == b.dtype, name
        assert np.array_equal(a.values, b.values, equal_nan=a.dtype.kind == "f"), name
        expected = dict(a.attrs)
        if name in bounds:  # units inherited from the parent variable (CF-1.8 section 7.1)
            parent = next(v for v in sample_run.variables if sample_run[v].attrs.get("bounds") == name)
            assert expected.pop("units", None) in (None, sample_run[parent].attrs["units"])
            b_attrs = {k: v for k, v in b.attrs.items() if k != "units"}
        else:
            b_attrs = b.attrs
        assert expected == b_attrs, name
    for key, value in sample_run.attrs.items():
        assert np.all(reopened.attrs[key] == value), key


def _cf_failures(path, out):
    from compliance_checker.runner import CheckSuite, ComplianceChecker

    CheckSuite.load_all_available_checkers()
    ComplianceChecker.run_checker(str(path), ["cf:1.8"], verbose=0, criteria="normal",
                                  output_filename=str(out), output_format="json")
    report = json.loads(out.read_text())["cf:1.8"]
    bad = []
    for level in ("high_priorities", "medium_priorities"):
        for item in report[level]:
            got, possible = item["value"]
            if got < possible:
                bad.append(f"{level} {item['name']} {item['value']}: " + " | ".join(item["msgs"]))
    return report, bad


def test_compliance_checker_cf18(written, tmp_path):
    # outside checker: IOOS compliance-checker (PyPI), CF-1.8 suite, offline standard-name table v93
    report, bad = _cf_failures(written, tmp_path / "cf.json")
    # the checks ran: the high- and medium-priority lists hold the checks performed
    assert len(report["high_priorities"]) + len(report["medium_priorities"]) > 0
    assert report["high_count"] == 0 and report["medium_count"] == 0
    assert not bad, "\n".join(bad)


def test_compliance_checker_with_open_water_and_mixed_layer(tmp_path):
    # the same outside checker on a melt-out run (missing profiles in open water) with the
    # mixed-layer variables; invented sample forcing forcing_samples/station_year.csv
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent
    forcing = ic.read_forcing(root / "forcing_samples" / "station_year.csv")
    cfg = (ic.load_config(root / "forcing_samples" / "station_year.toml")
           .replace("run", start="2027-07-20T00:00Z", end="2027-09-01T00:00Z")
           .replace("initial", ice_thickness=0.5, bulk_salinity=4.0))
    ds = ic.run(forcing, cfg)
    assert (ds.sea_ice_area_fraction.values == 0).any() and "mixed_layer_salinity" in ds
    path = tmp_path / "melt.nc"
    ic.write_netcdf(ds, path)
    report, bad = _cf_failures(path, tmp_path / "cf.json")
    assert report["high_count"] == 0 and report["medium_count"] == 0
    assert not bad, "\n".join(bad)


def test_single_member_dataset_is_member_zero_of_the_member_dataset(sample_forcing):
    # to_dataset builds a one-member run without the member dimension directly (no isel copy):
    # it must be exactly member 0 of the same run built with the dimension
    from icecolumn.model import Member, simulate
    from icecolumn.output import to_dataset
    forcing = sample_forcing.isel(time=slice(0, 73))
    raw = simulate([Member(ic.default_config().replace("grid", layers=8), forcing)])
    single, batch = to_dataset(raw), to_dataset(raw, keep_member=True)
    assert "member" not in single.dims and batch.sizes["member"] == 1
    for ds in (single, batch):
        ds.attrs.pop("history")
    xr.testing.assert_identical(single, batch.isel(member=0, drop=True))
    assert "depth" in single.coords and single["temperature"].dims == ("time", "layer")


@pytest.mark.parametrize("keep_member", [False, True])
def test_direct_dataset_construction_equals_xarrays_public_constructor(sample_forcing, monkeypatch, keep_member):
    # output._dataset hands its consistent variables to xarray's direct constructor (the public
    # one merges and copies them, most of a short run's fixed cost); both must give the same
    # Dataset: variables, coordinates, indexes, dimension order and attributes
    from icecolumn import output
    from icecolumn.model import Member, simulate
    forcing = sample_forcing.isel(time=slice(0, 49))
    cfg = ic.default_config().replace("grid", layers=6)
    raw = simulate([Member(cfg, forcing), Member(cfg.replace("ocean", heat_flux=4.0), forcing)][:1 + keep_member])
    fast = output.to_dataset(raw, keep_member=keep_member)
    monkeypatch.setattr(output, "DIRECT_CONSTRUCTION", False)
    public = output.to_dataset(raw, keep_member=keep_member)
    for ds in (fast, public):
        ds.attrs.pop("history")
    xr.testing.assert_identical(fast, public)
    assert list(fast.dims) == list(public.dims)
    assert list(fast.data_vars) == list(public.data_vars) and list(fast.coords) == list(public.coords)
    assert set(fast.indexes) == set(public.indexes) == ({"time", "layer", "member"} if keep_member
                                                          else {"time", "layer"})
    # it behaves as a Dataset: selection by time label and arithmetic keep working
    t = fast.time.values[5]
    assert float(fast.sel(time=t)["ice_thickness"].max()) == float(public.sel(time=t)["ice_thickness"].max())
