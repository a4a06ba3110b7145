"""Performance figures of icecolumn, measured side by side in one run (prints a table; not a test).

Usage::

    python scripts/bench.py [--json FILE [--force]] [--repeat 3] [--cold] [--tiny] [options]

Every timed figure is the median of ``--repeat`` repeats (default 3) in this process after a
warm-up, except where said.  JSON keys:

* ``cold_start_s``, ``install_s``: with ``--cold`` only (else ``null``): ``scripts/cold_start.py``
  makes a fresh venv, ``pip install``s this folder (non-editable; the build hook compiles the
  kernel into the package's numba cache), then times the first ``icecolumn demo`` in an empty
  folder with no other numba cache (``cold_start_s``) and a second one (``cold.second_demo_s``,
  ``cold.cache_reused``).  One measurement each (about 2-3 min).
* ``peer_ratio_explicit``, ``peer_ratio_bdf``: ``scripts/peers/compare.measure`` (its own
  medians of repeats; ``--tiny`` and ``--peers-quick`` use its quick ladders): wall time of the
  best peer to reach 0.1 % thickness error on the Neumann problem divided by icecolumn's;
  ``peers`` has the times at 0.1 %, the CPU-time ratios and the P1 convergence orders.
* ``batch_speedup_per_core``: (per-member time of a loop of single ``icecolumn.run`` calls) /
  (per-member time of one ``--batch-members`` member batch) / (threads the batch used), on the
  first ``--period-days`` days of the sample winter.  The loop is timed on ``--loop-subset``
  members spread evenly over the batch's members and scaled linearly.
* ``newton_per_stage``: Newton iterations per implicit stage solve, ``steps_per_winter``: accepted
  steps, both from the kernel's counters of one sample-winter column (default configuration).
* ``single_column_winter_s``: wall time of ``icecolumn.run`` on the sample winter, warm;
  ``warmup_s``: the first such call in this process (numba cache load, or compile).
* ``layer_exponent``: the log-log slope of the wall time per accepted step of a ``--exp-members``
  member batch (first ``--exp-days`` days) against ``--exp-layers`` layers; ``layer_fit`` has the
  times, the fit ``t = a + b n`` (a fixed cost per step plus a cost per layer: ``a_s``,
  ``b_s_per_layer``) with the slope that fit implies over the same range, and a free-exponent fit
  ``t = a + b n^p``.
* ``fixed_cost_per_run_s``: wall time of ``icecolumn.run`` on the first hour of the sample winter
  (6 layers, two output records), the per-call cost a small run cannot avoid; ``fixed_cost`` splits
  it into ``simulate_s`` (inputs, initial state, kernel) and ``to_dataset_s`` (the Dataset), and
  gives ``kernel_s`` (the compiled kernel's share of ``simulate``, the hour's integration) and
  ``outside_kernel_s`` (``run_s`` minus it: the Python cost of a call).
* ``hourly_output_winter``: the sample winter with ``[output] interval = "1h"`` for both
  ``[solver] output_times`` modes (``interpolated``, the default, and ``step_ends``): wall time,
  accepted steps, end thickness (a record every hour no longer shortens the steps).
* ``batch_winter``: ``batch_speedup_per_core`` on the whole sample winter (``--winter-members``
  members, loop timed on ``--winter-loop`` of them), with the per-member times.
* ``peak_memory_gb_1024``: peak resident memory (VmHWM after a reset, in a fresh process) of a
  one-winter run with daily profile output, measured at ``--mem-members`` members and, unless
  that is 1024, extrapolated linearly to 1024 (``memory.method`` says which).
* ``machine`` (CPU model, cores, numba threads), ``date`` (UTC), ``commit`` (``git rev-parse HEAD``,
  ``commit_dirty`` if the worktree has changes).

An existing ``--json`` file is not overwritten unless ``--force`` (exit status 2).
"""
from __future__ import annotations

import argparse
import datetime
import json
import math
import os
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
SAMPLE = REPO / "forcing_samples" / "station_winter.csv"


# ----------------------------------------------------------------------------------- helpers
def _forcing(days: float | None):
    import icecolumn as ic

    f = ic.read_forcing(SAMPLE)
    if days is None:
        return f
    return f.isel(time=slice(0, int(round(days * 24)) + 1))


def _members(cfg, forcing, n: int):
    """n members that differ slightly in ocean heat flux (so nothing is trivially shared)."""
    import icecolumn as ic

    return [ic.Member(cfg.replace("ocean", heat_flux=1.0 + 2.0 * i / max(1, n - 1)), forcing) for i in range(n)]


def _timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def _median(xs) -> float:
    return float(statistics.median(xs))


def _machine() -> dict:
    import numba

    model = ""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                model = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    import platform

    return {"cpu_model": model or platform.processor(), "cores": os.cpu_count(),
            "numba_threads": int(numba.get_num_threads()), "python": platform.python_version(),
            "numpy": np.__version__, "numba": numba.__version__}


def _git(*args) -> str:
    out = subprocess.run(["git", *args], cwd=REPO, capture_output=True, text=True)
    return out.stdout.strip() if out.returncode == 0 else ""


# --------------------------------------------------------------------------- memory (child)
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
    import icecolumn as ic

    cfg = ic.default_config().replace("output", interval="1D").replace("grid", layers=layers)
    forcing = _forcing(days)
    # load (or compile) the serial and the threaded kernel first, so their compilation is not in the peak
    ic.run(_forcing(2), cfg)
    ic.run_ensemble(_members(cfg, _forcing(2), 2))
    warm = _current_rss_kb()
    reset = _reset_peak()
    ds = ic.run_ensemble(_members(cfg, forcing, members))
    peak = _peak_kb() if reset else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    nbytes = sum(v.nbytes for v in ds.variables.values())
    profile_bytes = sum(v.nbytes for v in ds.variables.values() if "layer" in v.dims or "state" in v.dims)
    print(json.dumps({"maxrss_kb": peak, "baseline_kb": warm, "peak_reset": reset, "dataset_bytes": nbytes,
                      "profile_bytes": profile_bytes, "times": ds.sizes["time"]}))


def _memory(members: int, layers: int, days: str, repeat: int, target: int = 1024) -> dict:
    kb = 1024.0
    runs = []
    for _ in range(repeat):
        out = subprocess.run([sys.executable, __file__, "--_memory", str(members), str(layers), days],
                             capture_output=True, text=True, check=True)
        runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
    peak_kb = _median([r["maxrss_kb"] for r in runs])
    base_kb = _median([r["baseline_kb"] for r in runs])
    growth_kb = max(0.0, peak_kb - base_kb)
    extrapolated = members != target
    peak_target = (base_kb + growth_kb * target / members) * kb / 1e9
    return {
        "peak_memory_gb": peak_target,
        "method": (f"measured at {members} members, extrapolated linearly to {target}: baseline + "
                   f"(peak - baseline) * {target}/{members}") if extrapolated else f"measured at {target} members",
        "members_measured": members,
        "days": days,
        "measured_peak_gb": peak_kb * kb / 1e9,
        "baseline_gb": base_kb * kb / 1e9,
        "dataset_gb_measured": _median([r["dataset_bytes"] for r in runs]) / 1e9,
        "profiles_share": runs[0]["profile_bytes"] / runs[0]["dataset_bytes"],
        "output_times": runs[0]["times"],
        "repeats": repeat,
    }


# ----------------------------------------------------------------------------------- figures
def _single(cfg, forcing, repeat: int) -> dict:
    import icecolumn as ic
    from icecolumn import model

    warmup, _ = _timed(lambda: ic.run(forcing, cfg))
    walls = [_timed(lambda: ic.run(forcing, cfg))[0] for _ in range(repeat)]
    sims = []
    for _ in range(repeat):
        w, raw = _timed(lambda: model.simulate([ic.Member(cfg, forcing)]))
        sims.append(w)
    acc, rej, newton, stages = (int(v) for v in raw.counters[0, :4])
    return {"warmup_s": warmup, "wall_s": _median(walls), "simulate_s": _median(sims), "steps_accepted": acc,
            "steps_rejected": rej, "newton_iterations": newton, "stage_solves": stages,
            "newton_per_stage": newton / stages, "newton_per_step": newton / acc, "walls_s": walls}


def _batch(cfg, forcing, big: int, subset: int, repeat: int) -> dict:
    import numba

    import icecolumn as ic
    from icecolumn import ensemble

    mem = _members(cfg, forcing, big)
    pick = sorted(set(np.linspace(0, big - 1, subset).round().astype(int).tolist()))
    ensemble.run_members(_members(cfg, _forcing(1), 2), batch_size=2, variables=["ice_thickness"])  # warm
    ic.run(mem[0].forcing, mem[0].config)
    batch, loop = [], []
    for _ in range(repeat):  # interleaved, so a change of load on a shared machine hits both
        w, _ = _timed(lambda: ensemble.run_members(mem, batch_size=big, variables=["ice_thickness"]))
        batch.append(w)
        w, _ = _timed(lambda: [ic.run(mem[i].forcing, mem[i].config) for i in pick])
        loop.append(w)
    threads = int(numba.get_num_threads())
    per_loop = _median(loop) / len(pick)
    per_batch = _median(batch) / big
    return {"batch_speedup_per_core": per_loop / per_batch / threads, "speedup_total": per_loop / per_batch,
            "cores_used": threads, "batch_members": big, "batch_wall_s": _median(batch),
            "per_member_batch_s": per_batch, "loop_members_timed": len(pick), "loop_wall_s": _median(loop),
            "per_member_loop_s": per_loop, "loop_sampling": (f"{len(pick)} of the {big} members, evenly spaced "
                                                             f"(indices {pick[0]}..{pick[-1]}), scaled linearly"),
            "period_days": None}


def _layers(cfg, forcing, layers, members: int, repeat: int) -> dict:
    from icecolumn import ensemble

    per_step = []
    for nl in layers:
        c = cfg.replace("grid", layers=nl)
        mem = _members(c, forcing, members)
        ensemble.run_members(mem[:2], batch_size=2, variables=["ice_thickness"])
        walls, steps = [], None
        for _ in range(repeat):
            w, ds = _timed(lambda: ensemble.run_members(mem, batch_size=members, variables=["ice_thickness"]))
            walls.append(w)
            steps = int(ds.attrs["solver_steps_accepted"])
        per_step.append(_median(walls) / (steps / members))  # wall per (member-average) accepted step
    n = np.asarray(layers, float)
    t = np.asarray(per_step, float)
    apparent = float(np.polyfit(np.log(n), np.log(t), 1)[0])
    b, a = (float(v) for v in np.polyfit(n, t, 1))
    fit = a + b * n
    implied = float(np.polyfit(np.log(n), np.log(fit), 1)[0]) if np.all(fit > 0) else None
    free = None
    try:
        import warnings

        from scipy.optimize import OptimizeWarning, curve_fit

        warnings.simplefilter("ignore", OptimizeWarning)

        p, _ = curve_fit(lambda x, a_, b_, p_: a_ + b_ * x ** p_, n, t, p0=(max(a, 1e-9), max(b, 1e-12), 1.0),
                         maxfev=20000)
        free = {"a_s": float(p[0]), "b_s": float(p[1]), "p": float(p[2])}
    except Exception as err:  # noqa: BLE001 - a fit that fails is reported, not fatal
        free = {"error": str(err)}
    mid = float(np.median(n))
    return {"apparent": apparent, "a_s": a, "b_s_per_layer": b, "implied_by_linear_fit": implied,
            "linear_fit_max_rel_residual": float(np.max(np.abs(fit / t - 1.0))),
            "fixed_share_at_median_layers": a / (a + b * mid), "median_layers": mid, "free_exponent_fit": free,
            "layers": list(map(int, layers)), "time_per_step_s": per_step, "members": members}


def _kernel_share(call, n: int) -> float:
    """Median time per ``call`` spent in the compiled kernel (``kernel.run`` and
    ``kernel.record``, timed by wrapping them for the duration of the measurement)."""
    from icecolumn import kernel as K

    spent = [0.0]
    originals = {name: getattr(K, name) for name in ("run", "record")}

    def timed(f):
        def wrapper(*args):
            t0 = time.perf_counter()
            out = f(*args)
            spent[0] += time.perf_counter() - t0
            return out
        return wrapper

    shares = []
    try:
        for name, f in originals.items():
            setattr(K, name, timed(f))
        for _ in range(n):
            spent[0] = 0.0
            call()
            shares.append(spent[0])
    finally:
        for name, f in originals.items():
            setattr(K, name, f)
    return _median(shares)


def _fixed_cost(cfg, repeat: int) -> dict:
    import icecolumn as ic
    from icecolumn import model
    from icecolumn.output import to_dataset

    c = cfg.replace("grid", layers=6)
    forcing = _forcing(1.0 / 24.0)
    members = [ic.Member(c, forcing)]
    for _ in range(3):
        ic.run(forcing, c)
    n = max(20, 20 * repeat)  # each call is about a millisecond: many repeats per median
    runs = [_timed(lambda: ic.run(forcing, c))[0] for _ in range(n)]
    sims = []
    for _ in range(n):
        w, raw = _timed(lambda: model.simulate(members))
        sims.append(w)
    dss = [_timed(lambda: to_dataset(raw))[0] for _ in range(n)]
    kernel = _kernel_share(lambda: model.simulate(members), n)
    return {"run_s": _median(runs), "simulate_s": _median(sims), "to_dataset_s": _median(dss),
            "kernel_s": kernel, "outside_kernel_s": _median(runs) - kernel, "repeats": n,
            "layers": 6, "hours": 1, "output_times": int(raw.times.size),
            "variables": len(to_dataset(raw).data_vars)}


def _hourly_output(cfg, forcing, repeat: int) -> dict:
    import icecolumn as ic

    out = {}
    for mode in ("interpolated", "step_ends"):
        c = cfg.replace("output", interval="1h").replace("solver", output_times=mode)
        ds = ic.run(forcing, c)  # warm
        walls = [_timed(lambda: ic.run(forcing, c))[0] for _ in range(repeat)]
        out[mode] = {"wall_s": _median(walls), "steps_accepted": int(ds.attrs["solver_steps_accepted"]),
                     "records": int(ds.sizes["time"]), "end_ice_thickness_m": float(ds["ice_thickness"][-1])}
    out["wall_ratio_step_ends_over_interpolated"] = out["step_ends"]["wall_s"] / out["interpolated"]["wall_s"]
    return out


def _peers(quick: bool) -> dict:
    sys.path.insert(0, str(HERE / "peers"))
    import compare

    res = compare.measure(quick=quick)
    keep = ("peer_ratio_explicit", "peer_ratio_bdf", "peer_ratio_bdf_method", "peer_ratio_by_method",
            "peer_ratio_explicit_cpu", "peer_ratio_bdf_cpu", "time_at_target_s", "best_error", "quick",
            "order_icecolumn", "order_bdf", "order_explicit")
    return {k: res.get(k) for k in keep}


# ------------------------------------------------------------------------------------- table
def _print_table(res: dict) -> None:
    from rich.console import Console
    from rich.table import Table

    def f(x, fmt):
        return "n/a" if x is None else format(x, fmt)

    m = res["machine"]
    le = res["layer_fit"]
    b = res["batch"]
    mem = res["memory"]
    pe = res["peers"]
    bw = res["batch_winter"]
    fc = res["fixed_cost"]
    hw = res["hourly_output_winter"]
    tat = pe.get("time_at_target_s") or {}

    def t01(code):
        v = tat.get(code)
        return "not reached" if v is None else f"{1e3 * v['time_s']:.2f} ms ({v['setting']})"

    rows = [
        ("cold_start_s", "first 'icecolumn demo' after pip install, fresh venv", f(res["cold_start_s"], ".1f") + (" s" if res["cold_start_s"] is not None else ""),
         "<= 10 s"),
        ("install_s", "pip install (dependencies + kernel compile)",
         f(res["install_s"], ".1f") + (" s" if res["install_s"] is not None else ""), ""),
        ("", "  second demo (cache reused?)",
         "n/a" if res["cold"] is None else f"{res['cold']['second_demo_s']:.1f} s ({res['cold']['cache_reused']})", ""),
        ("peer_ratio_explicit", "best explicit peer / icecolumn at 0.1 %", f(res["peer_ratio_explicit"], ".2f"), ">= 10"),
        ("peer_ratio_bdf", f"best solve_ivp peer ({pe.get('peer_ratio_bdf_method')}) / icecolumn",
         f(res["peer_ratio_bdf"], ".2f"), ">= 10"),
        ("", "  time at 0.1 %: icecolumn | explicit | solve_ivp",
         f"{t01('icecolumn')} | {t01('explicit')} | {t01('solve_ivp_' + str(pe.get('peer_ratio_bdf_method')))}", ""),
        ("", "  P1 convergence order in layers/cells: icecolumn | solve_ivp | explicit",
         f"{f(pe.get('order_icecolumn'), '.2f')} | {f(pe.get('order_bdf'), '.2f')} | {f(pe.get('order_explicit'), '.2f')}",
         ""),
        ("batch_speedup_per_core", f"loop / batch per member / {b['cores_used']} cores, {b['batch_members']} members, "
         f"{b['period_days']:g} d", f(res["batch_speedup_per_core"], ".2f"), ">= 4"),
        ("", f"  loop {b['loop_sampling']}", f"{1e3 * b['per_member_loop_s']:.2f} ms/member", ""),
        ("", "  batch", f"{1e3 * b['per_member_batch_s']:.2f} ms/member", ""),
        ("batch_winter", f"loop / batch per member / {bw['cores_used']} cores, {bw['batch_members']} members, "
         + ("whole sample winter" if bw["period_days"] is None else f"{bw['period_days']:g} d"),
         f(bw["batch_speedup_per_core"], ".2f"),
         f"{1e3 * bw['per_member_loop_s']:.1f} | {1e3 * bw['per_member_batch_s']:.1f} ms/member"),
        ("newton_per_stage", "Newton iterations per implicit stage, sample winter", f(res["newton_per_stage"], ".2f"), ""),
        ("steps_per_winter", "accepted steps, sample winter" + (" (tiny: 3 days)" if res["tiny"] else ""),
         str(res["steps_per_winter"]), ""),
        ("single_column_winter_s", "one column, sample winter, warm", f(res["single_column_winter_s"], ".3f") + " s",
         "<= 1 s"),
        ("warmup_s", "first run in this process (cache load)", f(res["warmup_s"], ".2f") + " s", ""),
        ("layer_exponent", f"log-log slope of time/step, {le['layers'][0]}-{le['layers'][-1]} layers, "
         f"{le['members']} members", f(le["apparent"], ".2f"), ""),
        ("", "  fit t = a + b n: a | b | slope it implies",
         f"{1e6 * le['a_s']:.1f} us | {1e6 * le['b_s_per_layer']:.3f} us | {f(le['implied_by_linear_fit'], '.2f')}",
         f"a is {100 * le['fixed_share_at_median_layers']:.0f} % at {le['median_layers']:g} layers"),
        ("fixed_cost_per_run_s", f"ic.run, 1 h of the sample, {fc['layers']} layers: run | simulate | to_dataset",
         f"{1e3 * fc['run_s']:.2f} | {1e3 * fc['simulate_s']:.2f} | {1e3 * fc['to_dataset_s']:.2f} ms",
         f"{fc['variables']} variables"),
        ("", "  of the run: in the kernel | outside it",
         f"{1e3 * fc['kernel_s']:.2f} | {1e3 * fc['outside_kernel_s']:.2f} ms", ""),
        ("hourly_output_winter", "sample winter, hourly records: interpolated | step_ends",
         f"{hw['interpolated']['wall_s']:.3f} | {hw['step_ends']['wall_s']:.3f} s",
         f"{hw['interpolated']['steps_accepted']} | {hw['step_ends']['steps_accepted']} steps"),
        ("peak_memory_gb_1024", f"1024 members, winter, daily profiles ({'extrapolated' if mem['members_measured'] != 1024 else 'measured'})",
         f(res["peak_memory_gb_1024"], ".3f") + " GB", "< 2 GB"),
        ("", f"  measured at {mem['members_measured']} members", f"{mem['measured_peak_gb']:.3f} GB", ""),
    ]
    table = Table(title=f"icecolumn bench{' (tiny)' if res['tiny'] else ''}: {m['cpu_model']}, {m['cores']} cores; "
                        f"medians of {res['repeat']}; commit {res['commit'][:10]}{' (dirty)' if res['commit_dirty'] else ''}")
    for col in ("key", "figure", "value", "target / note"):
        table.add_column(col, overflow="fold")
    for r in rows:
        table.add_row(*r)
    Console(width=160).print(table)


# -------------------------------------------------------------------------------------- main
def main(argv=None) -> dict:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--json", type=Path, help="Also write the figures to this JSON file.")
    ap.add_argument("--force", action="store_true", help="Overwrite an existing --json file.")
    ap.add_argument("--repeat", type=int, default=3, help="Repeats per timed figure (medians).")
    ap.add_argument("--cold", action="store_true", help="Also measure the cold start (fresh venv, ~2-3 min).")
    ap.add_argument("--tiny", action="store_true", help="A tiny configuration (for the test suite).")
    ap.add_argument("--peers-quick", action="store_true", help="Quick peer ladders (as --tiny).")
    ap.add_argument("--period-days", type=float, default=10.0, help="Days of the sample in the batch figure.")
    ap.add_argument("--batch-members", type=int, default=1024)
    ap.add_argument("--loop-subset", type=int, default=64)
    ap.add_argument("--exp-days", type=float, default=1.0)
    ap.add_argument("--exp-layers", type=int, nargs="+", default=[10, 20, 40, 80, 160])
    ap.add_argument("--exp-members", type=int, default=1024)
    ap.add_argument("--mem-members", type=int, default=128)
    ap.add_argument("--winter-members", type=int, default=64, help="Members of the whole-winter batch figure.")
    ap.add_argument("--winter-loop", type=int, default=8, help="Of those, members timed as single runs.")
    ap.add_argument("--_memory", nargs=3, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args._memory:
        m, n, d = args._memory
        memory_child(int(m), int(n), None if d == "winter" else float(d))
        return {}
    if args.json is not None and args.json.exists() and not args.force:
        print(f"bench: {args.json} exists; pass --force to overwrite it", file=sys.stderr)
        raise SystemExit(2)
    mem_days = "winter"
    single_days = None
    if args.tiny:
        args.period_days, args.batch_members, args.loop_subset = 1.0, 8, 2
        args.exp_days, args.exp_layers, args.exp_members = 0.5, [5, 10, 20], 4
        args.mem_members, mem_days, single_days = 4, "2", 3.0
        args.winter_members, args.winter_loop = 4, 2
        args.repeat = min(args.repeat, 2)
    import icecolumn as ic

    cfg = ic.default_config()
    started = time.perf_counter()
    single = _single(cfg, _forcing(single_days), args.repeat)
    batch = _batch(cfg, _forcing(args.period_days), args.batch_members, args.loop_subset, args.repeat)
    batch["period_days"] = args.period_days
    winter = _batch(cfg, _forcing(single_days), args.winter_members, args.winter_loop, args.repeat)
    winter["period_days"] = None if single_days is None else single_days
    fixed = _fixed_cost(cfg, args.repeat)
    hourly = _hourly_output(cfg, _forcing(single_days), args.repeat)
    layer = _layers(cfg, _forcing(args.exp_days), args.exp_layers, args.exp_members, args.repeat)
    memory = _memory(args.mem_members, cfg.grid.layers, mem_days, args.repeat)
    peers = _peers(quick=args.tiny or args.peers_quick)
    cold = None
    if args.cold:
        import cold_start

        cold = cold_start.measure(REPO, log=lambda s: print(s, file=sys.stderr))
    res = {
        "cold_start_s": None if cold is None else cold["cold_start_s"],
        "install_s": None if cold is None else cold["install_s"],
        "peer_ratio_explicit": peers["peer_ratio_explicit"],
        "peer_ratio_bdf": peers["peer_ratio_bdf"],
        "batch_speedup_per_core": batch["batch_speedup_per_core"],
        "newton_per_stage": single["newton_per_stage"],
        "steps_per_winter": single["steps_accepted"],
        "single_column_winter_s": single["wall_s"],
        "warmup_s": single["warmup_s"],
        "layer_exponent": layer["apparent"],
        "layer_fit": layer,
        "peak_memory_gb_1024": memory["peak_memory_gb"],
        "fixed_cost_per_run_s": fixed["run_s"],
        "fixed_cost": fixed,
        "hourly_output_winter": hourly,
        "batch_winter": winter,
        "machine": _machine(),
        "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "commit": _git("rev-parse", "HEAD"),
        "commit_dirty": bool(_git("status", "--porcelain", "--untracked-files=no")),
        "tiny": bool(args.tiny),
        "repeat": args.repeat,
        "cold": cold,
        "peers": peers,
        "batch": batch,
        "single": single,
        "memory": memory,
        "bench_wall_s": time.perf_counter() - started,
    }
    _print_table(res)
    if args.json is not None:
        args.json.write_text(json.dumps(res, indent=2))
    return res


if __name__ == "__main__":
    main()
