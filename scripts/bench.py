"""Performance and scale-out figures of icecolumn (prints a table; not a test).

Usage::

    python scripts/bench.py [--json FILE] [--tiny] [options]

Figures (all in-process, this machine, one core unless stated):

* ``single_column_winter_s``: the bundled sample winter, default configuration,
  one column, wall time after a warm-up call (the warm-up, i.e. numba cache load
  or compile, is reported separately as ``warmup_s``).
* ``layer_steps_per_s``: layer-steps per second for 1, 64 and 1024 members on the
  first ``--period-days`` days of the sample (a layer-step is one layer advanced
  by one accepted step; accepted steps summed over members).
* ``batch_vs_loop_ratio``: time of N separate ``icecolumn.run`` calls divided by
  one batched N-member run (N = 1024; the loop is timed on ``--loop-subset``
  members and scaled linearly).
* ``exponent_members`` / ``exponent_layers``: log-log slopes of wall time per
  accepted step against members (at 40 layers) and layers (at 1024 members), on
  the first ``--exp-days`` days of the sample.
* ``peak_memory_gb``: peak resident memory of the run (VmHWM after a reset, else maxrss; in a
  fresh process) of a one-winter run with daily profile output, measured at
  ``--mem-members`` members and extrapolated linearly to 1024.
"""
from __future__ import annotations

import argparse
import json
import math
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

import icecolumn as ic
from icecolumn import ensemble

SAMPLE = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"


def _forcing(days: float | None):
    f = ic.read_forcing(SAMPLE)
    if days is None:
        return f
    return f.isel(time=slice(0, int(round(days * 24)) + 1))


def _members(cfg, forcing, n: int):
    """n members that differ slightly in ocean heat flux (so nothing is trivially shared)."""
    return [ic.Member(cfg.replace("ocean", heat_flux=1.0 + 2.0 * i / max(1, n - 1)), forcing) for i in range(n)]


def _timed_batch(cfg, forcing, n: int, batch_size: int):
    mem = _members(cfg, forcing, n)
    t0 = time.perf_counter()
    ds = ensemble.run_members(mem, batch_size=batch_size, variables=["ice_thickness"])
    wall = time.perf_counter() - t0
    return wall, int(ds.attrs["solver_steps_accepted"])


def _slope(x, y) -> float:
    return float(np.polyfit(np.log(np.asarray(x, float)), np.log(np.asarray(y, float)), 1)[0])


def _current_rss_kb() -> int:
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmRSS:"):
                return int(line.split()[1])
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def _reset_peak() -> bool:
    """Reset the kernel's peak-resident counter of this process (Linux: /proc/self/clear_refs)."""
    try:
        Path("/proc/self/clear_refs").write_text("5")
        return True
    except OSError:
        return False


def _peak_kb() -> int:
    """Peak resident memory since the last reset [kB] (VmHWM of /proc/self/status)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1])
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def memory_child(members: int, layers: int, days: float | None) -> None:
    """Run once in this (fresh) process and print JSON with the peak memory."""
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    cfg = ic.default_config().replace("output", interval="1D").replace("grid", layers=layers)
    forcing = _forcing(days)
    # load (or compile) the serial and the threaded kernel first, so their compilation is not in the peak
    ic.run(_forcing(2), cfg.replace("run", start=None, end=None))
    ic.run_ensemble(_members(cfg, _forcing(2), 2))
    warm = _current_rss_kb()  # resident now (the warm-up may have compiled: its peak is not the baseline)
    reset = _reset_peak()  # so a compilation in the warm-up does not count in the peak
    ds = ic.run_ensemble(_members(cfg, forcing, members))
    peak = _peak_kb() if reset else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    nbytes = sum(v.nbytes for v in ds.variables.values())
    profile_bytes = sum(v.nbytes for v in ds.variables.values() if "layer" in v.dims or "state" in v.dims)
    print(json.dumps({"maxrss_kb": peak, "baseline_kb": warm, "import_kb": base, "dataset_bytes": nbytes,
                      "profile_bytes": profile_bytes, "times": ds.sizes["time"]}))


def main(argv=None) -> dict:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--json", type=Path, help="Also write the figures to this JSON file.")
    ap.add_argument("--tiny", action="store_true", help="A tiny configuration (for the test suite).")
    ap.add_argument("--period-days", type=float, default=10.0)
    ap.add_argument("--loop-subset", type=int, default=64)
    ap.add_argument("--exp-days", type=float, default=1.0)
    ap.add_argument("--exp-members", type=int, nargs="+", default=[1024, 2048, 4096, 8192, 16384])
    ap.add_argument("--exp-layers", type=int, nargs="+", default=[20, 40, 80, 160])
    ap.add_argument("--exp-layers-members", type=int, default=1024)
    ap.add_argument("--mem-members", type=int, default=128)
    ap.add_argument("--batch-size", type=int, default=16384, help="Members per batch in the batched runs.")
    ap.add_argument("--_memory", nargs=3, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args._memory:
        m, n, d = args._memory
        memory_child(int(m), int(n), None if d == "winter" else float(d))
        return {}
    counts = [1, 64, 1024]
    mem_days = "winter"
    if args.tiny:
        args.period_days, args.loop_subset, args.exp_days = 2.0, 2, 0.5
        args.exp_members, args.exp_layers, args.exp_layers_members = [4, 8, 16], [5, 10, 20], 4
        args.mem_members, counts, mem_days = 4, [1, 4, 8], "3"
    big = counts[-1]
    cfg = ic.default_config()
    winter = _forcing(None)

    # 1. single column, sample winter, default config
    t0 = time.perf_counter()
    ic.run(winter if not args.tiny else _forcing(3), cfg)
    warmup = time.perf_counter() - t0
    f_single = winter if not args.tiny else _forcing(3)
    best = math.inf
    for _ in range(1 if args.tiny else 3):
        t0 = time.perf_counter()
        ds = ic.run(f_single, cfg)
        best = min(best, time.perf_counter() - t0)
    single_steps = int(ds.attrs["solver_steps_accepted"])

    # 2. layer-steps per second
    short = _forcing(args.period_days)
    lsps, walls = {}, {}
    for n in counts:
        wall, steps = _timed_batch(cfg, short, n, args.batch_size)
        lsps[str(n)] = steps * cfg.grid.layers / wall
        walls[str(n)] = wall

    # 3. loop of public-API runs vs one batch
    mem = _members(cfg, short, args.loop_subset)
    t0 = time.perf_counter()
    for m in mem:
        ic.run(m.forcing, m.config)
    loop_subset_s = time.perf_counter() - t0
    loop_s = loop_subset_s * big / args.loop_subset
    ratio = loop_s / walls[str(big)]

    # 4. cost exponents per accepted step
    exp_f = _forcing(args.exp_days)
    per_member = []
    for n in args.exp_members:
        wall, steps = _timed_batch(cfg, exp_f, n, args.batch_size)
        per_member.append(wall / steps * n)  # time per (batch-average) step ~ time per step of the batch
    per_layer = []
    for nl in args.exp_layers:
        wall, steps = _timed_batch(cfg.replace("grid", layers=nl), exp_f, args.exp_layers_members, args.batch_size)
        per_layer.append(wall / steps * args.exp_layers_members)
    exp_members = _slope(args.exp_members, per_member)
    exp_layers = _slope(args.exp_layers, per_layer)

    # 5. peak memory, fresh process
    out = subprocess.run([sys.executable, __file__, "--_memory", str(args.mem_members), str(cfg.grid.layers),
                          mem_days], capture_output=True, text=True, check=True)
    memo = json.loads(out.stdout.strip().splitlines()[-1])
    kb = 1024.0
    measured_gb = memo["maxrss_kb"] * kb / 1e9
    growth_gb = max(0.0, memo["maxrss_kb"] - memo["baseline_kb"]) * kb / 1e9
    peak_1024_gb = memo["baseline_kb"] * kb / 1e9 + growth_gb * 1024 / args.mem_members

    res = {
        "tiny": bool(args.tiny),
        "cpu_count": __import__("os").cpu_count(),
        "single_column_winter_s": best,
        "warmup_s": warmup,
        "single_column_steps": single_steps,
        "layer_steps_per_s": lsps,
        "period_days": args.period_days,
        "batch_wall_s": walls,
        "batch_vs_loop_ratio": ratio,
        "loop_members_timed": args.loop_subset,
        "loop_members_scaled_to": big,
        "loop_s_scaled": loop_s,
        "exponent_members": exp_members,
        "exponent_members_range": [args.exp_members[0], args.exp_members[-1]],
        "exponent_layers": exp_layers,
        "exponent_layers_range": [args.exp_layers[0], args.exp_layers[-1]],
        "exponent_days": args.exp_days,
        "time_per_step_by_members_s": dict(zip(map(str, args.exp_members), per_member)),
        "time_per_step_by_layers_s": dict(zip(map(str, args.exp_layers), per_layer)),
        "memory_members_measured": args.mem_members,
        "memory_measured_gb": measured_gb,
        "memory_baseline_gb": memo["baseline_kb"] * kb / 1e9,
        "memory_dataset_gb": memo["dataset_bytes"] / 1e9,
        "memory_profiles_share": memo["profile_bytes"] / memo["dataset_bytes"],
        "peak_memory_1024_gb_extrapolated": peak_1024_gb,
    }
    print(f"icecolumn bench{' (tiny)' if args.tiny else ''}: {res['cpu_count']} CPUs, one process")
    rows = [
        ("single column, sample winter (after warm-up)", f"{best:.3f} s", "<= 1 s"),
        ("  warm-up call (numba cache load/compile)", f"{warmup:.2f} s", ""),
        *[(f"layer-steps/s, {n} members, {args.period_days:g} days", f"{v:.3e}", ">= 1e7 at 1024")
          for n, v in lsps.items()],
        (f"loop / batch, {big} members (loop timed on {args.loop_subset}, scaled)", f"{ratio:.1f} x", ">= 30 x"),
        (f"exponent in members {args.exp_members[0]}-{args.exp_members[-1]} ({args.exp_days:g} d)",
         f"{exp_members:.2f}", "1.0 +- 0.1"),
        (f"exponent in layers {args.exp_layers[0]}-{args.exp_layers[-1]} ({args.exp_layers_members} members)",
         f"{exp_layers:.2f}", "1.0 +- 0.1"),
        (f"peak memory, {args.mem_members} members, daily profiles (measured)", f"{measured_gb:.3f} GB", ""),
        ("peak memory, 1024 members (linear extrapolation)", f"{peak_1024_gb:.3f} GB", "< 2 GB"),
        ("  of which Dataset arrays (measured run)", f"{res['memory_dataset_gb']:.3f} GB",
         f"{100 * res['memory_profiles_share']:.0f}% profiles/state"),
    ]
    w = max(len(r[0]) for r in rows)
    print(f"{'figure':{w}s}  {'value':>14s}  target")
    for name, value, target in rows:
        print(f"{name:{w}s}  {value:>14s}  {target}")
    if args.json is not None:
        args.json.write_text(json.dumps(res, indent=2))
    return res


if __name__ == "__main__":
    main()
