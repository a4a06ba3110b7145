"""Equal-accuracy comparison of icecolumn with the peers a user would write instead.

Usage::

    python scripts/peers/compare.py [--json out.json [--overwrite]] [--quick] [--verbose]

For each code a ladder of resolutions (and tolerances for the solve_ivp peer and icecolumn) is run
on P1 (fresh-water Neumann problem, exact solution) and P2 (salty mushy layer with a linear
liquidus, converged reference); see ``problems.py`` for the problems and error measures.  For
every setting the wall time is the median of repeats on this machine; one warm-up call per code
(numba compile or cache load for icecolumn, imports and first-call costs for the others) is made
before any timing, and settings that take under 0.5 s are run once more untimed before their
repeats.

Time at 0.1 % (P1): a setting qualifies when its error is at most 0.1 % *and* the same
resolution at the next tighter tolerance of the ladder also reaches 0.1 % (so that a lucky
cancellation of time and space errors at a loose tolerance does not count; the plain cheapest
setting is reported too).  The few cheapest qualifying settings of every code are then timed
again in interleaved rounds (round-robin over all codes; the machine may be shared), and the
cheapest by that median is the code's time at 0.1 %.

Printed: a table per problem (code, setting, error, median wall time, repeats), the cheapest
setting at 0.1 % per code, the ratios and the convergence orders.  ``measure(quick)`` returns
the same figures as a dict (what ``--json`` writes); its keys:

* ``peer_ratio_explicit``: (best explicit-enthalpy time at 0.1 %) / (icecolumn time at 0.1 %), P1;
  ``None`` when either code did not reach 0.1 % on its ladder.
* ``peer_ratio_bdf``: (best solve_ivp time at 0.1 %, BDF or LSODA, whichever is faster) /
  (icecolumn time at 0.1 %), P1; ``peer_ratio_bdf_method`` says which; ``peer_ratio_by_method``
  gives both.  ``peer_ratio_explicit_cpu``, ``peer_ratio_bdf_cpu``: the same ratios of process
  CPU time (less sensitive to other load on a shared machine; all codes run on one core).
* ``order_explicit``, ``order_bdf``, ``order_icecolumn``: least-squares slope of
  ``-log(error)`` against ``log(cells or layers)`` on P1 (doubling ladders; solve_ivp at its
  tightest tolerance, icecolumn at rtol 1e-9, so that the layer error and not the time error is
  measured); ``orders`` has the pairwise orders and the errors they come from, also icecolumn's
  at its default rtol (1e-3: from about 20 layers on its time error, about 2e-5, dominates).
* ``time_at_target_s``: per code ``{"setting", "error", "time_s"}`` of the cheapest qualifying
  setting at 0.1 % (P1, interleaved timing), or ``None``; ``time_at_target_plain_s``: the plain
  cheapest ladder setting with error <= 0.1 % (ladder timing); ``final_timing``: the interleaved
  rows; ``best_error``: per code the smallest P1 error on its ladder.
* ``p1``, ``p2``: all runs (``code``, ``setting``, ``error``, ``time_s``, ``repeats``), and for P2
  the reference (its resolution, tolerance, the self-convergence sequence and the estimated
  error of the reference) and icecolumn's *nearest equivalent* problem (a different problem:
  its own liquidus and conductivity model) with its self-convergence, reported separately.
* ``p1.icecolumn_one_hour_run_s``: wall time of ``ic.run`` on one hour of P1 (8 layers, two
  output records), an estimate of its fixed cost per call.
* ``target_error`` (1e-3), ``quick``, ``machine`` (cores, versions).
"""
from __future__ import annotations

import argparse
import json
import math
import os
import platform
import statistics
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
if str(HERE) not in sys.path:
    sys.path.insert(0, str(HERE))

import explicit_enthalpy  # noqa: E402
import icecolumn_side  # noqa: E402
import mol_bdf  # noqa: E402
from problems import Mushy, Neumann  # noqa: E402

TARGET = 1e-3  # 0.1 % thickness error

FULL = {
    "explicit_p1": [12, 14, 16, 18, 20, 22, 25, 30, 40, 50, 70, 100, 140, 200],
    "explicit_p1_order": [25, 50, 100, 200],
    "mol_p1_m": [3, 4, 5, 6, 8, 9, 10, 14, 20, 40, 80],
    "mol_p1_rtol": [1e-3, 1e-4, 1e-5, 1e-6, 1e-8, 1e-10],
    "mol_p1_order": [5, 10, 20, 40, 80],
    "ic_p1_layers": [3, 4, 5, 6, 8, 10, 14, 20, 40, 80, 160, 320],
    "ic_p1_rtol": [1e-2, 1e-3, 1e-4, 1e-5],
    "ic_p1_order": [8, 16, 32, 64],
    "ic_p1_order_rtol": 1e-9,
    "p2_reference": (1600, 1e-8),
    "p2_self": [200, 400, 800],
    "explicit_p2": [25, 35, 50, 70, 100, 140, 200],
    "mol_p2_n": [25, 35, 50, 70, 100, 140, 200, 400],
    "mol_p2_rtol": [1e-4, 1e-6],
    "ic_p2_layers": [10, 20, 40, 80, 160, 320, 640],
    "ic_p2_rtol": 1e-4,
    "repeats": 15,
    "budget_s": 1.5,
    "finalists": 3,
    "rounds": 7,
    "per_round": 3,
}

QUICK = {
    "explicit_p1": [16, 25, 50],
    "explicit_p1_order": [25, 50],
    "mol_p1_m": [4, 10, 20],
    "mol_p1_rtol": [1e-4, 1e-8],
    "mol_p1_order": [5, 10, 20],
    "ic_p1_layers": [6, 10, 20, 40],
    "ic_p1_rtol": [1e-3],
    "ic_p1_order": [8, 16, 32],
    "ic_p1_order_rtol": 1e-9,
    "p2_reference": (200, 1e-7),
    "p2_self": [50, 100],
    "explicit_p2": [25],
    "mol_p2_n": [25, 50],
    "mol_p2_rtol": [1e-5],
    "ic_p2_layers": [10, 20],
    "ic_p2_rtol": 1e-3,
    "repeats": 2,
    "budget_s": 0.2,
    "finalists": 1,
    "rounds": 1,
    "per_round": 2,
}


# ------------------------------------------------------------------------------------- timing
def timed(fn, repeats: int, budget_s: float):
    """Run ``fn`` and return (result, median wall time [s], number of timed repeats).

    The first call is timed; when it is shorter than 0.5 s it is discarded as a warm-up and up to
    ``repeats`` timed calls follow (as many as fit in ``budget_s``, at least 2); otherwise the
    first call is the only sample.
    """
    t0 = time.perf_counter()
    res = fn()
    first = time.perf_counter() - t0
    if first >= 0.5:
        return res, first, 1
    n = int(min(repeats, max(2, budget_s // max(first, 1e-6))))
    samples = []
    for _ in range(n):
        t0 = time.perf_counter()
        res = fn()
        samples.append(time.perf_counter() - t0)
    return res, statistics.median(samples), n


def fit_order(ns, errors):
    """Least-squares order p of ``error ~ N^-p`` and the pairwise orders."""
    ns = np.asarray(ns, dtype=float)
    e = np.asarray(errors, dtype=float)
    ok = e > 0
    pair = [float(math.log(e[i] / e[i + 1]) / math.log(ns[i + 1] / ns[i])) if e[i] > 0 and e[i + 1] > 0 else None
            for i in range(len(e) - 1)]
    if ok.sum() < 2:
        return None, pair
    slope = np.polyfit(np.log(ns[ok]), np.log(e[ok]), 1)[0]
    return float(-slope), pair


def cheapest(runs):
    ok = [r for r in runs if r["error"] <= TARGET]
    return min(ok, key=lambda r: r["time_s"]) if ok else None


def tolerance_robust(runs, row) -> bool:
    """``row`` reaches the target and so does the same resolution at the next tighter tolerance
    of the ladder (if there is one): its accuracy does not rest on a lucky cancellation of the
    time-integration error against the spatial error."""
    if row["error"] > TARGET:
        return False
    if "rtol" not in row:
        return True
    res_key = "intervals" if "intervals" in row else "layers"
    same = [r for r in runs if r[res_key] == row[res_key] and r["rtol"] < row["rtol"]]
    if not same:
        return True
    nxt = max(r["rtol"] for r in same)
    return all(r["error"] <= TARGET for r in same if r["rtol"] == nxt)


def interleaved_timing(candidates, calls, rounds: int, per_round: int, log):
    """Median wall time of each candidate from ``rounds`` round-robin passes of ``per_round``
    calls each (the machine may be shared: interleaving spreads its load over all candidates)."""
    samples = {key: [] for key in candidates}
    cpu = {key: [] for key in candidates}
    for _ in range(rounds):
        for key in candidates:
            fn = calls[key]
            for _ in range(per_round):
                c0 = time.process_time()
                t0 = time.perf_counter()
                fn()
                samples[key].append(time.perf_counter() - t0)
                cpu[key].append(time.process_time() - c0)
    return {key: (statistics.median(v), len(v), statistics.median(cpu[key])) for key, v in samples.items()}


# ------------------------------------------------------------------------------------------ P1
def p1_runs(lad, log) -> dict:
    prob = Neumann()
    out = {"explicit": [], "solve_ivp_BDF": [], "solve_ivp_LSODA": [], "icecolumn": []}
    calls = {}  # (code, setting) -> the timed call, for the interleaved final timing
    rep, bud = lad["repeats"], lad["budget_s"]

    explicit_enthalpy.solve_p1(10, prob=prob)  # warm-up
    for n in sorted(set(lad["explicit_p1"]) | set(lad["explicit_p1_order"])):
        fn = (lambda n=n: explicit_enthalpy.solve_p1(n, prob=prob))
        res, t, k = timed(fn, rep, bud)
        calls[("explicit", f"{n} cells")] = fn
        out["explicit"].append({"code": "explicit", "setting": f"{n} cells", "cells": n, "error": prob.error(res["h"]),
                                "time_s": t, "repeats": k, "steps": res["steps"]})
        log(out["explicit"][-1])

    for method in mol_bdf.METHODS:
        key = f"solve_ivp_{method}"
        mol_bdf.solve_p1(5, 1e-4, method, prob)  # warm-up
        grid = [(m, r) for m in lad["mol_p1_m"] for r in lad["mol_p1_rtol"]]
        tight = min(lad["mol_p1_rtol"])
        grid += [(m, tight) for m in lad["mol_p1_order"] if (m, tight) not in grid]
        for m, rtol in grid:
            fn = (lambda m=m, rtol=rtol, method=method: mol_bdf.solve_p1(m, rtol, method, prob))
            res, t, k = timed(fn, rep, bud)
            calls[(key, f"{m} intervals, rtol {rtol:g}")] = fn
            out[key].append({"code": key, "setting": f"{m} intervals, rtol {rtol:g}", "intervals": m, "rtol": rtol,
                             "error": prob.error(res["h"]), "time_s": t, "repeats": k, "nfev": res["nfev"]})
            log(out[key][-1])

    case = icecolumn_side.P1Case(prob)
    t0 = time.perf_counter()
    case.run(10, 1e-3)  # warm-up: numba compile or cache load
    warm = time.perf_counter() - t0
    grid = [(n, r) for n in lad["ic_p1_layers"] for r in lad["ic_p1_rtol"]]
    for r in (lad["ic_p1_order_rtol"], 1e-3):
        grid += [(n, r) for n in lad["ic_p1_order"] if (n, r) not in grid]
    for n, rtol in grid:
        fn = (lambda n=n, rtol=rtol: case.run(n, rtol))
        res, t, k = timed(fn, rep, bud)
        calls[("icecolumn", f"{n} layers, rtol {rtol:g}")] = fn
        out["icecolumn"].append({"code": "icecolumn", "setting": f"{n} layers, rtol {rtol:g}", "layers": n,
                                 "rtol": rtol, "error": prob.error(res["h"]), "time_s": t, "repeats": k})
        log(out["icecolumn"][-1])
    # fixed cost per ic.run call: the same configuration over one hour (two output records)
    short = icecolumn_side.P1Case(prob)
    short.forcing = icecolumn_side.constant_forcing(1.0 / 24.0, prob.surface_temperature)
    cfg = icecolumn_side.p1_config(8, 1e-3, prob)
    kw = {"profile": short.profile} if short.profile is not None else {}
    _, fixed, _ = timed(lambda: icecolumn_side.ic.run(short.forcing, cfg, **kw), rep, bud)
    return {"runs": out, "calls": calls, "icecolumn_warmup_s": warm, "icecolumn_one_hour_run_s": fixed, "icecolumn_initial_profile": case.initial_profile,
            "exact_thickness_m": {"day_1": float(prob.thickness(prob.t_start)), "day_31": float(prob.thickness(31 * 86400.0)),
                                  "day_61": float(prob.thickness(prob.t_end))},
            "lambda": prob.lam}


def p1_summary(p1: dict, lad, log) -> dict:
    runs = p1["runs"]
    plain = {code: cheapest(r) for code, r in runs.items()}
    best_err = {code: min(x["error"] for x in r) for code, r in runs.items()}
    # finalists: the cheapest tolerance-robust settings at 0.1 % of each code, timed again interleaved
    finalists = {}
    for code, rows in runs.items():
        ok = sorted((r for r in rows if tolerance_robust(rows, r)), key=lambda r: r["time_s"])
        for r in ok[:lad["finalists"]]:
            finalists[(code, r["setting"])] = r
    timing = interleaved_timing(list(finalists), p1["calls"], lad["rounds"], lad["per_round"], log)
    final_rows = [{"code": c, "setting": st, "error": finalists[(c, st)]["error"], "time_s": t, "repeats": k,
                   "cpu_s": cpu} for (c, st), (t, k, cpu) in timing.items()]
    for r in final_rows:
        log(r)
    best = {code: min((r for r in final_rows if r["code"] == code), key=lambda r: r["time_s"], default=None)
            for code in runs}
    orders = {}
    ex = {x["cells"]: x["error"] for x in runs["explicit"]}
    ns = lad["explicit_p1_order"]
    orders["explicit"] = dict(zip(("order", "pairwise"), fit_order(ns, [ex[n] for n in ns])), n=ns, errors=[ex[n] for n in ns])
    for method in mol_bdf.METHODS:
        key = f"solve_ivp_{method}"
        tight = min(lad["mol_p1_rtol"])
        e = {x["intervals"]: x["error"] for x in runs[key] if x["rtol"] == tight}
        ms = lad["mol_p1_order"]
        orders[key] = dict(zip(("order", "pairwise"), fit_order(ms, [e[m] for m in ms])), n=ms, errors=[e[m] for m in ms],
                           rtol=tight)
    for rtol, name in ((lad["ic_p1_order_rtol"], "icecolumn"), (1e-3, "icecolumn_default_rtol")):
        e = {x["layers"]: x["error"] for x in runs["icecolumn"] if x["rtol"] == rtol}
        ns = lad["ic_p1_order"]
        orders[name] = dict(zip(("order", "pairwise"), fit_order(ns, [e[n] for n in ns])), n=ns, errors=[e[n] for n in ns],
                            rtol=rtol)
    ice = best["icecolumn"]

    def ratio(b, key="time_s"):
        return None if (b is None or ice is None) else b[key] / ice[key]

    by_method = {m: ratio(best[f"solve_ivp_{m}"]) for m in mol_bdf.METHODS}
    ivp = [(best[f"solve_ivp_{m}"]["time_s"], m) for m in mol_bdf.METHODS if best[f"solve_ivp_{m}"] is not None]
    ivp_method = min(ivp)[1] if ivp else None

    def slim(d):
        return {c: (None if b is None else {k: b[k] for k in ("setting", "error", "time_s", "cpu_s") if k in b})
                for c, b in d.items()}

    return {
        "peer_ratio_explicit": ratio(best["explicit"]),
        "peer_ratio_bdf": by_method[ivp_method] if ivp_method else None,
        "peer_ratio_bdf_method": ivp_method,
        "peer_ratio_by_method": by_method,
        "peer_ratio_explicit_cpu": ratio(best["explicit"], "cpu_s"),
        "peer_ratio_bdf_cpu": ratio(best[f"solve_ivp_{ivp_method}"], "cpu_s") if ivp_method else None,
        "order_explicit": orders["explicit"]["order"],
        "order_bdf": orders[f"solve_ivp_{ivp_method or 'BDF'}"]["order"],
        "order_icecolumn": orders["icecolumn"]["order"],
        "orders": orders,
        "time_at_target_s": slim(best),
        "time_at_target_plain_s": slim(plain),
        "final_timing": final_rows,
        "best_error": best_err,
    }


# ------------------------------------------------------------------------------------------ P2
def p2_runs(lad, log) -> dict:
    prob = Mushy()
    rep, bud = lad["repeats"], lad["budget_s"]
    n_ref, rtol_ref = lad["p2_reference"]
    t0 = time.perf_counter()
    ref = mol_bdf.solve_p2(n_ref, rtol_ref, "LSODA", prob)
    t_ref = time.perf_counter() - t0
    hs_ref = ref["h"]
    seq = []
    for n in lad["p2_self"]:
        seq.append((n, mol_bdf.solve_p2(n, rtol_ref, "LSODA", prob)["h"]))
    seq.append((n_ref, hs_ref))
    last = [float(h[-1]) for _, h in seq]
    diffs = [abs(last[i + 1] - last[i]) for i in range(len(last) - 1)]
    p_obs = math.log(diffs[-2] / diffs[-1]) / math.log(2.0) if len(diffs) >= 2 and diffs[-1] > 0 else None
    ref_err = None
    if p_obs is not None and p_obs > 0:
        ref_err = diffs[-1] / (2.0 ** p_obs - 1.0) / last[-1]
    reference = {"code": "solve_ivp_LSODA", "cells": n_ref, "rtol": rtol_ref, "depth_m": prob.depth, "time_s": t_ref,
                 "solid_thickness_day30_m": float(hs_ref[0]), "solid_thickness_day60_m": float(hs_ref[-1]),
                 "bottom_liquid_fraction": ref["bottom_liquid_fraction"],
                 "self_convergence": {"cells": [n for n, _ in seq], "solid_thickness_day60_m": last,
                                      "max_rel_difference_to_reference": [prob.error(h, hs_ref) for _, h in seq],
                                      "observed_order": p_obs, "estimated_reference_error": ref_err}}
    log({"code": "P2 reference", "setting": f"{n_ref} cells, LSODA rtol {rtol_ref:g}", "error": ref_err or float("nan"),
         "time_s": t_ref, "repeats": 1})

    out = {"explicit": [], "solve_ivp_BDF": [], "solve_ivp_LSODA": []}
    explicit_enthalpy.solve_p2(10, prob=prob)
    for n in lad["explicit_p2"]:
        res, t, k = timed(lambda: explicit_enthalpy.solve_p2(n, prob=prob), rep, bud)
        out["explicit"].append({"code": "explicit", "setting": f"{n} cells", "cells": n,
                                "error": prob.error(res["h"], hs_ref), "time_s": t, "repeats": k})
        log(out["explicit"][-1])
    for method in mol_bdf.METHODS:
        key = f"solve_ivp_{method}"
        mol_bdf.solve_p2(10, 1e-4, method, prob)
        for n in lad["mol_p2_n"]:
            for rtol in lad["mol_p2_rtol"]:
                res, t, k = timed(lambda: mol_bdf.solve_p2(n, rtol, method, prob), rep, bud)
                out[key].append({"code": key, "setting": f"{n} cells, rtol {rtol:g}", "cells": n, "rtol": rtol,
                                 "error": prob.error(res["h"], hs_ref), "time_s": t, "repeats": k})
                log(out[key][-1])

    near = {}
    for km in ("parallel_yen1991", "constant"):
        case = icecolumn_side.P2Case(prob, conductivity_model=km)
        case.run(10, 1e-3)
        rows = []
        for n in lad["ic_p2_layers"]:
            res, t, k = timed(lambda: case.run(n, lad["ic_p2_rtol"]), rep, bud)
            rows.append({"layers": n, "rtol": lad["ic_p2_rtol"], "time_s": t, "repeats": k,
                         "solid_thickness_day30_m": float(res["h"][0]), "solid_thickness_day60_m": float(res["h"][-1]),
                         "tracked_thickness_day60_m": float(res["tracked_thickness"][-1]), "h": res["h"]})
        finest = rows[-1]["h"]
        for r in rows:
            r["max_rel_difference_to_finest"] = prob.error(r["h"], finest)
            r["max_rel_difference_to_peer_reference"] = prob.error(r["h"], hs_ref)
            del r["h"]
        d60 = [r["solid_thickness_day60_m"] for r in rows]
        dd = [abs(d60[i + 1] - d60[i]) for i in range(len(d60) - 1)]
        p = math.log(dd[-2] / dd[-1]) / math.log(2.0) if len(dd) >= 2 and dd[-1] > 0 else None
        extrap = None
        if p is not None and p > 0:  # Richardson extrapolation of h_s(60 d) from the two finest runs
            extrap = d60[-1] + (d60[-1] - d60[-2]) / (2.0 ** p - 1.0)
            for r in rows:
                r["rel_difference_day60_to_extrapolated"] = r["solid_thickness_day60_m"] / extrap - 1.0
        near[km] = {"note": "NOT the same problem: icecolumn's own liquidus and this conductivity model",
                    "conductivity_model": km, "runs": rows, "observed_order_day60": p,
                    "extrapolated_solid_thickness_day60_m": extrap}
        for r in rows:
            log({"code": f"icecolumn nearest ({km})", "setting": f"{r['layers']} layers, rtol {r['rtol']:g}",
                 "error": r["max_rel_difference_to_finest"], "time_s": r["time_s"], "repeats": r["repeats"]})
    best = {code: cheapest(r) for code, r in out.items()}
    return {"reference": reference, "runs": out,
            "time_at_target_s": {c: (None if b is None else {"setting": b["setting"], "error": b["error"], "time_s": b["time_s"]})
                                 for c, b in best.items()},
            "icecolumn_nearest_problem": near}


# ------------------------------------------------------------------------------------- driver
def _machine() -> dict:
    import scipy

    import icecolumn as ic

    return {"cores": os.cpu_count(), "python": platform.python_version(), "numpy": np.__version__,
            "scipy": scipy.__version__, "icecolumn": ic.__version__, "platform": platform.platform()}


def _fmt_row(r) -> str:
    err = r["error"]
    e = "n/a" if err is None or not math.isfinite(err) else f"{100 * err:.4f} %"
    return f"  {r['code']:<34} {r['setting']:<30} {e:>12} {1e3 * r['time_s']:>11.2f} ms  x{r['repeats']}"


def measure(quick: bool = False, log=None) -> dict:
    """Run the whole comparison; return the figures (keys in the module docstring)."""
    lad = QUICK if quick else FULL
    log = log or (lambda row: None)
    p1 = p1_runs(lad, log)
    summary = p1_summary(p1, lad, log)
    del p1["calls"]
    p2 = p2_runs(lad, log)
    return {"quick": bool(quick), "target_error": TARGET, "machine": _machine(), **summary, "p1": p1, "p2": p2}


def _print_report(res: dict) -> None:
    print("\nP1 fresh-water Neumann problem, 60 days; error = max |h/h_exact - 1| over days 31-61")
    print(f"  {'code':<34} {'setting':<30} {'error':>12} {'median wall':>14}")
    for code, rows in res["p1"]["runs"].items():
        for r in rows:
            print(_fmt_row(r))
    print("\n  plain cheapest ladder setting with error <= 0.1 % (ladder medians):")
    for code, b in res["time_at_target_plain_s"].items():
        print(f"    {code:<20} " + ("not reached" if b is None else
                                    f"{b['setting']:<30} {100 * b['error']:.4f} %  {1e3 * b['time_s']:.2f} ms"))
    print("\n  finalists (tolerance-robust at 0.1 %), timed again in interleaved rounds:")
    for r in res["final_timing"]:
        print("  " + _fmt_row(r) + f"   cpu {1e3 * r['cpu_s']:.2f} ms")
    print("\n  time at 0.1 % (P1; cheapest finalist per code):")
    for code, b in res["time_at_target_s"].items():
        if b is None:
            print(f"    {code:<20} not reached; best error {100 * res['best_error'][code]:.4f} %")
        else:
            print(f"    {code:<20} {b['setting']:<30} {100 * b['error']:.4f} %  {1e3 * b['time_s']:.2f} ms")

    def show(x):
        return "n/a" if x is None else f"{x:.2f}"

    print(f"\n  peer_ratio_explicit = {show(res['peer_ratio_explicit'])}   "
          f"peer_ratio_bdf = {show(res['peer_ratio_bdf'])} ({res['peer_ratio_bdf_method']}; by method: "
          + ", ".join(f"{m} {show(v)}" for m, v in res["peer_ratio_by_method"].items()) + ")")
    print(f"  CPU-time ratios: explicit {show(res['peer_ratio_explicit_cpu'])}, solve_ivp {show(res['peer_ratio_bdf_cpu'])}")
    print("  convergence orders (P1, in cells / intervals / layers):")
    for code, o in res["orders"].items():
        pw = ", ".join("n/a" if p is None else f"{p:.2f}" for p in o["pairwise"])
        errs = " / ".join(f"{100 * e:.4f}" for e in o["errors"])
        extra = f", rtol {o['rtol']:g}" if "rtol" in o else ""
        print(f"    {code:<24} order {show(o['order'])}  (pairwise {pw}; errors {errs} % at "
              f"{'/'.join(str(n) for n in o['n'])}{extra})")

    p2 = res["p2"]
    ref = p2["reference"]
    sc = ref["self_convergence"]
    print(f"\nP2 salty mushy layer, linear liquidus, no drainage, 60 days; error = max |h_s/h_s,ref - 1| over days 30-60")
    print(f"  reference: {ref['code']} {ref['cells']} cells over {ref['depth_m']} m, rtol {ref['rtol']:g} "
          f"({ref['time_s']:.1f} s); h_s(30 d) = {ref['solid_thickness_day30_m']:.6f} m, "
          f"h_s(60 d) = {ref['solid_thickness_day60_m']:.6f} m")
    print("  self-convergence h_s(60 d): " + ", ".join(f"{n}: {h:.7f} m" for n, h in zip(sc["cells"], sc["solid_thickness_day60_m"]))
          + f"; observed order {show(sc['observed_order'])}; estimated reference error "
          + ("n/a" if sc["estimated_reference_error"] is None else f"{100 * sc['estimated_reference_error']:.5f} %"))
    print(f"  {'code':<34} {'setting':<30} {'error':>12} {'median wall':>14}")
    for code, rows in p2["runs"].items():
        for r in rows:
            print(_fmt_row(r))
    print("\n  cheapest setting at 0.1 % (P2):")
    for code, b in p2["time_at_target_s"].items():
        print(f"    {code:<20} " + ("not reached" if b is None else
                                    f"{b['setting']:<30} {100 * b['error']:.4f} %  {1e3 * b['time_s']:.2f} ms"))
    print("\n  icecolumn on the NEAREST EQUIVALENT problem (its own liquidus; not the same problem as P2):")
    for km, near in p2["icecolumn_nearest_problem"].items():
        ex = near["extrapolated_solid_thickness_day60_m"]
        print(f"    conductivity_model = {km}; observed order (h_s at 60 d) {show(near['observed_order_day60'])}; "
              f"extrapolated h_s(60 d) = " + ("n/a" if ex is None else f"{ex:.5f} m") + " (P2 peer reference "
              f"{ref['solid_thickness_day60_m']:.5f} m)")
        for r in near["runs"]:
            print(f"      {r['layers']:>4} layers: h_s(60 d) = {r['solid_thickness_day60_m']:.5f} m "
                  f"(tracked base {r['tracked_thickness_day60_m']:.3f} m), vs finest {100 * r['max_rel_difference_to_finest']:.3f} %, "
                  f"vs P2 peer reference {100 * r['max_rel_difference_to_peer_reference']:.2f} %, "
                  + (f"h_s(60 d) vs extrapolated {100 * r['rel_difference_day60_to_extrapolated']:+.3f} %, "
                     if "rel_difference_day60_to_extrapolated" in r else "") + f"{1e3 * r['time_s']:.1f} ms")
    m = res["machine"]
    print(f"\nmachine: {m['cores']} cores, Python {m['python']}, numpy {m['numpy']}, scipy {m['scipy']}, "
          f"icecolumn {m['icecolumn']}; medians of repeats; icecolumn warm-up {res['p1']['icecolumn_warmup_s']:.1f} s "
          f"(excluded); initial P1 profile in icecolumn: {res['p1']['icecolumn_initial_profile']}; "
          f"icecolumn fixed cost (a one-hour run, 8 layers): {1e3 * res['p1']['icecolumn_one_hour_run_s']:.2f} ms")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--json", type=Path, help="write the figures to this JSON file")
    ap.add_argument("--quick", action="store_true", help="short ladders (seconds, for tests)")
    ap.add_argument("--overwrite", action="store_true", help="replace an existing --json file")
    ap.add_argument("--verbose", action="store_true", help="print every run as it finishes (stderr)")
    args = ap.parse_args(argv)
    if args.json is not None and args.json.exists() and not args.overwrite:
        print(f"{args.json}: exists; not overwritten (give --overwrite)", file=sys.stderr)
        return 2

    def log(row):
        if args.verbose:
            print(_fmt_row(row), file=sys.stderr, flush=True)

    res = measure(quick=args.quick, log=log)
    _print_report(res)
    if args.json is not None:
        tmp = args.json.with_name(args.json.name + ".tmp")
        tmp.write_text(json.dumps(res, indent=1, default=float))
        tmp.replace(args.json)
        print(f"wrote {args.json}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
