"""The one coercion helper: a path, a DataFrame, rows or a mapping give the same table.

Every expected value below is worked by hand from the small tables written here; the
networkx case is checked against networkx's own view of the graph (``nx.to_edgelist``).
"""

import networkx as nx
import numpy as np
import pandas as pd
import pytest

from aligner.errors import InputFormatError, InvalidParameterError
from aligner.io.inputs import as_network, as_pairs, as_prior, as_table
from aligner.io.readers import read_network
from aligner.priors.seeds import as_seeds


def _w(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


@pytest.fixture
def nets(tmp_path):
    a = read_network(_w(tmp_path, "a.tsv", "a1\ta2\na2\ta3\n"))
    b = read_network(_w(tmp_path, "b.tsv", "b1\tb2\nb2\tb3\n"))
    return a, b


def _forms(tmp_path, rows, name="t.tsv"):
    """The same table as a file, a DataFrame, a list of rows and (two columns) a dict."""
    path = _w(tmp_path, name, "".join("\t".join(map(str, r)) + "\n" for r in rows))
    forms = {"path": path, "frame": pd.DataFrame(rows), "rows": [tuple(r) for r in rows]}
    if len(rows[0]) == 2:
        forms["dict"] = dict(rows)
    return forms


def test_as_table_forms_agree_and_name_rows(tmp_path):
    rows = [("x", "y"), ("y", "z"), ("z", "x")]
    for kind, obj in _forms(tmp_path, rows).items():
        t = as_table(obj, name="pairs", layout="node_a, node_b", min_cols=2, max_cols=2, header="no")
        assert [list(map(str, t.text(k))) for k in (0, 1)] == [["x", "y", "z"], ["y", "z", "x"]], kind
        # a file names its lines, an object its rows (1-based)
        assert t.where(1) == ("line 2" if kind == "path" else "row 2"), kind
    t = as_table([("a", "b")], name="pairs", layout="node_a, node_b", min_cols=2, max_cols=2)
    assert t.source == "<pairs>" and t.line_of(0) is None


def test_as_table_refuses_what_it_cannot_read():
    kw = dict(name="seeds", layout="node_a, node_b", min_cols=2, max_cols=3)
    for bad, got in ((5, "got int"), (b"ab", "got bytes")):
        with pytest.raises(InvalidParameterError) as info:
            as_table(bad, **kw)
        assert str(info.value) == (f"seeds must be a path, a pandas DataFrame or an iterable of rows "
                                   f"(node_a, node_b); {got}") and info.value.param == "seeds"
    with pytest.raises(InvalidParameterError, match=r"seeds must hold rows of 2 to 3 values \(node_a, node_b\); "
                                                    r"got \('a',\) in row 2"):
        as_table([("a", "b"), ("a",)], **kw)
    with pytest.raises(InvalidParameterError, match=r"seeds must hold rows .*; got 'ab' in row 1"):
        as_table(["ab"], **kw)  # a string is not a row of two identifiers
    with pytest.raises(InvalidParameterError, match=r"seeds must have at least 2 columns \(node_a, node_b\); got 1"):
        as_table(pd.DataFrame({"a": ["x"]}), **kw)


def test_pairs_from_every_form(tmp_path, nets):
    a, b = nets
    rows = [("a1", "b2"), ("zz", "b1"), ("a3", "b3")]
    for kind, obj in _forms(tmp_path, rows).items():
        t = as_pairs(obj, a, b, "truth table", None, "no")
        # a1 -> 0, a3 -> 2 in A; b2 -> 1, b3 -> 2 in B (names sorted); zz is unknown
        assert t.pairs.tolist() == [[0, 1], [2, 2]] and t.n_rows == 3 and t.n_unknown == 1, kind
        assert t.unknown_examples == ["zz / b1"], kind
        assert t.source == (str(obj) if kind == "path" else "<truth table>"), kind


def test_prior_from_a_frame_equals_the_file(tmp_path, nets):
    a, b = nets
    rows = [("a1", "b1", 0.5), ("a2", "b2", 2.0), ("a1", "b1", 1.5)]
    forms = _forms(tmp_path, rows)
    with pytest.warns(UserWarning, match="1 prior rows repeat a pair"):
        ref = as_prior(forms["path"], a, b, "similarity", None, "no")
    for kind in ("frame", "rows"):
        with pytest.warns(UserWarning, match="1 prior rows repeat a pair"):
            t = as_prior(forms[kind], a, b, "similarity", None, "no")
        assert t.pairs.tolist() == ref.pairs.tolist() == [[0, 0], [1, 1]], kind
        assert t.scores.tolist() == ref.scores.tolist() == [1.5, 2.0], kind  # the highest score wins
        assert t.source == ("<DataFrame prior>" if kind == "frame" else "<prior>"), kind


def test_bad_scores_in_an_object_name_the_row(nets):
    a, b = nets
    with pytest.raises(InputFormatError, match=r"^<DataFrame prior>: row 2: the score 'high' is not a finite"):
        as_prior(pd.DataFrame([("a1", "b1", 1.0), ("a2", "b2", "high")]), a, b, "similarity", None, "auto")
    with pytest.raises(InputFormatError, match=r"^<prior>: the score -1.0 is negative"):
        as_prior([("a1", "b1", -1.0)], a, b, "similarity", None, "auto")


def test_network_from_a_frame_rows_file_and_graph_agree(tmp_path):
    rows = [("u", "v", 2.0), ("v", "w", 1.0), ("w", "u", 0.5)]
    forms = _forms(tmp_path, rows)
    ref = as_network(forms["path"], header="no")
    g = nx.Graph()
    g.add_weighted_edges_from(rows)
    for obj in (forms["frame"], forms["rows"], g):
        net = as_network(obj)
        assert net.names.tolist() == ref.names.tolist() == ["u", "v", "w"]
        assert net.edges.tolist() == ref.edges.tolist() and net.weights.tolist() == ref.weights.tolist()
    # networkx's own edge list, in the network's numbering
    pos = {n: i for i, n in enumerate(ref.names)}
    assert sorted(tuple(sorted((pos[u], pos[v]))) + (d["weight"],) for u, v, d in nx.to_edgelist(g)) == sorted(
        (int(u), int(v), float(w)) for (u, v), w in zip(ref.edges, ref.weights))
    with pytest.raises(InputFormatError, match=r"^<DataFrame network_a>: row 2: the edge weight -1 is negative"):
        as_network(pd.DataFrame([("u", "v", 1.0), ("v", "w", -1.0)]), name="network_a")
    with pytest.raises(InvalidParameterError, match=r"^network_a must be an undirected graph; got a directed one"):
        as_network(nx.DiGraph([("u", "v")]), name="network_a")


def test_seeds_from_every_form(tmp_path, nets):
    a, b = nets
    for kind, obj in _forms(tmp_path, [("a3", "b1"), ("a1", "b2")], name="seeds.tsv").items():
        s = as_seeds(obj, a, b, header="no")
        assert s.pairs.tolist() == [[0, 1], [2, 0]] and s.n_rows == 2, kind  # sorted by node of A
    with pytest.raises(InvalidParameterError, match=r"^seeds must hold rows of 2 to 64 values") as info:
        as_seeds([("a1",)], a, b)
    assert info.value.param == "seeds"


@pytest.mark.parametrize("gap", [None, np.nan, pd.NA, "", "  "])
def test_a_missing_node_in_an_object_is_refused_naming_its_row(nets, gap):
    # Found by differential testing: an edge DataFrame whose node was None, NaN, pd.NA or blank
    # text made a node named "nan" (or "None", "<NA>", ""), where a file refuses an empty field
    # with its line. Common practice: a missing identifier is an error, not an identifier.
    frame = pd.DataFrame({"u": ["a", "b", "c"], "v": ["b", "c", gap]}, dtype=object)
    with pytest.raises(InputFormatError, match=r"row 3: column 2 names no node"):
        as_network(frame, name="network_a")
    rows = [("a", "b"), (gap, "c")]
    with pytest.raises(InputFormatError, match=r"row 2: column 1 names no node"):
        as_network(rows)
    net_a, net_b = nets
    with pytest.raises(InputFormatError, match=r"row 1: column 2 names no node"):
        as_prior(pd.DataFrame({"a": [net_a.names[0]], "b": [gap], "s": [1.0]}, dtype=object), net_a, net_b,
                 "similarity", None, "auto")
    with pytest.raises(InputFormatError, match=r"row 1: column 1 names no node"):
        as_seeds([(gap, net_b.names[0])], net_a, net_b)
    # identifiers that are numbers stay identifiers
    assert as_network(pd.DataFrame({"u": [1, 2], "v": [2, 3]})).n == 3


def test_blanks_around_a_node_in_an_object_are_trimmed_as_in_a_file(tmp_path):
    # Found by differential testing: " n0" given in a DataFrame stayed " n0" while the same name
    # read from a file is "n0" (the readers trim spaces and tabs around a field, docs/formats.md),
    # so a network given in memory and the same network written and read back differed.
    # Reference: the file reader on the same rows.
    rows = [(" n0", "n1  "), ("n1", " n2 ")]
    from_frame = as_network(pd.DataFrame(rows))
    from_file = read_network(_w(tmp_path, "e.tsv", "".join(f"{u}\t{v}\n" for u, v in rows)))
    assert from_frame.names.tolist() == from_file.names.tolist() == ["n0", "n1", "n2"]
    assert from_frame.edges.tolist() == from_file.edges.tolist()


def test_blanks_around_a_node_of_a_networkx_graph_are_trimmed_as_in_a_file(tmp_path):
    # A networkx graph's node " n0" stayed " n0" while a DataFrame's and a file's are trimmed to
    # "n0". Reference: the file reader on the same edges (and networkx's own node list).
    g = nx.Graph([(" n0", "n1  "), ("n1  ", " n2 ")])
    from_graph = as_network(g)
    from_file = read_network(_w(tmp_path, "e.tsv", "".join(f"{u}\t{v}\n" for u, v in g.edges())))
    assert from_graph.names.tolist() == from_file.names.tolist() == ["n0", "n1", "n2"]
    assert from_graph.edges.tolist() == from_file.edges.tolist()
    # two nodes that only differ by blanks around them, or a blank one, are refused
    with pytest.raises(InvalidParameterError, match="clash"):
        as_network(nx.Graph([("n0", " n0"), ("n0", "n1")]))
    with pytest.raises(InvalidParameterError, match="empty or only spaces"):
        as_network(nx.Graph([("  ", "n1")]))


def test_a_networkx_graph_with_tuple_nodes_aligns_and_keeps_its_nodes():
    # Found by fuzzing the Python API: a grid graph's nodes are tuples, which became a 2-D array
    # of labels, and the run failed in its scoring after all the work. Reference: networkx's own
    # node objects (each tuple comes back as one node), and the identity map of a graph onto itself.
    import aligner

    g = nx.grid_2d_graph(4, 4)
    net = as_network(g)
    assert net.labels.shape == (16,) and set(net.labels) == set(g.nodes())
    prior = pd.DataFrame({"a": [str(v) for v in g], "b": [str(v) for v in g], "s": 1.0})
    res = aligner.align(g, g, prior)
    assert set(res.pairs["node_a"]) == set(g.nodes())
    assert res.scores.conserved_edges == g.number_of_edges()  # 16 pairs, each its own: every edge kept


@pytest.mark.parametrize("weight", [-1.0, float("nan"), float("inf"), None, "heavy", 10**400, np.True_])
def test_networkx_edge_weights_are_checked_as_a_table_s_are(weight):
    # Found by fuzzing the Python API: a graph's weights skipped the checks a table's weight
    # column gets (finite numbers >= 0: docs/formats.md), so NaN gave conserved_weight nan, and
    # None or text a bare TypeError. Reference: the same weights in a DataFrame are refused too.
    g = nx.cycle_graph(5)
    nx.set_edge_attributes(g, 1.0, "weight")
    g[0][1]["weight"] = weight
    with pytest.raises(InvalidParameterError, match=r"the edge 0 - 1 has the weight .* must be a finite number >= 0"):
        as_network(g)
    if weight is None or isinstance(weight, (str, float)):  # (a table cannot hold 10**400; it reads True as 1)
        frame = nx.to_pandas_edgelist(g)[["source", "target", "weight"]]
        with pytest.raises(InputFormatError):
            as_network(frame)


@pytest.mark.parametrize("table", ["prior", "seeds", "truth", "alignment"])
def test_header_yes_refuses_a_pair_table_whose_skipped_line_is_data(tmp_path, table):
    # Found by a user trial: --header yes (given because the networks' header was not found)
    # applies to every input, and dropped the first row of a prior or seed table that had no
    # header line, without a word. Common practice: a skipped line naming a node of A and a
    # node of B in the pair's columns is data; refuse (exit 2 from the command line), naming the file.
    import aligner
    from aligner.io.inputs import as_alignment

    a = read_network(_w(tmp_path, "a.tsv", "pre\tpost\nx0\tx1\nx1\tx2\nx2\tx3\n"), header="yes")
    b = read_network(_w(tmp_path, "b.tsv", "pre\tpost\ny0\ty1\ny1\ty2\ny2\ty3\n"), header="yes")
    rows = "".join(f"x{i}\ty{i}" + ("\t1" if table == "prior" else "") + "\n" for i in range(4))
    head = "node_a\tnode_b" + ("\tscore" if table == "prior" else "") + "\n"
    read = {"prior": lambda p: as_prior(p, a, b, "similarity", None, "yes"),
            "seeds": lambda p: as_seeds(p, a, b, header="yes"),
            "truth": lambda p: as_pairs(p, a, b, "truth", None, "yes"),
            "alignment": lambda p: as_alignment(p, a, b, None, "yes")}[table]
    bad = _w(tmp_path, f"{table}.tsv", rows)
    with pytest.raises(InputFormatError, match=rf"{table}\.tsv: its first line was skipped as a header line "
                                               r"\(--header yes.*'x0', a node of A, and 'y0', a node of B"):
        read(bad)
    good = read(_w(tmp_path, f"{table}_head.tsv", head + rows))  # with its own header line: read, 4 rows
    assert len(good.pairs) == 4
    if table == "prior":  # and the whole run refuses it before writing anything
        with pytest.raises(InputFormatError, match="skipped as a header line"):
            aligner.align(tmp_path / "a.tsv", tmp_path / "b.tsv", bad, header="yes")
