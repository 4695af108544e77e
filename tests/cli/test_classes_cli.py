"""The prior-from-classes command: class tables in, the prior of the Python function out."""

import pandas as pd
from typer.testing import CliRunner

from aligner.cli.app import app
from aligner.priors.classes import prior_from_classes

runner = CliRunner()


def test_command_writes_the_python_functions_prior(tmp_path):
    a, b, out = tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "prior.tsv"
    a.write_text("neuron\tclass\nx1\tAVA\nx2\tAVA\nx3\tAVB|DD\nx4\tDD\n")
    b.write_text("y1\tAVA\ny2\tAVB\ny3\tDD\ny3\tAVA\n")
    r = runner.invoke(app, ["prior-from-classes", str(a), str(b), "-o", str(out), "--class-separator", "|",
                            "--score", "0.5"])
    assert r.exit_code == 0, r.output
    # hand-worked: AVA 2 x 2, AVB 1 x 1, DD 2 x 1 = 7 pairs from 3 shared classes
    assert "7 pairs from 3 classes shared by 4 nodes of A and 3 nodes of B" in r.output
    got = pd.read_csv(out, sep="\t", dtype={"node_a": str, "node_b": str})
    # reference: the Python function on the same files
    want = prior_from_classes(str(a), str(b), separator="|", score=0.5)
    pd.testing.assert_frame_equal(got, want, check_dtype=False)
    assert len(got) == 7


def test_errors_exit_2(tmp_path):
    a, out = tmp_path / "a.tsv", tmp_path / "prior.tsv"
    a.write_text("x1\tAVA\nx2\n")
    r = runner.invoke(app, ["prior-from-classes", str(a), str(a), "-o", str(out)])
    assert r.exit_code == 2 and "a.tsv, line 2" in r.output and not out.exists()
    a.write_text("x1\tAVA\n")
    r = runner.invoke(app, ["prior-from-classes", str(a), str(a), "-o", str(out), "--score", "0"])
    assert r.exit_code == 2 and "--score must be" in r.output and not out.exists()


def test_a_header_only_table_and_no_shared_class_write_nothing(tmp_path):
    # Found by fuzzing: tables sharing no class wrote a header-only prior (exit 0) that align refuses.
    # Decided (docs/commands.md): no pair to write is an error, exit 2, nothing written, as in
    # prior-from-labels; a header line without rows is refused like an empty table, naming its line.
    a, b, out = tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "prior.tsv"
    a.write_text("x1\tAVA\n")
    b.write_text("y1\tDD\ny2\tAVB\n")
    r = runner.invoke(app, ["prior-from-classes", str(a), str(b), "-o", str(out)])
    assert r.exit_code == 2 and "no class is shared: the 1 class of" in r.output, r.output
    assert "the 2 classes of" in r.output and "was not written" in r.output and not out.exists()
    a.write_text("neuron\tclass\n")
    r = runner.invoke(app, ["prior-from-classes", str(a), str(b), "-o", str(out)])
    assert r.exit_code == 2 and f"{a}, line 1: has a header line but no data rows" in r.output, r.output
    assert not out.exists()


def test_message_counts_the_nodes_in_shared_classes_only(tmp_path):
    # Found by differential testing: the line said "shared by N nodes" with N every node that has a
    # class, also those whose classes the other table lacks. Reference: the pairs hand-counted from
    # the definition in docs/commands.md (a pair per node of A and node of B sharing a class).
    a, b, out = tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "prior.tsv"
    a.write_text("x1\tAVB;DD\nx2\tAVB\nx3\tVD\n")  # x3: VD, which B lacks
    b.write_text("y1\tDD\ny2\tAVB\ny3\tQQ\n")  # y3: QQ, which A lacks
    r = runner.invoke(app, ["prior-from-classes", str(a), str(b), "-o", str(out), "--class-separator", ";"])
    assert r.exit_code == 0, r.output
    got = pd.read_csv(out, sep="\t", dtype=str)
    assert list(zip(got.node_a, got.node_b)) == [("x1", "y1"), ("x1", "y2"), ("x2", "y2")]
    assert "3 pairs from 2 classes shared by 2 nodes of A and 2 nodes of B" in " ".join(r.output.split())
