"""The kernels' entry points (aligner.kernels.options): every compiled kernel is declared with
OUTER, every helper only kernels call with ``inner``, and an ``inner`` helper stays callable from
Python (numba would otherwise crash the interpreter on a helper compiled without a Python entry
point). Common practice: a convention kept by a test, not only by a docstring."""

import ast
from pathlib import Path

import numpy as np

KERNELS = Path(__file__).resolve().parents[2] / "aligner" / "kernels"


def _decorated():
    """(file, function, decorator source) for every decorated top-level function of the kernels."""
    for path in sorted(KERNELS.glob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in tree.body:
            if isinstance(node, ast.FunctionDef):
                for deco in node.decorator_list:
                    yield path.name, node.name, ast.unparse(deco)


def test_every_kernel_declares_its_entry_points():
    bad = [f"{f}:{name} ({deco})" for f, name, deco in _decorated()
           if deco.startswith("numba.njit") and "**OUTER" not in deco]
    assert not bad, "kernels without **OUTER: " + ", ".join(bad)
    assert any(deco == "inner" for _, _, deco in _decorated())


def test_an_inner_helper_runs_from_python_as_compiled():
    # Reference: union-find's root with path halving, worked by hand on a 4-node chain 3 -> 2 -> 1 -> 0
    from aligner.kernels.scoring import _root, largest_component

    parent = np.array([0, 0, 1, 2])
    assert _root(parent, 3) == 0 and parent.tolist() == [0, 0, 1, 1]  # 3 now points to its grandparent
    # the compiled caller of the same helper: one component of 4 nodes and 3 edges
    u, v = np.array([0, 1, 2]), np.array([1, 2, 3])
    assert largest_component(u, v, np.ones(3, dtype=bool), 4) == (4, 3)
