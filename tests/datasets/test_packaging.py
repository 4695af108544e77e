"""The build configuration ships every subpackage and the one copy of the demo data."""

import tomllib
from pathlib import Path

from aligner.datasets.demo import SCENARIOS

ROOT = Path(__file__).resolve().parents[2]


def _setuptools():
    return tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]


def test_every_subpackage_is_listed():
    # pyproject.toml lists the packages by hand (so that demo_pairs/ can be mapped into the
    # package); a subpackage missing from the list would be missing from a wheel
    on_disk = {".".join(p.parent.relative_to(ROOT).parts) for p in (ROOT / "aligner").rglob("__init__.py")}
    listed = set(_setuptools()["packages"])
    assert on_disk - listed == set(), "add these to [tool.setuptools] packages in pyproject.toml"
    assert listed - on_disk == {"aligner.demo_pairs"} | {f"aligner.demo_pairs.{s}" for s in SCENARIOS}


def test_demo_pairs_is_shipped_from_the_top_level_directory():
    cfg = _setuptools()
    assert cfg["package-dir"] == {"aligner.demo_pairs": "demo_pairs"}
    assert not (ROOT / "aligner" / "demo_data").exists(), "the second copy of the demo data is gone"
    shipped = {p for s in SCENARIOS for g in cfg["package-data"][f"aligner.demo_pairs.{s}"]
               for p in (ROOT / "demo_pairs" / s).glob(g)}
    every = {p for p in (ROOT / "demo_pairs").rglob("*") if p.is_file()}
    assert shipped == every


def test_the_version_has_one_source():
    # the package's metadata takes its version from aligner.__version__ (what `aligner --version`
    # and summary.json print), so the two cannot drift apart
    from importlib.metadata import version

    import aligner

    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    assert "version" not in project and "version" in project["dynamic"]
    assert _setuptools()["dynamic"]["version"] == {"attr": "aligner.__version__"}
    assert version("aligner") == aligner.__version__
