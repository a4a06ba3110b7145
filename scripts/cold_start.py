"""Cold start of an installed icecolumn: fresh venv, ``pip install <repo>``, first and second demo.

Usage::

    python scripts/cold_start.py [--repo PATH] [--json FILE] [--keep]

(also run by ``python scripts/bench.py --cold``).  Steps, each timed on this machine:

1. ``python -m venv`` in a new temporary folder, with the base interpreter of the running Python
   (``venv_s``).
2. ``<venv>/bin/python -m pip install <repo>``: a normal, non-editable install with the pip
   settings of this machine (its index and find-links come from the pip configuration, as for
   any user).  The wheel build runs the project's build hook (``_build/icecolumn_build.py``),
   which compiles the kernel into the package's numba cache (``install_s``; dependencies
   included).
3. ``icecolumn demo`` in an empty temporary working folder (``cold_start_s``).  The numba cache is
   empty apart from what the install put into the package: ``NUMBA_CACHE_DIR`` is unset (so numba
   uses the package's ``__pycache__`` folders, which are writable in the new venv) and matplotlib
   gets an empty configuration folder (``MPLCONFIGDIR``), as for a new user.
4. A second ``icecolumn demo`` in another empty folder (``second_demo_s``), to show that the cache
   is reused: the number of cache files (``*.nbi``/``*.nbc``) of the installed package is counted
   after the install and after each demo (``cache_files``), and the demos' stderr is checked for
   the compile notice.

The temporary folder is removed afterwards unless ``--keep``.  Each figure is one measurement (a
cold start cannot be repeated in the same venv).
"""
from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent


def _cache_files(venv: Path) -> int:
    """Number of numba cache files under the installed package."""
    return sum(1 for _ in venv.glob("lib/python*/site-packages/icecolumn/**/__pycache__/*.nb[ic]"))


def _timed(cmd, cwd, env, timeout):
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, cwd=cwd, env=env, capture_output=True, text=True, timeout=timeout)
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        tail = (proc.stderr or proc.stdout).strip().splitlines()[-5:]
        raise RuntimeError(f"{' '.join(map(str, cmd))} failed ({proc.returncode}): " + " | ".join(tail))
    return wall, proc


def _compile_notice(text: str) -> bool:
    """True if the demo said on stderr that it compiles the kernel first."""
    return "compiling the numerical kernel" in text  # icecolumn.cli_common.COMPILE_NOTICE


def measure(repo: Path = REPO, keep: bool = False, log=print) -> dict:
    """Run the four steps of the module docstring; return the figures as a dict."""
    repo = Path(repo).resolve()
    base = Path(getattr(sys, "_base_executable", sys.executable))
    tmp = Path(tempfile.mkdtemp(prefix="icecolumn_cold_"))
    env = {k: v for k, v in os.environ.items()
           if k not in ("NUMBA_CACHE_DIR", "PYTHONPATH", "ICECOLUMN_SKIP_COMPILE", "VIRTUAL_ENV")}
    env["MPLCONFIGDIR"] = str(tmp / "mplconfig")
    venv = tmp / "venv"
    try:
        venv_s, _ = _timed([str(base), "-m", "venv", str(venv)], tmp, env, 600)
        log(f"cold start: venv {venv_s:.1f} s ({venv})")
        py = venv / "bin" / "python"
        env["PATH"] = str(venv / "bin") + os.pathsep + env.get("PATH", "")
        install_s, inst = _timed([str(py), "-m", "pip", "install", "--no-cache-dir", str(repo)], tmp, env, 3600)
        log(f"cold start: pip install {install_s:.1f} s")
        hook = [ln for ln in inst.stdout.splitlines() if "kernel compiled" in ln or "not precompiled" in ln]
        after_install = _cache_files(venv)
        demos = []
        for k in (1, 2):
            cwd = tmp / f"demo{k}"
            cwd.mkdir()
            wall, proc = _timed([str(venv / "bin" / "icecolumn"), "demo"], cwd, env, 1800)
            demos.append({"wall_s": wall, "compile_notice": _compile_notice(proc.stderr),
                          "cache_files_after": _cache_files(venv),
                          "files_written": sorted(p.name for p in (cwd / "icecolumn_demo").glob("*"))})
            log(f"cold start: demo {k} {wall:.1f} s")
        version = subprocess.run([str(py), "-c", "import icecolumn; print(icecolumn.__version__)"],
                                 capture_output=True, text=True, env=env, cwd=tmp).stdout.strip()
        return {
            "venv_s": venv_s,
            "install_s": install_s,
            "cold_start_s": demos[0]["wall_s"],
            "second_demo_s": demos[1]["wall_s"],
            "cache_files": {"after_install": after_install, "after_first_demo": demos[0]["cache_files_after"],
                            "after_second_demo": demos[1]["cache_files_after"]},
            "cache_reused": (demos[0]["cache_files_after"] == after_install
                             and demos[1]["cache_files_after"] == after_install
                             and not demos[0]["compile_notice"] and not demos[1]["compile_notice"]),
            "compile_notice": [d["compile_notice"] for d in demos],
            "build_hook_output": hook,
            "demo_files": demos[0]["files_written"],
            "installed_version": version,
            "python": str(base),
            "folder": str(tmp) if keep else None,
        }
    finally:
        if not keep:
            shutil.rmtree(tmp, ignore_errors=True)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repo", type=Path, default=REPO, help="Project folder to install (default: this one).")
    ap.add_argument("--json", type=Path, help="Also write the figures to this JSON file (not overwritten).")
    ap.add_argument("--keep", action="store_true", help="Keep the temporary venv and demo folders.")
    args = ap.parse_args(argv)
    if args.json is not None and args.json.exists():
        print(f"cold_start: {args.json} exists; choose another file", file=sys.stderr)
        return 2
    res = measure(args.repo, keep=args.keep)
    print(json.dumps({k: v for k, v in res.items() if k != "demo_files"}, indent=2))
    if args.json is not None:
        args.json.write_text(json.dumps(res, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
