"""The benchmark script runs (tiny configuration) and writes finite, positive figures."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent


def test_bench_tiny_json(tmp_path):
    out = tmp_path / "tmp.json"
    proc = subprocess.run([sys.executable, str(REPO / "scripts" / "bench.py"), "--tiny", "--json", str(out)],
                          capture_output=True, text=True, cwd=tmp_path,
                          env={**__import__("os").environ, "PYTHONPATH": str(REPO)}, timeout=900)
    assert proc.returncode == 0, proc.stderr
    assert "layer-steps/s" in proc.stdout
    res = json.loads(out.read_text())
    assert res["tiny"] is True
    for key in ("single_column_winter_s", "batch_vs_loop_ratio", "warmup_s", "peak_memory_1024_gb_extrapolated"):
        assert isinstance(res[key], float) and math.isfinite(res[key]) and res[key] > 0, key
    for key in ("exponent_members", "exponent_layers"):  # slopes: finite (their sign is a measurement)
        assert isinstance(res[key], float) and math.isfinite(res[key]), key
    lsps = res["layer_steps_per_s"]
    assert isinstance(lsps, dict) and len(lsps) == 3
    assert all(k.isdigit() for k in lsps)
    assert all(math.isfinite(v) and v > 0 for v in lsps.values())
