"""Build hook: compile icecolumn's kernel into the wheel's numba cache.

``pip install .`` builds a wheel; after the package's files are copied to the build folder, this
runs ``python -m icecolumn.kernel.warmup`` on them once, so the compiled code (``__pycache__/*.nbi``
and ``*.nbc``, stamped with a hash of the sources, see icecolumn/_jit.py) is installed with the
package and the first run on this machine starts from it.  The cache is specific to the machine's
CPU and numba version; elsewhere numba ignores it and compiles on first use.  Set
``ICECOLUMN_SKIP_COMPILE=1`` to build without it; editable installs never compile here.
"""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from setuptools.command.build_py import build_py


class BuildWithKernelCache(build_py):
    """``build_py`` that compiles the kernel into the built package's ``__pycache__`` folders."""

    def run(self):
        super().run()
        if getattr(self, "editable_mode", False) or os.environ.get("ICECOLUMN_SKIP_COMPILE"):
            return
        root = Path(self.build_lib).resolve()
        env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"}
        # keep the build environment's own path (pip's isolated build puts its packages there)
        env["PYTHONPATH"] = os.pathsep.join([str(root)] + ([env["PYTHONPATH"]] if env.get("PYTHONPATH") else []))
        try:
            out = subprocess.run([sys.executable, "-m", "icecolumn.kernel.warmup"], cwd=root, env=env,
                                 capture_output=True, text=True, timeout=1800)
        except (OSError, subprocess.TimeoutExpired) as err:  # the package still works: it compiles on first use
            print(f"icecolumn: kernel not precompiled ({err})")
            return
        print(out.stdout.strip() or out.stderr.strip()[-500:])

    def get_outputs(self, include_bytecode=True):
        # the compiled cache files belong to the package (so that the wheel records them)
        files = list(super().get_outputs(include_bytecode))
        root = Path(self.build_lib)
        files += [str(p) for p in root.glob("icecolumn/**/__pycache__/*.nb[ic]")]
        return files
