"""Tests of ensembles: spec files, batching, process pool and dask paths, streaming, CLI."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from typer.testing import CliRunner

import icecolumn as ic
from icecolumn import ensemble as E
from icecolumn.cli import app

runner = CliRunner()
FAST = '[grid]\nlayers = 10\n\n[output]\ninterval = "1D"\n'


def write_forcing(path: Path, days: int = 5, step_h: int = 1, base: float = -20.0, swing: float = 6.0) -> Path:
    """Hourly (or every step_h hours) air temperature with a daily swing."""
    hours = np.arange(0, days * 24 + 1, step_h)
    times = np.datetime64("2027-01-01T00:00") + hours * np.timedelta64(1, "h")
    temps = base + swing * np.sin(2 * np.pi * hours / 24.0)
    path.write_text("time,air_temperature\n" + "".join(f"{t}Z,{v:.2f}\n" for t, v in zip(times, temps)))
    return path


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("ens")
    write_forcing(d / "a.csv")
    write_forcing(d / "b.csv", step_h=3, base=-30.0, swing=2.0)  # another time axis and climate
    (d / "fast.toml").write_text(FAST)
    return d


@pytest.fixture(scope="module")
def members(files):
    cfg = ic.load_config(files / "fast.toml")
    fa, fb = ic.read_forcing(files / "a.csv"), ic.read_forcing(files / "b.csv")
    out = []
    for i in range(5):
        c = cfg.replace("ocean", heat_flux=1.0 + 2.0 * i).replace("surface", heat_transfer_coefficient=10.0 + 5 * i)
        out.append(ic.Member(c, fb if i % 2 else fa))
    return out


@pytest.fixture(scope="module")
def local(members):
    return E.run_members(members, batch_size=2)


def assert_same_numbers(a: xr.Dataset, b: xr.Dataset) -> None:
    """Every variable bitwise equal (NaN where the other has NaN)."""
    assert set(a.variables) == set(b.variables)
    for name in a.variables:
        va, vb = a[name].values, b[name].values
        assert va.shape == vb.shape, name
        if va.dtype.kind == "f":
            assert np.array_equal(va, vb, equal_nan=True), name
        else:
            assert np.array_equal(va.astype(str) if va.dtype.kind in "OU" else va,
                                  vb.astype(str) if vb.dtype.kind in "OU" else vb), name


def test_batch_equals_single_runs_bitwise(members, local):
    assert local.sizes["member"] == 5
    assert list(local["member_name"].values) == [f"member_{i:03d}" for i in range(1, 6)]
    for i, m in enumerate(members):
        single = ic.run(m.forcing, m.config)
        for name in single.data_vars:
            got = local[name].isel(member=i).values
            assert np.array_equal(got, single[name].values, equal_nan=True), (i, name)
        assert int(local["member_steps_accepted"][i]) == single.attrs["solver_steps_accepted"]
    # the members really differ (parameters and forcing both matter)
    h_end = local["ice_thickness"].isel(time=-1).values
    assert np.unique(h_end).size == 5
    assert local.attrs["solver_steps_accepted"] == int(local["member_steps_accepted"].sum())


@pytest.mark.parametrize("batch_size", [1, 3, 16])
def test_batch_size_does_not_change_numbers(members, local, batch_size):
    assert_same_numbers(E.run_members(members, batch_size=batch_size), local)


def test_member_order_does_not_change_numbers(members, local):
    order = [3, 0, 4, 2, 1]
    shuffled = E.run_members([members[i] for i in order], names=[f"m{i}" for i in order], batch_size=2)
    for j, i in enumerate(order):
        assert shuffled["member_name"].values[j] == f"m{i}"
        for name in ("ice_thickness", "temperature", "salt_released", "layer_state"):
            assert np.array_equal(shuffled[name].isel(member=j).values, local[name].isel(member=i).values,
                                  equal_nan=True), name


def test_plan_batches_groups_by_forcing_axis(members):
    batches = E.plan_batches(members, 2)
    assert sorted(i for b in batches for i in b) == list(range(5))
    assert all(len(b) <= 2 for b in batches)
    for b in batches:  # one time axis per batch
        assert len({id(members[i].forcing) for i in b}) == 1


def test_stream_to_file_matches_memory(members, local, tmp_path):
    out = E.run_members_to_file(members, tmp_path / "ens.nc", batch_size=2)
    with xr.open_dataset(out) as ds:
        assert_same_numbers(ds.load(), local)
        assert ds.attrs["solver_steps_accepted"] == local.attrs["solver_steps_accepted"]
        assert ds.attrs["caution"] == ic.CAUTION
    assert not list(tmp_path.glob(".*part"))  # no temporary file left


def test_process_pool_gives_same_file(members, tmp_path):
    ref = E.run_members_to_file(members, tmp_path / "local.nc", batch_size=2)
    pool = E.run_members_to_file(members, tmp_path / "pool.nc", batch_size=2, workers=2)
    with xr.open_dataset(ref) as a, xr.open_dataset(pool) as b:
        assert_same_numbers(a.load(), b.load())


def test_dask_local_cluster_gives_same_file(members, tmp_path):
    pytest.importorskip("distributed")
    ref = E.run_members_to_file(members, tmp_path / "local.nc", batch_size=2)
    out = E.run_members_to_file(members, tmp_path / "dask.nc", batch_size=2, use_dask=True, workers=2,
                                processes=False)
    with xr.open_dataset(ref) as a, xr.open_dataset(out) as b:
        assert_same_numbers(a.load(), b.load())


def test_dask_scheduler_address(members, local):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster:
        ds = E.run_members(members, batch_size=2, scheduler=cluster.scheduler_address)
    assert_same_numbers(ds, local)


def test_dask_missing_is_one_line_error(members, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)
    with pytest.raises(ic.InputError) as err:
        E.run_members(members, use_dask=True, workers=2)
    assert "icecolumn[scale]" in str(err.value) and "\n" not in str(err.value)


def test_reduced_output_and_interval(members):
    ds = E.run_members(members[:2], variables=["ice_thickness", "salt_flux"], interval="12h")
    assert set(ds.data_vars) == {"ice_thickness", "salt_flux", *E._MEMBER_META}
    assert "layer" not in ds.dims and "depth" not in ds.coords
    assert ds.sizes["time"] == 11  # 5 days every 12 h
    single = ic.run(members[1].forcing, members[1].config.replace("output", interval="12h"))
    assert np.array_equal(ds["ice_thickness"].isel(member=1).values, single["ice_thickness"].values)


def write_spec(folder: Path, text: str, name: str = "spec.toml") -> Path:
    p = folder / name
    p.write_text(text)
    return p


def test_spec_members_and_sweep(files, tmp_path):
    spec = write_spec(files, f'''
config = "fast.toml"
forcing = "a.csv"
[[member]]
name = "low"
set = {{"ocean.heat_flux" = 1.0}}
[[member]]
name = "cold"
forcing = "b.csv"
set = {{ initial = {{ ice_thickness = 0.3 }} }}
[sweep]
"surface.heat_transfer_coefficient" = [10.0, 20.0]
''', "sweep.toml")
    ens = E.load_spec(spec)
    assert ens.names == ["low/surface.heat_transfer_coefficient=10", "low/surface.heat_transfer_coefficient=20",
                         "cold/surface.heat_transfer_coefficient=10", "cold/surface.heat_transfer_coefficient=20"]
    assert [m.config.surface.heat_transfer_coefficient for m in ens.members] == [10.0, 20.0, 10.0, 20.0]
    assert [m.config.ocean.heat_flux for m in ens.members] == [1.0, 1.0, 2.0, 2.0]
    assert [m.config.initial.ice_thickness for m in ens.members][2:] == [0.3, 0.3]
    assert all(m.config.grid.layers == 10 for m in ens.members)
    assert ens.members[2].forcing.attrs["source_file"].endswith("b.csv")
    ds = ens.run(batch_size=3)
    assert list(ds["member_name"].values) == ens.names
    single = ic.run(ens.members[3].forcing, ens.members[3].config)
    assert np.array_equal(ds["salt_released"].isel(member=3).values, single["salt_released"].values)


def test_sweep_without_members_expands_base(files):
    spec = write_spec(files, '''
config = "fast.toml"
forcing = "a.csv"
[sweep]
"ocean.heat_flux" = [1.0, 2.0, 5.0]
"surface.heat_transfer_coefficient" = [10.0, 20.0]
[output]
variables = ["ice_thickness"]
''', "grid.toml")
    ens = E.load_spec(spec)
    assert len(ens.members) == 6
    assert ens.names[1] == "ocean.heat_flux=1,surface.heat_transfer_coefficient=20"
    assert ens.variables == ("ice_thickness",)


BAD_SPECS = [
    ('forcing = "a.csv"\ncolour = 1\n[[member]]\nname = "x"\n', ["unknown key 'colour'"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\nsett = {}\n', ["member 'x'", "unknown key 'sett'", "'set'"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\nset = {"ocean.heat_flx" = 1.0}\n',
     ["member 'x'", "heat_flx", "did you mean 'heat_flux'"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\nset = {"ocean.heat_flux" = 1e6}\n',
     ["member 'x'", "[ocean] heat_flux", "at most"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\nforcing = "nowhere.csv"\n',
     ["member 'x'", "forcing file 'nowhere.csv' not found"]),
    ('[[member]]\nname = "x"\n', ["member 'x'", "no forcing file"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\n[[member]]\nname = "y"\nset = {"grid.layers" = 12}\n',
     ["member 'y'", "[grid] layers = 12", "member 'x'"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\n[[member]]\nname = "y"\nset = {"output.interval" = "12h"}\n',
     ["member 'y'", "[output] interval", "'12h'"]),
    ('forcing = "a.csv"\n', ["no members"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\n[[member]]\nname = "x"\n', ["member 'x'", "used twice"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\n[output]\nvariabels = ["ice_thickness"]\n',
     ["[output]", "variabels", "did you mean 'variables'"]),
    ('forcing = "a.csv"\n[[member]]\nname = "x"\n[[member]]\nname = "y"\nforcing = "b.csv"\n'
     'set = {"run.end" = "2027-01-03T00:00Z"}\n', ["member 'y'", "set the same [run] start and end"]),
    ('forcing = "a.csv"\n[sweep]\n"ocean.heat_flux" = 3.0\n', ["[sweep]", "non-empty list"]),
    ('forcing = "a.csv"\n[[member]\n', ["not valid TOML"]),
]


@pytest.mark.parametrize("text,fragments", BAD_SPECS)
def test_spec_errors_are_one_line(files, text, fragments):
    spec = write_spec(files, text, "bad.toml")
    with pytest.raises(ic.InputError) as err:
        E.load_spec(spec)
    msg = str(err.value)
    assert "\n" not in msg
    assert msg.startswith(str(spec)), msg
    for f in fragments:
        assert f in msg, (f, msg)


def test_unknown_output_variable(members):
    with pytest.raises(ic.InputError) as err:
        E.run_members(members[:1], variables=["ice_thickenss"], source="s.toml")
    assert str(err.value).startswith("s.toml:") and "did you mean 'ice_thickness'" in str(err.value)


def test_cli_ensemble_runs_and_refuses_overwrite(files, tmp_path):
    spec = write_spec(files, '''
config = "fast.toml"
forcing = "a.csv"
[[member]]
name = "base"
[[member]]
name = "warm"
set = {"ocean.heat_flux" = 20.0}
''', "cli.toml")
    out = tmp_path / "ens.nc"
    result = runner.invoke(app, ["ensemble", str(spec), "-o", str(out), "--batch-size", "1"])
    assert result.exit_code == 0, (result.stdout, result.stderr)
    assert "base" in result.stdout and "warm" in result.stdout and ic.CAUTION in result.stdout
    with xr.open_dataset(out) as ds:
        assert ds.sizes["member"] == 2
        assert list(ds["member_name"].values) == ["base", "warm"]
        h = ds["ice_thickness"].isel(time=-1).values
        assert h[1] < h[0]  # more ocean heat, thinner ice
        assert f"{h[0]:.3f}" in result.stdout
    before = out.read_bytes()
    again = runner.invoke(app, ["ensemble", str(spec), "-o", str(out)])
    assert again.exit_code == 2
    assert "file exists" in again.stderr and "--overwrite" in again.stderr
    assert out.read_bytes() == before
    forced = runner.invoke(app, ["ensemble", str(spec), "-o", str(out), "--overwrite", "--workers", "2"])
    assert forced.exit_code == 0, (forced.stdout, forced.stderr)
    with xr.open_dataset(out) as ds:
        assert np.array_equal(ds["ice_thickness"].isel(time=-1).values, h)


def test_cli_checks_output_before_running(files, tmp_path):
    out = tmp_path / "exists.nc"
    out.write_text("keep me")
    bad = write_spec(files, '[[member]]\nname = "x"\n', "nofor.toml")  # would fail if it were read
    result = runner.invoke(app, ["ensemble", str(bad), "-o", str(out)])
    assert result.exit_code == 2 and "file exists" in result.stderr
    assert out.read_text() == "keep me"


def test_cli_set_and_column_apply_to_the_base(files, tmp_path):
    (tmp_path / "t.csv").write_text((files / "a.csv").read_text().replace("air_temperature", "Tair", 1))
    (tmp_path / "fast.toml").write_text(FAST)
    spec = tmp_path / "s.toml"
    spec.write_text('config = "fast.toml"\nforcing = "t.csv"\n[[member]]\nname = "base"\n'
                    '[[member]]\nname = "warm"\nset = {"ocean.heat_flux" = 20.0}\n')
    out = tmp_path / "ens.nc"
    result = runner.invoke(app, ["ensemble", str(spec), "-o", str(out), "--set", "grid.layers=12",
                                 "--set", "ocean.heat_flux=5", "--column", "air_temperature=Tair"])
    assert result.exit_code == 0, (result.stdout, result.stderr)
    with xr.open_dataset(out) as ds:
        assert ds.sizes["layer"] == 12
        configs = [ic.config.config_from_toml_text(str(t)) for t in ds["member_config"].values]
    assert [c.ocean.heat_flux for c in configs] == [5.0, 20.0]  # the member's own set wins over --set
    bad = runner.invoke(app, ["ensemble", str(spec), "-o", str(tmp_path / "x.nc"), "--column", "air_temperature"])
    assert bad.exit_code == 2 and "--column" in bad.stderr and "ours=theirs" in bad.stderr
