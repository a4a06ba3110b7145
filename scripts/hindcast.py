"""Leave-one-year-out hindcasts over the bundled (INVENTED) station history.

For every season of ``forcing_samples/station_history.csv`` that has a full winter
(1 October of year Y-1 to 31 May of year Y):

1. the "truth" is a deterministic run of that season's own weather from 1 October with
   5 cm of ice (configuration below, default physics);
2. a forecast starts on 10 January of year Y from the truth's thickness on that date,
   using every *other* season as analog (``leave_out=Y``: the season being hindcast is left out),
   perturbed, with ``--members`` members;
3. on the weekly forecast dates we count whether the truth lies inside the 5-95 %
   range and record the error of the ensemble median.

Printed: per-season coverage and median error, and the totals (coverage over all
forecast dates; median and maximum absolute error of the median).  The truth is the
model itself, so this measures how well analog weather plus parameter perturbations
cover weather and parameter uncertainty, not model error.

    python scripts/hindcast.py [--members 33] [--layers 12]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import icecolumn as ic  # noqa: E402
from icecolumn.forecast import run_forecast  # noqa: E402

HISTORY = ROOT / "forcing_samples" / "station_history.csv"
SNOW = 0.15  # m, the same fixed slab in truth and forecast (invented)


def hindcast(members: int = 33, layers: int = 12, seed: int = 0, verbose: bool = True) -> dict:
    hist = ic.read_forcing(HISTORY)
    base = (ic.default_config().replace("grid", layers=layers).replace("output", interval="1D")
            .replace("initial", snow_thickness=SNOW))
    t = hist["time"].values
    inside_all, err_all, rows = [], [], []
    for year in range(2016, 2027):
        t_first = np.datetime64(f"{year - 1}-10-01T00:00")
        t_end = np.datetime64(f"{year}-05-31T00:00")
        if t_first < t[0] or t_end > t[-1]:
            continue
        start = np.datetime64(f"{year}-01-10T00:00")
        truth_cfg = base.replace("initial", ice_thickness=0.05).replace(
            "run", start=str(t_first), end=str(t_end))
        truth = ic.run(hist, truth_cfg)
        h0 = float(truth["ice_thickness"].sel(time=start).values)
        ds = run_forecast(hist, start, ice_thickness=h0, snow_thickness=SNOW, until=t_end, members=members,
                          seed=seed, config=base, perturb=True, leave_out=year)
        dates = start + np.arange(7, int((t_end - start) / np.timedelta64(1, "D")) + 1, 7) * np.timedelta64(1, "D")
        h_true = truth["ice_thickness"].sel(time=dates).values
        p = ds["ice_thickness_percentile"].sel(time=dates)
        lo, med, hi = (p.sel(percentile=q).values for q in (5.0, 50.0, 95.0))
        inside = (h_true >= lo) & (h_true <= hi)
        err = med - h_true
        inside_all.append(inside)
        err_all.append(err)
        rows.append((year, h0, inside.mean(), np.median(np.abs(err)), err[-1]))
        if verbose:
            print(f"{year}: start {h0:.3f} m; truth 31 May {h_true[-1]:.3f} m, median {med[-1]:.3f} m; "
                  f"5-95 % covers {inside.sum()}/{inside.size} dates; median |error| {np.median(np.abs(err)):.3f} m",
                  flush=True)
    inside = np.concatenate(inside_all)
    err = np.concatenate(err_all)
    return {"seasons": len(rows), "dates": int(inside.size), "coverage": float(inside.mean()),
            "median_abs_error": float(np.median(np.abs(err))), "max_abs_error": float(np.max(np.abs(err))),
            "mean_error": float(np.mean(err)), "rows": rows}


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--members", type=int, default=33)
    ap.add_argument("--layers", type=int, default=12)
    ap.add_argument("--seed", type=int, default=0)
    a = ap.parse_args()
    t0 = time.time()
    r = hindcast(a.members, a.layers, a.seed)
    print(f"\n{r['seasons']} seasons, {r['dates']} weekly forecast dates (10 Jan start, to 31 May), "
          f"{a.members} members, {a.layers} layers")
    print(f"5-95 % coverage of the left-out truth: {100 * r['coverage']:.1f} %")
    print(f"ensemble-median error: median |e| {r['median_abs_error']:.3f} m, max |e| {r['max_abs_error']:.3f} m, "
          f"mean e {r['mean_error']:+.3f} m")
    print(f"({time.time() - t0:.0f} s) INVENTED DATA; conditional on the model. {ic.CAUTION}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
