"""``aligner transfer``: the ranked transferred edges of a finished run, selected, printed and written."""

import shutil
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from aligner.cli.app import app

DEMO = Path(__file__).resolve().parents[2] / "demo_pairs" / "firefly"
runner = CliRunner()
COLUMNS = ["direction", "node_a1", "node_a2", "node_b1", "node_b2", "support", "confidence_1", "confidence_2",
           "score_1", "score_2", "triangles", "common_neighbours"]


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("transfer") / "out"
    res = runner.invoke(app, ["align", str(DEMO / "network_a.tsv"), str(DEMO / "network_b.tsv"), "--prior",
                              str(DEMO / "prior.tsv"), "-o", str(out), "-q"])
    assert res.exit_code == 0, res.output
    return out


def _read(path):
    return pd.read_csv(path, sep="\t", keep_default_na=False, dtype={c: str for c in COLUMNS[:5]})


def test_align_writes_the_documented_table(run_dir):
    # docs/formats.md: the columns of transferred_edges.tsv, best first
    tab = _read(run_dir / "transferred_edges.tsv")
    assert list(tab.columns) == COLUMNS
    assert set(tab["direction"]) == {"A->B", "B->A"}
    assert tab["support"].is_monotonic_decreasing


def test_transfer_prints_and_writes_the_top_rows(run_dir):
    # common practice: --top N keeps the first N rows of the ranked list
    res = runner.invoke(app, ["transfer", str(run_dir), "--top", "3"])
    assert res.exit_code == 0, res.output
    full = _read(run_dir / "transferred_edges.tsv")
    got = _read(run_dir / "transferred_selected.tsv")
    pd.testing.assert_frame_equal(got, full.head(3))
    assert "Transferred interactions" in res.output
    assert f"3 of {len(full):,} transferred edges shown" in res.output
    first = full.iloc[0]
    assert first["node_a1"] in res.output and first["node_b2"] in res.output
    assert full.iloc[3]["node_a1"] + " - " + full.iloc[3]["node_a2"] not in res.output


def test_transfer_min_support(run_dir):
    # common practice: a floor keeps exactly the rows at or above it (here with every row: --top none)
    full = _read(run_dir / "transferred_edges.tsv")
    floor = float(full["support"].quantile(0.9))
    res = runner.invoke(app, ["transfer", str(run_dir), "--min-support", str(floor), "--top", "none", "-q"])
    assert res.exit_code == 0, res.output
    assert res.output == ""  # --quiet
    got = _read(run_dir / "transferred_selected.tsv")
    want = full[full["support"] >= floor]
    assert 0 < len(want) < len(full)
    pd.testing.assert_frame_equal(got.reset_index(drop=True), want.reset_index(drop=True))


def test_transfer_refuses_a_run_without_the_file(run_dir, tmp_path):
    # common practice: a user error is one line and exit status 2 (docs/errors.md), e.g. a run written
    # before the file existed
    old = tmp_path / "old"
    shutil.copytree(run_dir, old)
    (old / "transferred_edges.tsv").unlink()
    for where in (old, tmp_path / "missing"):
        res = runner.invoke(app, ["transfer", str(where)])
        assert res.exit_code == 2, res.output
        assert "Traceback" not in res.output
        lines = [line for line in res.output.splitlines() if line.strip()]
        assert len(" ".join(lines).split("error:")) == 2 and "transferred_edges.tsv" in res.output


def test_transfer_refuses_a_bad_option(run_dir):
    res = runner.invoke(app, ["transfer", str(run_dir), "--min-support", "-1"])
    assert res.exit_code == 2 and "--min-support" in res.output


def _damage_short_row(path):
    lines = path.read_text().splitlines(keepends=True)
    lines.insert(2, "A->B\tx\ty\n")  # line 3: three fields under a header of twelve
    path.write_text("".join(lines))


def _damage_bad_number(path):
    lines = path.read_text().splitlines(keepends=True)
    fields = lines[3].split("\t")
    fields[5] = "high"  # line 4: the support is not a number
    lines[3] = "\t".join(fields)
    path.write_text("".join(lines))


@pytest.mark.parametrize("damage, where, what", [
    (lambda p: p.write_text(""), "transferred_edges.tsv:", "the file is empty"),
    (_damage_short_row, "transferred_edges.tsv, line 3:", "the row has 3 fields where the header has 12"),
    (_damage_bad_number, "transferred_edges.tsv, line 4:", "the support field 'high' is not a number"),
    (lambda p: p.write_text("direction\tnode_a1\n"), "transferred_edges.tsv, line 1:", "the header lacks"),
], ids=["empty", "short-row", "bad-number", "header"])
def test_transfer_refuses_a_damaged_table(run_dir, tmp_path, damage, where, what):
    # common practice: bad input gives exit 2 and one line naming the file and the line, no traceback
    # and nothing written (docs/errors.md); found by fuzzing, where pandas' EmptyDataError and a
    # TypeError on a short row escaped as tracebacks
    bad = tmp_path / "bad"
    shutil.copytree(run_dir, bad)
    (bad / "transferred_selected.tsv").unlink(missing_ok=True)
    damage(bad / "transferred_edges.tsv")
    res = runner.invoke(app, ["transfer", str(bad)])
    assert res.exit_code == 2, res.output
    text = " ".join(res.output.split())
    assert "Traceback" not in res.output and text.count("error:") == 1
    assert f"error: {bad / where}" in text and what in text, text
    assert "the run's outputs look damaged" in text and f"-o {bad} --force" in text
    assert not (bad / "transferred_selected.tsv").exists()
