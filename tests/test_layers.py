"""The package's layers import only downwards (the map in DEVELOPERS.md).

Reads every module's imports (top level and inside functions) with ``ast`` and checks each
against the layer map below; a new arrow that runs back up fails here, naming the file and line.
Common practice: an architecture kept by a test, not only by a diagram.
"""

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "aligner"

BASE = {"errors", "checks", "config"}
#: layer -> the layers it may import (besides itself)
ALLOWED = {
    "errors": set(),
    "checks": {"errors"},
    "config": {"errors", "checks"},
    "kernels": set(),
    "core": BASE | {"kernels"},
    "io": BASE | {"core"},
    "priors": BASE | {"core", "kernels", "io"},
    "datasets": BASE | {"core", "kernels", "io", "priors"},
    "pipeline": BASE | {"core", "io", "priors"},
    "analysis": BASE | {"core", "kernels", "io", "priors", "pipeline"},
    "engines": BASE | {"core", "kernels", "io", "pipeline"},
    "render": BASE | {"io", "analysis"},
    "cli": BASE | {"core", "io", "priors", "datasets", "pipeline", "analysis", "render", "engines"},
    "__main__": {"cli"},  # the command's entry point: it loads the command line, nothing else
}


def _layer(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "__init__"


def _imports(path: Path):
    """(line, imported aligner module) for every import of the package in ``path``."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module == "aligner":
                names = {a.name for a in node.names}
                if names != {"__version__"}:  # the version string is the one thing taken from the top
                    yield node.lineno, "aligner"
            elif node.module.startswith("aligner."):
                yield node.lineno, node.module
        elif isinstance(node, ast.ImportFrom) and node.level:
            yield node.lineno, "<relative import>"
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("aligner"):
                    yield node.lineno, a.name


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE.parent).with_suffix("")
        name = ".".join(rel.parts)
        if name.endswith(".__init__"):
            name = name[: -len(".__init__")]
        yield name, path


@pytest.mark.parametrize("module, path", list(_modules()), ids=lambda v: str(v) if isinstance(v, str) else "")
def test_imports_point_down(module, path):
    layer = _layer(module)
    if layer == "__init__":  # the public API re-exports lazily, by name
        return
    bad = []
    for line, target in _imports(path):
        if target == "<relative import>":
            bad.append(f"{path.name}:{line} uses a relative import (the layer map reads absolute ones)")
            continue
        to = _layer(target)
        if to != layer and to not in ALLOWED[layer]:
            bad.append(f"{path.name}:{line} ({layer}) imports {target} ({to})")
    assert not bad, "\n".join(bad)


def test_every_layer_is_in_the_map():
    layers = {_layer(m) for m, _ in _modules()} - {"__init__"}
    assert layers <= set(ALLOWED), sorted(layers - set(ALLOWED))


def test_the_command_line_starts_without_the_numerical_stack():
    # Common practice for a CLI: importing the app must not import numpy, pandas, scipy or numba,
    # so that --help and an early error exit are quick. Run in a fresh interpreter.
    import subprocess
    import sys

    code = ("import sys, aligner.cli; heavy = [m for m in ('numpy', 'pandas', 'scipy', 'numba', 'matplotlib', "
            "'dask', 'distributed') "
            "if m in sys.modules]; print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "", f"importing aligner.cli loads {out.stdout.strip()}"


def test_the_pipeline_imports_no_scipy_matrices():
    # Regression guard (measured: importing scipy.sparse and its graph module cost every run about
    # 0.15 s): a run makes no scipy matrix (its kernels work on CSR arrays), so importing the
    # pipeline must not import scipy.sparse; the paths that do make one import it where they do.
    import subprocess
    import sys

    code = "import sys, aligner.pipeline; print('scipy.sparse' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False", "importing aligner.pipeline loads scipy.sparse"
