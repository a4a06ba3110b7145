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
