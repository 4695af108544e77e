"""The bundled demo scenarios: where their files are, and how they are made.

The one copy of the demo data is ``demo_pairs/`` at the top of the source tree. The build
configuration (``pyproject.toml``) ships that directory inside the package as
``aligner/demo_pairs/``, so an installed package finds it next to its modules; an editable
install or a source checkout finds it at the top of the tree. :func:`scenario_dir` looks in
both places.

The files are text written by the seeded generators :mod:`aligner.datasets.firefly` and
:mod:`aligner.datasets.registry`; :func:`scenario_files` returns that text (the scripts under
``scripts/data/`` write it, and a test checks that ``demo_pairs/`` equals it byte for byte).

This module imports nothing heavy at import time: the command line uses :func:`scenario_dir`.
"""

from __future__ import annotations

from pathlib import Path

from aligner.checks import check_choice
from aligner.errors import AlignerError

__all__ = ["SCENARIOS", "INPUT_FILES", "scenario_dir", "scenario_files", "stale_files", "write_scenario"]

#: the bundled scenarios, one directory of ``demo_pairs/`` each
SCENARIOS = ("firefly", "registry")

#: the files every scenario directory holds (the registry scenario also has labels_a/b.tsv)
INPUT_FILES = ("network_a.tsv", "network_b.tsv", "prior.tsv", "truth.tsv")

_PACKAGE = Path(__file__).resolve().parents[1]


def _roots() -> tuple[Path, ...]:
    """Where ``demo_pairs`` may be: shipped inside the package, or at the top of a source tree."""
    return _PACKAGE / "demo_pairs", _PACKAGE.parent / "demo_pairs"


def scenario_dir(name: str) -> Path:
    """The directory holding the files of demo scenario ``name``.

    Parameters
    ----------
    name : {"firefly", "registry"}
        The scenario.

    Returns
    -------
    pathlib.Path
        A directory with ``network_a.tsv``, ``network_b.tsv``, ``prior.tsv`` and ``truth.tsv``
        (and, for ``registry``, ``labels_a.tsv`` and ``labels_b.tsv``).

    Raises
    ------
    InvalidParameterError
        When ``name`` is not one of :data:`SCENARIOS`.
    AlignerError
        When the files are in neither place (a package installed without its data).
    """
    name = check_choice(name, "scenario", SCENARIOS)
    for root in _roots():
        folder = root / name
        if all((folder / f).is_file() for f in INPUT_FILES):
            return folder
    looked = " and ".join(str(r / name) for r in _roots())
    raise AlignerError(f"the files of the demo scenario {name!r} are missing: looked in {looked}; "
                       "reinstall the package")


def _generator(name: str):
    name = check_choice(name, "scenario", SCENARIOS)
    if name == "firefly":
        from aligner.datasets import firefly as module
    else:
        from aligner.datasets import registry as module
    return module


def scenario_files(name: str) -> dict[str, str]:
    """The text of every file of scenario ``name`` (data files and ``README.md``), from its seed.

    Returns a dict of file name to file text, in the order the files are written; ``name`` is
    one of :data:`SCENARIOS`.
    """
    module = _generator(name)
    files, stats = module.build()
    return {**files, "README.md": module.readme(stats)}


def stale_files(name: str, folder: str | Path) -> list[str]:
    """Names of the files of scenario ``name`` that are missing from ``folder`` or differ in a byte."""
    folder = Path(folder)
    return [f for f, text in scenario_files(name).items()
            if not (folder / f).is_file() or (folder / f).read_bytes() != text.encode("utf-8")]


def write_scenario(name: str, folder: str | Path) -> list[Path]:
    """Write every file of scenario ``name`` into ``folder`` (created if needed); the paths written."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for f, text in scenario_files(name).items():
        (folder / f).write_bytes(text.encode("utf-8"))
        written.append(folder / f)
    return written
