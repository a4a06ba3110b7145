"""Each compiled function is compiled once: compiled callers pass it one numba type per argument.

A Python literal (``0``, ``True``) passed from compiled code is its own numba type
(``Literal[int](0)``, ``Literal[bool](True)``), so a callee that one compiled caller gives ``0``
and another an ``int64`` variable (or ``True`` at one site and ``False`` at another) is compiled
twice, which lengthens the cold compile (DEVELOPERS.md, "The compiled kernel").  This reads the
source (a cold compile to count signatures takes about 45 s): for every function decorated with
``jit``, the arguments its compiled callers pass at each position must be either the same
literal everywhere or never a literal.
"""
from __future__ import annotations

import ast
from collections import defaultdict
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "icecolumn"


def _is_jit(decorator) -> bool:
    target = decorator.func if isinstance(decorator, ast.Call) else decorator
    return isinstance(target, ast.Name) and target.id == "jit"


def _kind(arg):
    if isinstance(arg, ast.Constant) and isinstance(arg.value, (bool, int)):
        return ("literal", type(arg.value).__name__, arg.value)
    return ("typed",)


def _package_trees():
    return {str(p.relative_to(PACKAGE.parent)): ast.parse(p.read_text()) for p in sorted(PACKAGE.rglob("*.py"))}


def _argument_kinds(trees):
    jitted = {node.name for t in trees.values() for node in ast.walk(t)
              if isinstance(node, ast.FunctionDef) and any(_is_jit(d) for d in node.decorator_list)}
    sites = defaultdict(dict)  # (callee, argument position) -> {kind of argument: first call site}
    for path, tree in trees.items():
        for fn in ast.walk(tree):
            if not (isinstance(fn, ast.FunctionDef) and fn.name in jitted):
                continue
            for call in ast.walk(fn):
                if isinstance(call, ast.Call) and isinstance(call.func, ast.Name) and call.func.id in jitted:
                    for pos, arg in enumerate(call.args):
                        sites[(call.func.id, pos)].setdefault(_kind(arg), f"{path}:{call.lineno}")
    return jitted, sites


def _violations(trees):
    _, sites = _argument_kinds(trees)
    bad = []
    for (callee, pos), by_kind in sites.items():
        if len(by_kind) > 1 and any(k[0] == "literal" for k in by_kind):
            where = ", ".join(f"{k[2] if k[0] == 'literal' else 'typed'} at {s}" for k, s in by_kind.items())
            bad.append(f"{callee} argument {pos}: {where}")
    return bad


def test_the_scan_sees_the_kernel():
    jitted, sites = _argument_kinds(_package_trees())
    callees = {callee for callee, _pos in sites}
    # the kernel has over a hundred compiled functions and calls most of them from compiled code
    assert len(jitted) > 100 and len(callees) > 50
    assert {"rhs", "forcing_at", "divergence"} <= callees


def test_no_compiled_callee_gets_a_literal_and_another_type():
    bad = _violations(_package_trees())
    assert not bad, "compiled twice (pass np.int64(...) / np.bool_(...)):\n" + "\n".join(bad)


def test_the_check_reports_mixed_calls_only():
    head = "@jit\ndef f(a, b):\n    return a\n\n"
    mixed = {"m.py": ast.parse(head + "@jit\ndef g(x):\n    return f(x, 0) + f(x, x)\n")}
    flags = {"m.py": ast.parse(head + "@jit\ndef g(x):\n    return f(x, True) + f(x, False)\n")}
    same = {"m.py": ast.parse(head + "@jit\ndef g(x):\n    return f(x, 3) + f(x, 3)\n")}
    python_caller = {"m.py": ast.parse(head + "def g(x):\n    return f(x, 0)\n\n@jit\ndef h(x):\n    return f(x, x)\n")}
    assert len(_violations(mixed)) == 1 and "m.py:7" in _violations(mixed)[0]
    assert len(_violations(flags)) == 1
    assert _violations(same) == [] and _violations(python_caller) == []
