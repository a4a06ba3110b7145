"""The one decorator for icecolumn's compiled functions: numba ``njit`` with a package-aware cache.

numba's own on-disk cache (``cache=True``) checks only the source file of the function it
compiled: a change in a helper module that the function calls (``phase.py`` under the kernel,
say) would not recompile the caller, and the cache would serve stale machine code.  The cache
used here stamps every entry with one hash over the source of all the package modules that
compiled code can reach (the modules that use this decorator and every package module they
import, found from their import statements), so a change in any of them invalidates every
entry.  Entries live where numba would put them (``NUMBA_CACHE_DIR`` if set, else
``__pycache__`` beside the module, or the user-wide numba cache directory if that is not
writable).
"""
from __future__ import annotations

import ast
import hashlib
from pathlib import Path

import numpy as np
from numba import njit
from numba.core import caching

_PACKAGE = Path(__file__).resolve().parent
_STAMP: str | None = None


def _package_imports(path: Path) -> set[Path]:
    """Package modules imported (relatively or as ``icecolumn.x``) by the module at ``path``."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    here = path.parent
    found: set[Path] = set()
    for node in ast.walk(tree):
        names: list[tuple[Path, str]] = []
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = here
                for _ in range(node.level - 1):
                    base = base.parent
            elif node.module and node.module.split(".")[0] == _PACKAGE.name:
                base = _PACKAGE.parent
            else:
                continue
            mod = node.module.split(".") if node.module else []
            names.append((base.joinpath(*mod), ""))
            names.extend((base.joinpath(*mod), a.name) for a in node.names)
        elif isinstance(node, ast.Import):
            names.extend((_PACKAGE.parent.joinpath(*a.name.split(".")), "") for a in node.names
                         if a.name.split(".")[0] == _PACKAGE.name)
        for base, name in names:
            target = base / name if name else base
            for cand in (target.with_suffix(".py"), target / "__init__.py"):
                if cand.is_file():
                    found.add(cand.resolve())
    return found


def compiled_sources() -> list[Path]:
    """Source files whose content stamps the cache: users of this decorator and what they import."""
    seeds = {p.resolve() for p in _PACKAGE.rglob("*.py")
             if "_jit import" in p.read_text(encoding="utf-8") and p.name != "_jit.py"}
    todo, seen = list(seeds), set(seeds)
    seen.add(Path(__file__).resolve())
    while todo:
        for dep in _package_imports(todo.pop()):
            if dep not in seen:
                seen.add(dep)
                todo.append(dep)
    return sorted(seen)


def source_stamp() -> str:
    """SHA-256 over the paths and contents of :func:`compiled_sources` (computed once)."""
    global _STAMP
    if _STAMP is None:
        h = hashlib.sha256()
        for p in compiled_sources():
            h.update(p.relative_to(_PACKAGE).as_posix().encode())
            h.update(b"\0")
            h.update(p.read_bytes())
        _STAMP = h.hexdigest()
    return _STAMP


def _class(*names):
    for name in names:
        cls = getattr(caching, name, None)
        if cls is not None:
            return cls
    raise ImportError(f"numba.core.caching has none of {names}")  # pragma: no cover


class _PackageStampMixin:
    def get_source_stamp(self):
        return source_stamp()


class _UserProvidedLocator(_PackageStampMixin, _class("UserProvidedCacheLocator", "_UserProvidedCacheLocator")):
    pass


class _InTreeLocator(_PackageStampMixin, _class("InTreeCacheLocator", "_InTreeCacheLocator")):
    pass


class _UserWideLocator(_PackageStampMixin, _class("UserWideCacheLocator", "_UserWideCacheLocator")):
    pass


class _CacheImpl(_class("CompileResultCacheImpl")):
    _locator_classes = [_UserProvidedLocator, _InTreeLocator, _UserWideLocator]


class _FunctionCache(caching.FunctionCache):
    _impl_class = _CacheImpl


def jit(func=None, **options):
    """``numba.njit`` with the package-stamped on-disk cache (use instead of ``njit(cache=True)``).

    Accepts numba's ``njit`` options (``parallel``, ``inline``, ...); ``cache`` must not be given.
    """
    if "cache" in options:
        raise TypeError("icecolumn._jit.jit always caches; do not pass cache=")

    def wrap(f):
        dispatcher = njit(**options)(f)
        dispatcher._cache = _FunctionCache(dispatcher.py_func)
        return dispatcher

    return wrap if func is None else wrap(func)


def is_ready(dispatcher) -> bool:
    """True if ``dispatcher`` has machine code in this process or a fresh entry in the on-disk
    cache (so that calling it will not compile); used to tell the user before a long first compile."""
    if dispatcher.signatures:
        return True
    try:
        return bool(dispatcher._cache._cache_file._load_index())
    except Exception:  # noqa: BLE001 - a cache we cannot read means a compile
        return False


def elementwise(loop, *values, leading=()):
    """``loop(*leading, x1, ..., xk, out)`` over the broadcast ``values`` as 1-D float64 arrays,
    returned in their broadcast shape: the numpy wrapper of a compiled loop that applies a
    compiled scalar function to every element (one call, not one per value)."""
    arrays = [np.asarray(v, dtype=np.float64) for v in values]
    if len(arrays) > 1:
        arrays = np.broadcast_arrays(*arrays)
    out = np.empty(arrays[0].shape)
    loop(*leading, *(a.ravel() for a in arrays), out.reshape(-1))  # out is C-contiguous: a view
    return out
