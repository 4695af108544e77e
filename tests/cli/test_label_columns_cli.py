"""prior-from-labels --label-columns: a prior from CSV records, the same as the Python function's."""

import pandas as pd
from typer.testing import CliRunner

from aligner.cli.app import app
from aligner.priors.labels import label_prior

runner = CliRunner()

# invented records (names checked against English word lists in tests/priors/test_label_records.py)
A = "id,name,city\na1,Quorvel Shipping,Quelbrin\na2,Quorvel Shipping,Zorvenna\n"
B = "id,name,city\nb1,Quorvel Shipping Ltd,Zorvenna\nb2,Quorvel Shipping,Quelbrin\n"


def test_label_columns_on_the_command_line(tmp_path):
    a, b, out = tmp_path / "a.csv", tmp_path / "b.csv", tmp_path / "p.tsv"
    a.write_text(A)
    b.write_text(B)
    r = runner.invoke(app, ["prior-from-labels", str(a), str(b), "-o", str(out), "--label-columns", "name,city",
                            "-q"])
    assert r.exit_code == 0, r.output
    got = pd.read_csv(out, sep="\t")
    want = label_prior(str(a), str(b), label_columns="name,city")  # reference: the Python function
    assert list(zip(got.node_a, got.node_b)) == list(zip(want.node_a, want.node_b))
    assert (got.score - want.score).abs().max() < 1e-9
    best = got.loc[got.groupby("node_a")["score"].idxmax()]
    assert dict(zip(best.node_a, best.node_b)) == {"a1": "b2", "a2": "b1"}  # hand-worked: the town decides


def test_label_columns_errors_exit_2(tmp_path):
    a, out = tmp_path / "a.csv", tmp_path / "p.tsv"
    a.write_text(A)
    r = runner.invoke(app, ["prior-from-labels", str(a), str(a), "-o", str(out), "--label-columns", "name,street"])
    assert r.exit_code == 2 and "a.csv, line 1: has no column named 'street'" in r.output
    assert "--label-columns name,street" in r.output and not out.exists()
    r = runner.invoke(app, ["prior-from-labels", str(a), str(a), "-o", str(out), "--label-columns", "name",
                            "--from-networks"])
    assert r.exit_code == 2 and r.output.startswith("error: --label-columns picks fields") and not out.exists()
