"""The class prior: every pair sharing a class, one score; several classes per node (rows, lists or a
separator); class table files with a header line or without."""

import numpy as np
import pandas as pd
import pytest

from aligner.errors import InputFormatError, InvalidParameterError
from aligner.priors.classes import prior_from_classes, read_classes

# hand-worked example: x3 is of classes AVB and DD, y3 of DD and AVA
#   AVA: {x1, x2} x {y1, y3} = 4 pairs; AVB: x3 x y2 = 1; DD: {x3, x4} x y3 = 2; QQ is in A only
HAND = [("x1", "y1"), ("x1", "y3"), ("x2", "y1"), ("x2", "y3"), ("x3", "y2"), ("x3", "y3"), ("x4", "y3")]
A = {"x1": "AVA", "x2": "AVA", "x3": ["AVB", "DD"], "x4": "DD", "x5": "QQ", "x6": None}
B = {"y1": "AVA", "y2": "AVB", "y3": ["DD", "AVA"]}


def _pairs(df):
    return list(zip(df.node_a, df.node_b))


def test_hand_worked_pairs_from_mappings_rows_and_a_separator():
    p = prior_from_classes(A, B, score=2.5)
    assert _pairs(p) == HAND and (p.score == 2.5).all() and list(p.columns) == ["node_a", "node_b", "score"]
    # the same classes as (node, class) rows with repeated nodes, and as one field split at ';'
    rows_a = [("x1", "AVA"), ("x2", "AVA"), ("x3", "AVB"), ("x3", "DD"), ("x4", "DD"), ("x5", "QQ")]
    assert _pairs(prior_from_classes(rows_a, pd.DataFrame({"n": ["y1", "y2", "y3"], "c": ["AVA", "AVB",
                                                                                           "DD ; AVA"]}),
                                     separator=";")) == HAND
    # a pair sharing two classes is listed once
    assert _pairs(prior_from_classes({"u": "P|Q"}, {"v": ["P", "Q"]}, separator="|")) == [("u", "v")]


def test_class_files_with_and_without_a_header(tmp_path):
    a = tmp_path / "a.tsv"
    a.write_text("node\tclass\nx1\tAVA\nx2\tAVA\nx3\tAVB;DD\n# a comment\nx4\tDD\nx5\tQQ\n")
    b = tmp_path / "b.csv"
    b.write_text("y1,AVA\ny2,AVB\ny3,DD\ny3,AVA\n")
    ca = read_classes(a, separator=";")
    assert ca.values.tolist() == [["x1", "AVA"], ["x2", "AVA"], ["x3", "AVB"], ["x3", "DD"], ["x4", "DD"],
                                  ["x5", "QQ"]]
    assert _pairs(prior_from_classes(str(a), str(b), separator=";")) == HAND
    # without the separator, 'AVB;DD' is one class of its own, shared with nobody: x3 gets no pair
    assert _pairs(prior_from_classes(str(a), str(b))) == [p for p in HAND if p[0] != "x3"]


def test_errors_name_the_file_and_line(tmp_path):
    bad = tmp_path / "bad.tsv"
    bad.write_text("x1\tAVA\nx2\t\nx3\tDD\n")
    with pytest.raises(InputFormatError, match=r"bad.tsv, line 2: has an empty field"):
        read_classes(bad)
    with pytest.raises(InvalidParameterError, match=r"^score must be a number in \(0, inf\)|^score must be"):
        prior_from_classes(A, B, score=0)
    with pytest.raises(InvalidParameterError, match=r"classes_a must map each node to a class"):
        prior_from_classes({"x": 1.5}, B)


def test_a_missing_class_in_a_dataframe_or_rows_is_no_class():
    # Found by differential testing: a DataFrame's (or rows') missing class, None or NaN, was read as
    # the class "nan" or "None", so every classless node of A was paired with every classless node
    # of B. Reference: the definition in docs/method.md (pairs share a class; nodes without a class
    # get no pair), and this function's mapping input, where None and NaN mean no class.
    a = pd.DataFrame({"node": ["x1", "x2", "x3", "x4"], "cls": ["AVB", None, np.nan, pd.NA]})
    b = pd.DataFrame({"node": ["y1", "y2", "y3"], "cls": [np.nan, "AVB", None]})
    want = [["x1", "y2", 1.0]]
    assert prior_from_classes(a, b).values.tolist() == want
    assert prior_from_classes(dict(zip(a.node, a.cls)), dict(zip(b.node, b.cls))).values.tolist() == want
    assert prior_from_classes([("x1", "AVB"), ("x2", None)], [("y1", None), ("y2", "AVB")]).values.tolist() == want


@pytest.mark.parametrize("head", ["node_id\tclass", "node_a\tclass", "gene_name\tfamily", "node\tcell type",
                                  "Neuron ID\tType"])
def test_header_lines_with_a_suffixed_node_word(tmp_path, head):
    # Found by differential testing: a first line node_id<TAB>class was read as data, a node
    # 'node_id' of class 'class', so two such tables gave the pair (node_id, node_id). Reference:
    # docs/formats.md (a word for the node, then a class word, is a header line), hand-worked.
    a, b = tmp_path / "a.tsv", tmp_path / "b.tsv"
    a.write_text(f"{head}\nx1\tAVB\nx2\tDD\n")
    b.write_text(f"{head}\ny1\tAVB\n")
    assert _pairs(prior_from_classes(str(a), str(b))) == [("x1", "y1")]
    assert read_classes(a)["node"].tolist() == ["x1", "x2"]


def test_an_output_that_is_an_input_is_refused_even_with_force(tmp_path):
    # Found by testing the outputs: `prior-from-classes A B -o A --force` (and prior-from-labels)
    # replaced the input with the prior; --force replaces earlier outputs, not inputs (common
    # practice: exit 2, the input untouched), as align refuses -o naming an input file.
    from typer.testing import CliRunner

    from aligner.cli.app import app

    ca, cb = tmp_path / "ca.tsv", tmp_path / "cb.tsv"
    ca.write_text("node\tclass\na1\tx\na2\ty\n")
    cb.write_text("node\tclass\nb1\tx\nb2\ty\n")
    for args in (["prior-from-classes", str(ca), str(cb)], ["prior-from-labels", str(ca), str(cb)]):
        got = CliRunner().invoke(app, [*args, "-o", str(tmp_path / "." / "ca.tsv"), "--force"])
        assert got.exit_code == 2, got.output
        assert "is one of the inputs" in " ".join(got.output.split())
        assert ca.read_text() == "node\tclass\na1\tx\na2\ty\n"
    # an output among a pattern's files (found by reviewing the change: samefile of the pattern failed quietly)
    parts = tmp_path / "parts"
    parts.mkdir()
    (parts / "p1.tsv").write_text("node\tclass\na1\tx\n")
    got = CliRunner().invoke(app, ["prior-from-classes", str(parts / "*.tsv"), str(cb), "-o", str(parts / "p1.tsv"),
                                   "--force"])
    assert got.exit_code == 2 and "is one of the inputs" in " ".join(got.output.split()), got.output
