"""Dead-code check: vulture over the package finds no unused code.

Confidence 60 % (vulture's lowest level) also reports unused functions, classes,
methods, attributes and variables, not only unused imports (90 %) and unreachable code
(100 %).  Names used only from outside the package's code (typer callbacks, fields read
by reflection, public functions checked in the tests) are listed, with their users, in
tests/vulture_whitelist.py.
"""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
MIN_CONFIDENCE = 60


def test_vulture_finds_no_dead_code():
    result = subprocess.run(
        [sys.executable, "-m", "vulture", "icecolumn", "tests/vulture_whitelist.py",
         "--min-confidence", str(MIN_CONFIDENCE)],
        cwd=ROOT, capture_output=True, text=True)
    assert result.returncode == 0, "vulture found unused code:\n" + result.stdout + result.stderr
