"""The on-disk cache of compiled code is invalidated by a change in any module compiled code uses.

numba's own cache checks only the file of the function it compiled; icecolumn._jit stamps every
entry with a hash over all package modules reachable from compiled code.  The end-to-end check
copies the package, compiles a kernel function that calls into another module, edits that other
module and runs again in a fresh process.
"""
from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import icecolumn
from icecolumn import _jit
from icecolumn import kernel as K

PKG = Path(icecolumn.__file__).resolve().parent


def test_stamp_covers_kernel_and_physics_helpers():
    names = {p.relative_to(PKG).as_posix() for p in _jit.compiled_sources()}
    for must in ("phase.py", "properties.py", "surface.py", "drainage.py", "constants.py", "ocean.py",
                 "kernel/stepper.py", "kernel/tendency.py", "kernel/layout.py", "_jit.py"):
        assert must in names, must
    assert "cli.py" not in names and "plotting.py" not in names  # I/O changes do not recompile
    assert K.run_serial._cache._impl.locator.get_source_stamp() == _jit.source_stamp()


SCRIPT = """
import numpy as np
from icecolumn.kernel.inputs import atmosphere
from icecolumn.kernel.layout import F, NFORCING, NPAR
fv = np.full(NFORCING, np.nan); fv[F.AIR] = -20.0; fv[F.CLOUD] = 0.5
print(repr(atmosphere(fv, np.zeros(NPAR))[1]))
"""


def _longwave(root: Path) -> float:
    env = {"PYTHONPATH": str(root), "PATH": "/usr/bin:/bin", "NUMBA_CACHE_DIR": ""}
    out = subprocess.run([sys.executable, "-c", SCRIPT], cwd=root, env=env, capture_output=True, text=True,
                         check=True)
    return float(out.stdout.strip().splitlines()[-1])


def test_edit_of_a_helper_module_recompiles_its_callers(tmp_path):
    root = tmp_path / "copy"
    shutil.copytree(PKG, root / "icecolumn", ignore=shutil.ignore_patterns("__pycache__", "*.nbi", "*.nbc"))
    first = _longwave(root)
    again = _longwave(root)  # from the cache
    assert again == first
    assert list((root / "icecolumn" / "kernel" / "__pycache__").glob("inputs.atmosphere*.nbi"))
    # change a constant of the physics module the kernel function calls (not the kernel file)
    surface = root / "icecolumn" / "surface.py"
    text = surface.read_text()
    assert "STEFAN_BOLTZMANN = 5.670374e-8" in text
    surface.write_text(text.replace("STEFAN_BOLTZMANN = 5.670374e-8", "STEFAN_BOLTZMANN = 2 * 5.670374e-8"))
    changed = _longwave(root)
    assert changed == 2.0 * first  # recompiled with the new constant, not the stale cache entry


def test_warmup_compiles_every_entry_point():
    # the package build runs this once (_build/icecolumn_build.py); afterwards no run compiles
    from icecolumn.kernel import needs_compile
    from icecolumn.kernel.warmup import compile_kernel

    assert compile_kernel(batch=True) >= 0.0
    assert not needs_compile(batch=False) and not needs_compile(batch=True)
    assert K.record_initial.signatures and K.run_parallel.signatures
