"""The bundled demo scenarios: one copy of the data (demo_pairs/), reproduced by its generators."""

import subprocess
import sys
from pathlib import Path

import pytest

from aligner.datasets import demo
from aligner.datasets.demo import INPUT_FILES, SCENARIOS, scenario_dir, scenario_files, stale_files
from aligner.errors import AlignerError, InvalidParameterError

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.parametrize("name", SCENARIOS)
def test_generators_reproduce_demo_pairs_byte_for_byte(name):
    # The files of demo_pairs/ are what the seeded generators write (common practice for generated
    # data kept in a repository: a check that they are current); after changing a generator, run
    # python scripts/data/make_demo.py
    folder = ROOT / "demo_pairs" / name
    files = scenario_files(name)
    assert set(INPUT_FILES) | {"README.md"} <= set(files)
    for f, text in files.items():
        assert (folder / f).read_bytes() == text.encode("utf-8"), f"demo_pairs/{name}/{f} is stale"
    assert stale_files(name, folder) == []


@pytest.mark.parametrize("name", SCENARIOS)
def test_scenario_dir_holds_the_one_copy(name):
    # whether found inside an installed package or at the top of the source tree, the files the
    # demo reads are those of demo_pairs/
    d = scenario_dir(name)
    assert d.is_dir() and d.name == name
    for f in INPUT_FILES:
        assert (d / f).read_bytes() == (ROOT / "demo_pairs" / name / f).read_bytes()


def test_scenario_dir_rejects_an_unknown_scenario():
    with pytest.raises(InvalidParameterError, match=r"scenario must be one of firefly, registry; got 'moths'") as e:
        scenario_dir("moths")
    assert e.value.param == "scenario"


def test_scenario_dir_says_where_it_looked(tmp_path, monkeypatch):
    monkeypatch.setattr(demo, "_roots", lambda: (tmp_path / "a", tmp_path / "b"))
    with pytest.raises(AlignerError, match="demo scenario 'firefly' are missing"):
        scenario_dir("firefly")


def test_stale_files_names_a_changed_file(tmp_path):
    demo.write_scenario("firefly", tmp_path)
    assert stale_files("firefly", tmp_path) == []
    (tmp_path / "truth.tsv").write_text("node_a\tnode_b\n")
    (tmp_path / "prior.tsv").unlink()
    assert stale_files("firefly", tmp_path) == ["prior.tsv", "truth.tsv"]


def test_locating_the_demo_imports_nothing_heavy():
    # the command line calls scenario_dir and must start fast (issue 13, item 8)
    code = ("import sys, aligner.datasets.demo as d; d.scenario_dir('firefly'); "
            "print(sorted(m for m in ('numpy', 'pandas', 'scipy', 'numba') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_registry_demo_names_spell_no_english_word():
    # Demo data must be invented: no stem of a company name is a word of the english-words
    # package's web2 and GCIDE lists (real trade names are often words), with or without its
    # invented ending. Reference: the word lists themselves, read directly.
    import csv

    from english_words import get_english_words_set

    from aligner.datasets.demo import scenario_dir
    from aligner.datasets.registry import _bare

    words = get_english_words_set(["web2", "gcide"], lower=True, alpha=True)
    with open(scenario_dir("registry") / "labels_a.tsv", encoding="utf-8") as fh:
        rows = [r for r in csv.reader((line for line in fh if not line.startswith("#")), delimiter="\t")][1:]
    stems = {name.split()[0] for _, name in rows}
    assert len(stems) > 100
    assert not {s for s in stems if s.lower() in words or _bare(s) in words}
