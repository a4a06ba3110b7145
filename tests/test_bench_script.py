"""The benchmark script runs (tiny configuration), writes finite, positive figures and does not
overwrite an existing JSON file."""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent


def _bench(tmp_path, *args):
    return subprocess.run([sys.executable, str(REPO / "scripts" / "bench.py"), *args],
                          capture_output=True, text=True, cwd=tmp_path,
                          env={**os.environ, "PYTHONPATH": str(REPO)}, timeout=900)


def _positive(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x) and x > 0


def test_bench_tiny_json_and_no_overwrite(tmp_path):
    out = tmp_path / "tmp.json"
    proc = _bench(tmp_path, "--tiny", "--json", str(out))
    assert proc.returncode == 0, proc.stderr
    assert "batch_speedup_per_core" in proc.stdout  # the table names its keys
    res = json.loads(out.read_text())
    assert res["tiny"] is True
    for key in ("peer_ratio_explicit", "peer_ratio_bdf", "batch_speedup_per_core", "newton_per_stage",
                "steps_per_winter", "single_column_winter_s", "warmup_s", "peak_memory_gb_1024",
                "fixed_cost_per_run_s"):
        assert _positive(res[key]), (key, res[key])
    assert isinstance(res["steps_per_winter"], int)
    # Newton: at least one iteration per stage; the stage count is the kernel's own counter
    assert res["newton_per_stage"] >= 1.0
    assert res["single"]["stage_solves"] >= res["steps_per_winter"]
    # the layer exponent is a slope: finite (its sign is a measurement), as are the fit's terms
    assert isinstance(res["layer_exponent"], float) and math.isfinite(res["layer_exponent"])
    fit = res["layer_fit"]
    for key in ("a_s", "b_s_per_layer"):
        assert isinstance(fit[key], float) and math.isfinite(fit[key]), key
    assert len(fit["time_per_step_s"]) == len(fit["layers"]) and all(_positive(t) for t in fit["time_per_step_s"])
    # the cold start is measured only with --cold
    assert res["cold_start_s"] is None and res["install_s"] is None and res["cold"] is None
    assert res["batch"]["cores_used"] >= 1 and "scaled linearly" in res["batch"]["loop_sampling"]
    assert res["memory"]["method"].startswith("measured at 4 members, extrapolated")
    assert res["machine"]["cores"] >= 1 and res["date"].endswith("Z")
    assert len(res["commit"]) == 40
    # the fixed cost is split into its two parts (inputs and kernel, the Dataset); a 1-hour run has two records
    fc = res["fixed_cost"]
    assert _positive(fc["simulate_s"]) and _positive(fc["to_dataset_s"]) and fc["output_times"] == 2
    # the kernel's share is timed inside simulate: positive, and the rest is what is left of run_s
    assert _positive(fc["kernel_s"]) and fc["outside_kernel_s"] == fc["run_s"] - fc["kernel_s"]
    # hourly records in both record modes: same number of records, steps counted by the kernel
    hw = res["hourly_output_winter"]
    assert hw["interpolated"]["records"] == hw["step_ends"]["records"] == 3 * 24 + 1
    for mode in ("interpolated", "step_ends"):
        assert _positive(hw[mode]["wall_s"]) and hw[mode]["steps_accepted"] >= 1
    # a record at every step end cannot take fewer steps than hourly records demand
    assert hw["step_ends"]["steps_accepted"] >= 3 * 24
    bw = res["batch_winter"]
    assert _positive(bw["batch_speedup_per_core"]) and bw["batch_members"] == 4 and bw["period_days"] == 3.0
    assert isinstance(res["peers"]["order_icecolumn"], float)

    # an existing file is kept: one line on stderr, exit status 2
    before = out.read_text()
    again = _bench(tmp_path, "--tiny", "--json", str(out))
    assert again.returncode == 2
    lines = again.stderr.strip().splitlines()
    assert len(lines) == 1 and "exists" in lines[0] and "--force" in lines[0]
    assert out.read_text() == before
