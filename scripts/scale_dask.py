"""Scale-out figures: a large ensemble on a dask ``LocalCluster`` against a local run (not a test).

Usage::

    python scripts/scale_dask.py [--members 10000] [--days 30] [--workers 2] [--check 200]

Runs ``--members`` members of the bundled invented sample winter (its first ``--days`` days,
daily output, three thickness and salt time series kept) through
:func:`icecolumn.ensemble.run_members_to_file` on a ``distributed.LocalCluster`` with
``--workers`` single-threaded worker processes, streaming the batches into one NetCDF file.
It prints the wall time, the members per second, the peak resident memory of each worker
(``ru_maxrss`` read on the worker after the run) and of this process, and then runs
``--check`` members spread over the ensemble locally in this process (one batch, no dask) and
reports whether their numbers are bitwise those of the dask run.  Needs the ``scale`` extra
(``pip install ".[scale]"``).
"""
from __future__ import annotations

import argparse
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xarray as xr

import icecolumn as ic
from icecolumn import ensemble
from icecolumn.kernel.warmup import compile_kernel

SAMPLE = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"
VARIABLES = ["ice_thickness", "load_bearing_thickness", "salt_released"]


def _peak_rss_gb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0 ** 2  # kB on Linux


def members(n: int, days: float):
    """``n`` members of the sample winter that differ in ocean heat flux, transfer coefficient and
    initial thickness (a regular sweep, so nothing is trivially shared)."""
    forcing = ic.read_forcing(SAMPLE)
    forcing = forcing.isel(time=slice(0, int(round(days * 24)) + 1))
    base = ic.default_config().replace("output", interval="1D")
    out = []
    for i in range(n):
        cfg = (base.replace("ocean", heat_flux=0.5 + 4.5 * (i % 100) / 99.0)
               .replace("surface", heat_transfer_coefficient=8.0 + 0.1 * ((i // 100) % 100))
               .replace("initial", ice_thickness=0.02 + 0.001 * (i % 97)))
        out.append(ic.Member(cfg, forcing))
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--members", type=int, default=10000)
    ap.add_argument("--days", type=float, default=30.0)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--batch-size", type=int, default=256)
    ap.add_argument("--check", type=int, default=200, help="members re-run locally and compared bitwise")
    args = ap.parse_args(argv)
    import distributed

    mem = members(args.members, args.days)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "scale.nc"
        cluster = distributed.LocalCluster(n_workers=args.workers, threads_per_worker=1, processes=True,
                                           dashboard_address=None)
        client = distributed.Client(cluster)
        client.run(compile_kernel)  # load the compiled kernel on every worker before timing
        t0 = time.perf_counter()
        ensemble.run_members_to_file(mem, path, batch_size=args.batch_size, scheduler=client,
                                     variables=VARIABLES)
        wall = time.perf_counter() - t0
        worker_rss = client.run(_peak_rss_gb)
        client.close()
        cluster.close()
        pick = np.unique(np.linspace(0, args.members - 1, args.check).round().astype(int))
        t1 = time.perf_counter()
        local = ensemble.run_members([mem[i] for i in pick], batch_size=len(pick), variables=VARIABLES)
        local_wall = time.perf_counter() - t1
        with xr.open_dataset(path) as ds:
            same = all(np.array_equal(ds[v].isel(member=pick).values, local[v].values, equal_nan=True)
                       for v in VARIABLES)
            size_mb = path.stat().st_size / 1e6
            h_end = ds["ice_thickness"].isel(time=-1).values
    print(f"members {args.members}, days {args.days:g}, workers {args.workers}, batch size {args.batch_size}")
    print(f"dask LocalCluster wall {wall:.1f} s ({args.members / wall:.1f} members/s), file {size_mb:.1f} MB")
    for addr, gb in sorted(worker_rss.items()):
        print(f"  worker {addr}: peak RSS {gb:.3f} GB")
    print(f"client process peak RSS {_peak_rss_gb():.3f} GB")
    print(f"end thickness min / median / max {np.nanmin(h_end):.3f} / {np.nanmedian(h_end):.3f} / "
          f"{np.nanmax(h_end):.3f} m")
    print(f"local re-run of {pick.size} members ({local_wall:.1f} s): bitwise equal to the dask run: {same}")
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main())
