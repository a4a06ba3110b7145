"""Benchmark of the core column model (prints figures; not a test).

Usage::

    python scripts/bench_core.py [--repeat 3]

Prints the in-process wall time of the bundled sample winter (single column, default
layers) with drainage off and on, the ratio, and layer-steps per second (one layer
advanced by one accepted step, all its Newton iterations included).
"""
from __future__ import annotations

import argparse
import time
from pathlib import Path

import icecolumn as ic

SAMPLE = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"


def bench(scheme: str, repeat: int) -> dict:
    forcing = ic.read_forcing(SAMPLE)
    cfg = ic.default_config().replace("drainage", scheme=scheme)
    t0 = time.perf_counter()
    ic.run(forcing, cfg)  # warm-up (numba cache load or compile)
    first = time.perf_counter() - t0
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        ds = ic.run(forcing, cfg)
        best = min(best, time.perf_counter() - t0)
    steps = ds.attrs["solver_steps_accepted"]
    layers = cfg.grid.layers
    return {"scheme": scheme, "first_call_s": first, "wall_s": best, "steps": steps,
            "rejected": ds.attrs["solver_steps_rejected"], "layers": layers,
            "newton_per_step": ds.attrs["solver_newton_iterations"] / steps,
            "layer_steps_per_s": steps * layers / best, "end_thickness_m": float(ds.ice_thickness[-1])}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    rows = [bench("none", args.repeat), bench(ic.default_config().drainage.scheme, args.repeat)]
    print(f"sample winter: {SAMPLE.name}, {rows[0]['layers']} layers, best of {args.repeat}")
    print(f"{'drainage':24s} {'first call s':>12s} {'wall s':>8s} {'steps':>7s} {'rejected':>8s} "
          f"{'layer-steps/s':>14s} {'h_end m':>8s} {'Newton/step':>11s}")
    for r in rows:
        print(f"{r['scheme']:24s} {r['first_call_s']:12.2f} {r['wall_s']:8.3f} {r['steps']:7d} {r['rejected']:8d} "
              f"{r['layer_steps_per_s']:14.3e} {r['end_thickness_m']:8.3f} {r['newton_per_step']:11.2f}")
    print(f"drainage cost: {rows[1]['wall_s'] / rows[0]['wall_s']:.2f} x the run time without drainage")


if __name__ == "__main__":
    main()
