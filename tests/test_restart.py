"""Restart: a run split in two at an output time equals the run done in one: bitwise when every
output time ends a step (``[solver] output_times = step_ends``), to within the solver's tolerance
when records are interpolated within steps (the default)."""
import numpy as np
import pytest

import icecolumn as ic
from icecolumn.errors import InputError
from icecolumn.forcing import forcing_from_arrays
from icecolumn.model import restart_state, run_restart

INTERVAL_MEANS = {"air_temperature", "growth_rate", "salt_flux", "brine_flux", "freshwater_flux",
                  "ocean_heat_flux"}


def _forcing(days=12):
    t = np.datetime64("2026-11-01T00:00", "ns") + np.arange(days * 24 + 1) * np.timedelta64(1, "h")
    air = -20.0 + 8.0 * np.sin(np.arange(t.size) / 40.0)  # invented test forcing
    return forcing_from_arrays(t, air)


def _cfg(mode="step_ends", **run):
    cfg = ic.default_config().replace("grid", layers=12).replace("output", interval="6h")
    cfg = cfg.replace("solver", output_times=mode)
    return cfg.replace("run", **run) if run else cfg


def test_split_run_is_bitwise_identical(tmp_path):
    f = _forcing()
    full = ic.run(f, _cfg())
    first = ic.run(f, _cfg(end="2026-11-06T12:00"))
    path = tmp_path / "first.nc"
    ic.write_netcdf(first, path)
    import xarray as xr

    with xr.open_dataset(path) as prev:
        second = run_restart(f, _cfg(), prev.load())
    t0 = second.time.values[0]
    assert t0 == np.datetime64("2026-11-06T12:00", "ns")
    tail = full.sel(time=slice(t0, None))
    assert np.array_equal(tail.time.values, second.time.values)
    for name, var in second.data_vars.items():
        a, b = tail[name].values, var.values
        if name in INTERVAL_MEANS:  # undefined at a run's first time
            a, b = a[1:], b[1:]
        assert np.array_equal(a, b, equal_nan=True), name


def test_split_run_with_interpolated_records_stays_within_the_solver_tolerance():
    # interpolated records: the one-go run steps across the split time and records an
    # interpolated state there, the first run ends a step on it; the two continue with different
    # steps, so they agree to the integration error (rtol 1e-3), not bitwise.  Measured on this
    # case: thickness 1.6e-6 m, enthalpy 521 J m-2 of 1e8, surface temperature 3.7e-4 K.
    f = _forcing()
    cfg = _cfg("interpolated")
    full = ic.run(f, cfg)
    second = run_restart(f, cfg, ic.run(f, _cfg("interpolated", end="2026-11-06T12:00")))
    tail = full.sel(time=slice(second.time.values[0], None))
    assert np.array_equal(tail.time.values, second.time.values)
    h = tail["ice_thickness"].values
    assert np.abs(second["ice_thickness"].values - h).max() <= 1e-3 * 0.1 * h.max()
    e = tail["enthalpy_content"].values
    assert np.abs(second["enthalpy_content"].values - e).max() <= 1e-5 * np.abs(e).max()
    assert np.abs(second["surface_temperature"].values - tail["surface_temperature"].values).max() < 0.01
    # and it is a real continuation, not a copy: the steps differ
    assert not np.array_equal(second["layer_state"].values, tail["layer_state"].values)


def test_restart_with_other_configuration_names_the_keys():
    f = _forcing(4)
    first = ic.run(f, _cfg(end="2026-11-02T00:00"))
    other = _cfg().replace("ocean", heat_flux=7.0).replace("surface", heat_transfer_coefficient=12.0)
    with pytest.raises(InputError) as err:
        restart_state(first, other, "first.nc")
    msg = str(err.value)
    assert "[ocean] heat_flux" in msg and "[surface] heat_transfer_coefficient" in msg and "\n" not in msg


def test_cli_restart_from(tmp_path):
    import xarray as xr

    from icecolumn.cli import main

    t = np.datetime64("2026-11-01T00:00", "ns") + np.arange(4 * 24 + 1) * np.timedelta64(1, "h")
    csv = tmp_path / "f.csv"
    csv.write_text("# invented test forcing\ntime,air_temperature\n" + "\n".join(
        f"{str(x)[:16]},{-15.0 - (i % 24) / 4:.2f}" for i, x in enumerate(t)) + "\n")
    cfg = tmp_path / "c.toml"
    cfg.write_text('[grid]\nlayers = 10\n[output]\ninterval = "6h"\n[solver]\noutput_times = "step_ends"\n')
    assert main(["run", str(csv), "-c", str(cfg), "-o", str(tmp_path / "a.nc"),
                 "--set", "run.end=2026-11-03T00:00"]) == 0
    assert main(["run", str(csv), "-c", str(cfg), "-o", str(tmp_path / "b.nc"),
                 "--restart-from", str(tmp_path / "a.nc")]) == 0
    assert main(["run", str(csv), "-c", str(cfg), "-o", str(tmp_path / "full.nc")]) == 0
    with xr.open_dataset(tmp_path / "b.nc") as b, xr.open_dataset(tmp_path / "full.nc") as full:
        tail = full.sel(time=slice(b.time.values[0], None))
        assert np.array_equal(tail["layer_state"].values, b["layer_state"].values)
    # a different configuration is refused with one line, and no file is written
    code = main(["run", str(csv), "-c", str(cfg), "-o", str(tmp_path / "c.nc"), "--set", "ocean.heat_flux=9",
                 "--restart-from", str(tmp_path / "a.nc")])
    assert code == 2 and not (tmp_path / "c.nc").exists()
