"""Salt budget per calendar period (icecolumn.brine) on the sample-winter run."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import icecolumn as ic
from icecolumn.brine import brine_budget, format_brine_budget, summary

SAMPLE = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"


@pytest.fixture(scope="module")
def run_ds():
    return ic.run(ic.read_forcing(SAMPLE), ic.default_config())


def _total(ds, name):
    v = ds[name].values
    return float(v[-1] - v[0])


@pytest.mark.parametrize("period", ["month", "week", "day"])
def test_period_sums_equal_totals(run_ds, period):
    bds = brine_budget(run_ds, period)
    pairs = {"salt_entrained": "salt_entrained", "salt_released": "salt_released",
             "salt_released_drainage": "salt_released_drainage", "salt_released_melt": "salt_released_melt",
             "salt_kept_change": "salt_content"}
    for bname, dname in pairs.items():
        tot = _total(run_ds, dname)
        got = float(bds[bname].values.sum())
        print(period, bname, got, tot)
        assert abs(got - tot) <= 1e-12 * max(abs(tot), 1e-3), (bname, got, tot)
    scale = float(np.abs(bds["salt_entrained"]).sum() + np.abs(bds["salt_released"]).sum())
    assert np.all(np.abs(bds["budget_residual"].values) <= 1e-9 * scale)
    assert float(bds["period_seconds"].sum()) == pytest.approx(
        float((run_ds.time.values[-1] - run_ds.time.values[0]) / np.timedelta64(1, "s")), rel=1e-15)
    for v in bds.data_vars:
        assert bds[v].attrs["units"] and bds[v].attrs["long_name"]


def test_month_count_and_bounds(run_ds):
    # sample winter runs 2026-10-01T00 .. 2027-05-31T23 (UTC): October .. May = 8 months
    bds = brine_budget(run_ds, "month")
    print(format_brine_budget(bds))
    assert bds.sizes["period"] == 8
    starts = bds["period_start"].values
    assert str(starts[0])[:10] == "2026-10-01"
    assert str(starts[1])[:10] == "2026-11-01" and str(starts[-1])[:10] == "2027-05-01"
    assert bds["period_end"].values[-1] == run_ds.time.values[-1]
    # consecutive periods share their boundary record
    assert np.array_equal(bds["period_end"].values[:-1], starts[1:])
    # mean flux is released / length
    np.testing.assert_allclose(bds["salt_flux_mean"].values,
                               bds["salt_released"].values / bds["period_seconds"].values, rtol=1e-14)
    text = format_brine_budget(bds)
    assert text.count("\n") == 8 + 6


def test_week_and_day_counts(run_ds):
    t = run_ds.time.values
    days = (t[-1].astype("datetime64[D]") - t[0].astype("datetime64[D]")).astype(int) + 1
    bd = brine_budget(run_ds, "day")
    # the last day starts at 00:00 of 2027-05-31 and is covered by output (6-h records)
    assert bd.sizes["period"] == days
    bw = brine_budget(run_ds, "week")
    # 2026-10-01 is a Thursday: first (partial) week, then Monday-started weeks
    assert str(bw["period_start"].values[0])[:10] == "2026-10-01"
    assert all(np.datetime64(s, "D").astype(object).weekday() == 0 for s in bw["period_start"].values[1:])
    with pytest.raises(ValueError):
        brine_budget(run_ds, "year")


def test_summary_agrees_with_dataset(run_ds):
    s = summary(run_ds)
    print(s)
    sf = run_ds["salt_flux"].values
    assert s["salt_flux_max"] == np.nanmax(sf)
    assert s["salt_flux_max_time"] == run_ds.time.values[np.nanargmax(sf)]
    assert s["salt_released_total"] == _total(run_ds, "salt_released")
    secs = float((run_ds.time.values[-1] - run_ds.time.values[0]) / np.timedelta64(1, "s"))
    assert s["salt_flux_mean"] == pytest.approx(s["salt_released_total"] / secs, rel=1e-15)
    assert s["start_time"] == run_ds.time.values[0] and s["end_time"] == run_ds.time.values[-1]


def _cumulative_run(parts: dict[str, np.ndarray]) -> "xr.Dataset":
    import xarray as xr

    t = np.datetime64("2027-06-01T00:00", "ns") + np.arange(61) * np.timedelta64(1, "D")
    released = sum(parts.values())
    entrained = np.linspace(0.0, 1.0, t.size)
    data = {"salt_entrained": entrained, "salt_released": released, "salt_content": 5.0 + entrained - released,
            "salt_flux": np.full(t.size, np.nan), **parts}
    return xr.Dataset({k: ("time", v) for k, v in data.items()}, coords={"time": t})


def test_release_parts_add_up_to_released_with_flushing_and_surface_melt():
    n = 61
    parts = {"salt_released_drainage": np.linspace(0.0, 2.0, n),
             "salt_released_melt": np.linspace(0.0, 0.5, n) ** 2,
             "salt_released_surface_melt": np.where(np.arange(n) > 30, np.arange(n) - 30.0, 0.0) * 0.01,
             "salt_released_flushing": np.where(np.arange(n) > 40, np.arange(n) - 40.0, 0.0) * 0.05}
    bds = brine_budget(_cumulative_run(parts), "month")
    total = sum(bds[name].values for name in parts)
    np.testing.assert_allclose(total, bds["salt_released"].values, rtol=1e-13, atol=1e-15)
    assert float(bds["salt_released_flushing"].values[-1]) > 0 and float(bds["salt_released_surface_melt"].sum()) > 0
    lines = format_brine_budget(bds).splitlines()
    head = lines[1]
    for label in ("entrained", "drainage", "basal melt", "surface melt", "flushing", "released", "kept chg"):
        assert label in head
    # the total row: drainage + basal melt + surface melt + flushing = released
    total_row = [line for line in lines if line.startswith("total")][0].split()
    drainage, basal, surface, flushing, released = (float(v) for v in total_row[2:7])
    assert drainage + basal + surface + flushing == pytest.approx(released, rel=1e-3)


def test_older_file_without_the_new_parts_takes_them_as_zero():
    n = 61
    ds = _cumulative_run({"salt_released_drainage": np.linspace(0.0, 2.0, n),
                          "salt_released_melt": np.zeros(n)})
    bds = brine_budget(ds, "month")
    assert float(np.abs(bds["salt_released_flushing"]).sum()) == 0.0
    assert "salt_released_surface_melt, salt_released_flushing (taken as 0)" in bds.attrs["comment"]
