import gzip

import numpy as np
import pytest

from aligner.errors import AlignerWarning, InputFormatError, InvalidParameterError
from aligner.io.readers import data_lines, read_network, read_pairs, read_prior, read_table
from aligner.core.prior import EVALUE_CAP


def _w(tmp_path, name, text, mode="w"):
    p = tmp_path / name
    if mode == "wb":
        p.write_bytes(text)
    else:
        p.write_text(text, encoding="utf-8", newline="")
    return p


def test_edge_list_forms(tmp_path):
    # the same graph as TSV with header and comments, CSV with CRLF and a BOM, white space, gzip
    tsv = _w(tmp_path, "a.tsv", "# comment\nsource\ttarget\nx\ty\ny\tz\n\nz\tz\ny\tx\n")
    csv = _w(tmp_path, "a.csv", "\ufeffx,y\r\ny,z\r\nz,z\r\n")
    ws = _w(tmp_path, "a.txt", "x  y\ny\tz\n")
    gz = _w(tmp_path, "a.tsv.gz", gzip.compress(b"x\ty\ny\tz\n"), mode="wb")
    for p in (tsv, csv, ws, gz):
        net = read_network(p)
        assert net.names.tolist() == ["x", "y", "z"], p
        assert net.edges.tolist() == [[0, 1], [1, 2]], p
    net = read_network(tsv)
    assert net.n_self_loops == 1 and net.n_duplicate_edges == 1


def test_weights_and_identifiers_with_spaces_quotes_unicode(tmp_path):
    p = _w(tmp_path, "w.tsv", 'node a\t"q,uoted"\t2.5\nnode a\tß-7\t1\nß-7\t"q,uoted"\t0\n"q,uoted"\tnode a\t1.5\n')
    net = read_network(p)
    assert set(net.names) == {"node a", "q,uoted", "ß-7"}
    assert net.n_edges == 3 and net.n_duplicate_edges == 1
    k = {tuple(sorted((net.names[u], net.names[v]))): w for (u, v), w in zip(net.edges, net.weights)}
    assert k[("node a", "q,uoted")] == 4.0  # duplicate weights are summed


def test_line_order_does_not_change_numbering(tmp_path):
    a = read_network(_w(tmp_path, "1.tsv", "b\tc\na\tb\n"))
    b = read_network(_w(tmp_path, "2.tsv", "a\tb\nb\tc\n"))
    assert a.names.tolist() == b.names.tolist() and np.array_equal(a.edges, b.edges)


@pytest.mark.parametrize("text, pattern", [
    ("", r"is empty"),
    ("# only a comment\n", r"is empty"),
    ("source\ttarget\n", r"header line but no data rows"),
    ("a\nb\n", r"line 1: has 1 column, expected 2 to 3"),
    ("a\tb\tc\td\n", r"line 1: has 4 columns, expected at most 3"),
    ("a\tb\t1\nb\tc\tlots\n", r"line 2: the edge weight 'lots' is not a finite number"),
    ("a\tb\t1\nb\tc\t-2\n", r"line 2: the edge weight -2 is negative"),
    ("a\tb\n# c\nb\tc\nc,d\n", r"line 4: has 1 field where the first row has 2"),
    ("a\tb\nb\tc\td\n", r"line 2: has 3 fields where the first row has 2"),
])
def test_malformed_edge_lists_name_the_line(tmp_path, text, pattern):
    p = _w(tmp_path, "bad.tsv", text)
    with pytest.raises(InputFormatError, match=pattern) as info:
        read_network(p)
    assert str(p) in str(info.value)


def test_missing_and_binary_files(tmp_path):
    with pytest.raises(InputFormatError, match="no such file"):
        read_network(tmp_path / "nope.tsv")
    with pytest.raises(InputFormatError, match="is a directory"):
        read_network(tmp_path)
    p = _w(tmp_path, "bin.tsv", b"\xff\xfe\x00a\tb\n", mode="wb")
    with pytest.raises(InputFormatError, match="not UTF-8"):
        read_network(p)


def _nets(tmp_path):
    a = read_network(_w(tmp_path, "a.tsv", "a1\ta2\na2\ta3\n"))
    b = read_network(_w(tmp_path, "b.tsv", "b1\tb2\nb2\tb3\n"))
    return a, b


def test_prior_kinds(tmp_path):
    a, b = _nets(tmp_path)
    p = _w(tmp_path, "p.tsv", "node_a\tnode_b\tscore\na1\tb1\t1e-30\na2\tb2\t0\na3\tb3\t0.5\na1\tb2\t3\n")
    t = read_prior(p, a, b, kind="evalue")
    got = dict(zip(map(tuple, t.pairs.tolist()), t.scores))
    assert got[(0, 0)] == pytest.approx(30.0)
    assert got[(1, 1)] == EVALUE_CAP
    assert got[(2, 2)] == pytest.approx(-np.log10(0.5))
    assert (0, 1) not in got and t.n_dropped_kind == 1  # E > 1 carries no evidence
    d = read_prior(p, a, b, kind="distance")
    assert dict(zip(map(tuple, d.pairs.tolist()), d.scores))[(0, 1)] == pytest.approx(0.25)


def test_prior_unknown_and_duplicates(tmp_path):
    a, b = _nets(tmp_path)
    p = _w(tmp_path, "p.tsv", "a1\tb1\t1\na1\tb1\t3\nzz\tb1\t1\na2\tqq\t1\n")
    t = read_prior(p, a, b)
    assert t.pairs.tolist() == [[0, 0]] and t.scores.tolist() == [3.0]  # the highest score wins
    assert t.n_unknown == 2 and t.n_duplicates == 1 and t.unknown_examples == ["zz / b1", "a2 / qq"]


@pytest.mark.parametrize("text, kind, pattern", [
    ("a1\tb1\t1\na2\tb2\tx\n", "similarity", r"line 2: the score 'x' is not a finite number"),
    ("a1\tb1\t1\na2\tb2\tnan\n", "similarity", r"line 2: the score 'nan' is not a finite number"),
    ("a1\tb1\tinf\n", "similarity", r"line 1: the score 'inf' is not a finite number"),
    ("# c\na1\tb1\t-1\n", "similarity", r"line 2: the score -1.0 is negative; similarities must be >= 0"),
    ("a1\tb1\t-1\n", "evalue", r"E-values must be >= 0"),
    ("a1\tb1\n", "similarity", r"has 2 columns, expected 3 for a prior table"),
])
def test_bad_prior_scores_name_file_and_line(tmp_path, text, kind, pattern):
    a, b = _nets(tmp_path)
    p = _w(tmp_path, "p.tsv", text)
    with pytest.raises(InputFormatError, match=pattern):
        read_prior(p, a, b, kind=kind)


def test_read_pairs_ignores_extra_columns(tmp_path):
    a, b = _nets(tmp_path)
    p = _w(tmp_path, "al.tsv", "node_a\tnode_b\tscore\tprior\tconserved\na1\tb2\t0.1\t1\t0\nzz\tb1\t1\t1\t1\n")
    t = read_pairs(p, a, b)
    assert t.pairs.tolist() == [[0, 1]] and t.n_unknown == 1


def test_read_table_columns_and_lines(tmp_path):
    # hand-worked: the header line is recognised by its column names, the comment and the blank
    # line are skipped, and each data row keeps its own file line number
    p = _w(tmp_path, "t.csv", "# pairs\nnode_a,node_b\n\nx,y\n# late comment\nz,w\n")
    t = read_table(p, min_cols=2, max_cols=2, what="pair table")
    assert t.header == ("node_a", "node_b") and t.n_rows == 2
    assert [list(map(str, t.text(k))) for k in (0, 1)] == [["x", "z"], ["y", "w"]]
    assert [t.line_of(r) for r in (0, 1)] == [4, 6] and t.where(1) == "line 6"
    assert [no for no, _ in data_lines(str(p))] == [2, 4, 6]


@pytest.mark.parametrize("kw, message", [
    ({"delimiter": "ab"}, "delimiter must be tab, comma, semicolon, space, whitespace or one ASCII character other "
                          "than a quote, '#' or a line break; got 'ab'"),
    ({"header": "maybe"}, "header must be one of auto, yes, no; got 'maybe'"),
])
def test_reader_options_are_checked_in_the_package_words(tmp_path, kw, message):
    # the package's message shape "x must be ...; got y" (aligner.checks), naming the keyword
    p = _w(tmp_path, "a.tsv", "x\ty\n")
    with pytest.raises(InvalidParameterError) as info:
        read_network(p, **kw)
    assert str(info.value) == message and info.value.param == next(iter(kw))


@pytest.mark.parametrize("text, sep", [
    ("geneA\tgeneB\np1\tp2\np2\tp3\np3\tp1\n", "\t"),
    ("interactor_1 interactor_2\np1 p2\np2 p3\np3 p1\n", " "),
])
def test_header_like_first_row_is_read_as_data_with_a_warning(tmp_path, text, sep):
    # Issue found in a fresh-clone trial: a header whose names are not the usual column names was
    # read as an edge, silently. Common practice: when a first row could be either, keep it as
    # data and say so once, naming the file, the line and the option that settles it.
    p = _w(tmp_path, "a.tsv", text)
    with pytest.warns(AlignerWarning, match=r"a\.tsv, line 1: the first row .* looks like a header.*--header yes"):
        net = read_network(p)
    first = text.split("\n")[0].split(sep)
    assert set(first) <= set(net.names.tolist())  # kept as data: two extra nodes, one extra edge
    assert net.edges.shape[0] == 4
    net = read_network(p, header="yes")  # the option settles it: skipped, no warning
    assert net.names.tolist() == ["p1", "p2", "p3"] and net.edges.shape[0] == 3


@pytest.mark.parametrize("first", ["pre\tpost", "presynaptic\tpostsynaptic", "pre_neuron\tpost_neuron",
                                   "sender\treceiver", "from_id\tto_id", "Source_ID\tTarget_ID",
                                   "pre\tpost\tsynapses"])
def test_common_names_of_a_links_two_ends_are_a_header(tmp_path, first):
    # Found by a user trial: connectome and message tables headed pre/post, sender/receiver or
    # source_id/target_id were read as an extra edge between two extra nodes, silently. Common
    # practice (column names of edge lists): such a first line is a header.
    weights = first.count("\t") == 2
    rows = "".join(f"x{i}\tx{i + 1}" + ("\t3" if weights else "") + "\n" for i in range(5))
    p = _w(tmp_path, "a.tsv", first + "\n" + rows)
    net = read_network(p)
    assert net.names.tolist() == [f"x{i}" for i in range(6)] and net.n_edges == 5


def test_truth_table_header_of_single_letters_warns(tmp_path):
    p = _w(tmp_path, "truth.tsv", "a\tb\nx1\ty1\nx2\ty2\n")
    with pytest.warns(AlignerWarning, match="truth.tsv, line 1"):
        read_table(p, min_cols=2, max_cols=2, what="pair table")


@pytest.mark.parametrize("text", [
    "ab1\tab2\nab1\tq\nq\tr\n",  # the first row's names recur: data
    "geneA\tq\nq\tr\nr\ts\n",  # not a pair of names differing in their last character
    "1\t2\n3\t4\n",  # numbers
    "LVES_03685\tLVES_03686\nq\tr\n",  # node names with several digits are not column names
])
def test_first_rows_that_are_data_give_no_warning(tmp_path, text):
    import warnings

    p = _w(tmp_path, "a.tsv", text)
    with warnings.catch_warnings():
        warnings.simplefilter("error", AlignerWarning)
        read_network(p)


def test_demo_networks_read_without_a_header_warning():
    import warnings

    from aligner.datasets.demo import scenario_dir

    for scenario in ("firefly", "registry"):
        d = scenario_dir(scenario)
        with warnings.catch_warnings():
            warnings.simplefilter("error", AlignerWarning)
            read_network(d / "network_a.tsv")
            read_network(d / "network_b.tsv")


def test_a_missing_score_is_not_answered_with_a_score_kind_hint(tmp_path):
    # Issue found in a fresh-clone trial: a NaN score got the hint about --score-kind distance,
    # which is about negative scores. Common practice: the hint fits the fault.
    from aligner.core.prior import check_scores

    with pytest.raises(InputFormatError, match=r"not a finite number; every score must be a number") as nan:
        check_scores(np.array([1.0, np.nan]), "similarity", source="<DataFrame prior>")
    assert "score-kind" not in str(nan.value)
    with pytest.raises(InputFormatError, match=r"is negative; .*--score-kind distance, score_kind='distance'"):
        check_scores(np.array([1.0, -2.0]), "similarity", source="<DataFrame prior>")


# --------------------------------------------------------------------------- spaces around fields

def _both_paths(monkeypatch, read):
    """What ``read()`` gives on the fast (pyarrow) path and on the careful (pandas) path: the
    careful one alone when the fast one is switched off, as the fuzzer's differential check does."""
    import aligner.io.readers as readers

    fast = read()
    with monkeypatch.context() as m:
        m.setattr(readers, "_read_arrow", lambda *a, **k: None)
        careful = read()
    return fast, careful


def _net_record(net):
    return net.names.tolist(), net.edges.tolist(), None if net.weights is None else net.weights.tolist()


@pytest.mark.parametrize("sep", ["\t", ",", ";"])
def test_spaces_around_fields_are_not_part_of_them_on_both_paths(tmp_path, monkeypatch, sep):
    # Found by fuzzing: two trailing spaces on every line of a TSV made "a1  " a node besides "a1"
    # (62 nodes instead of 40, no conserved edge). Common practice (what a reader of hand-edited
    # tables does; docs/formats.md): spaces and tabs around a field are dropped, inner spaces kept,
    # numbers with spaces around them still parse. Reference: the same rows written without them.
    import aligner.io.readers as readers

    rows = [("a1", "node two", "1.5"), ("node two", "a3", "2"), ("a3", "a1", "0.25")]
    clean = _w(tmp_path, "clean.txt", "".join(sep.join(r) + "\n" for r in rows))
    spaced = _w(tmp_path, "spaced.txt", "".join(sep.join(f"  {f}  " if k != 1 else f"{f} " for k, f in
                                                          enumerate(r)) + "  \n" for r in rows))
    want = _net_record(read_network(clean))
    assert want[0] == ["a1", "a3", "node two"]
    # a regression guard on the fast path: it stays in use for such a file
    assert readers._read_arrow(str(spaced), sep, 3, 0) is not None
    fast, careful = _both_paths(monkeypatch, lambda: _net_record(read_network(spaced)))
    assert fast == careful == want
    if sep != "\t":  # tabs around a field, in a file whose delimiter is given (else a tab would be taken for it)
        tabbed = _w(tmp_path, "tabbed.txt", "".join(sep.join(f"\t{f} \t" for f in r) + "\n" for r in rows))
        fast, careful = _both_paths(monkeypatch, lambda: _net_record(read_network(tabbed, delimiter=sep)))
        assert fast == careful == want
    # the prior (a score column with spaces around) and a pair table, on both paths
    a = read_network(clean)
    prior = lambda p: (lambda t: (t.pairs.tolist(), t.scores.tolist()))(read_prior(p, a, a))  # noqa: E731
    fast, careful = _both_paths(monkeypatch, lambda: prior(spaced))
    assert fast == careful == prior(clean)
    pairs = lambda p: (lambda t: (t.pairs.tolist(), t.n_unknown))(read_pairs(p, a, a))  # noqa: E731
    fast, careful = _both_paths(monkeypatch, lambda: pairs(spaced))
    assert fast == careful == pairs(clean) and careful[1] == 0


def test_spaces_around_picked_columns_and_header_names(tmp_path, monkeypatch):
    # the columns an option picks from a wider table, by header name: the names and the fields are
    # stripped alike, on both paths (hand-worked)
    a = read_network(_w(tmp_path, "a.tsv", "q1\tq2\n"))
    p = _w(tmp_path, "hits.tsv", " query \t subject\tidentity \t evalue \n q1 \tq2  \t 99\t 1e-5 \nq2\t q1\t98\t0.5 \n")
    got = _both_paths(monkeypatch, lambda: (lambda t: (t.pairs.tolist(), t.scores.tolist()))(
        read_prior(p, a, a, kind="evalue", columns="query,subject,evalue")))
    assert got[0] == got[1] == ([[0, 1], [1, 0]], [5.0, pytest.approx(-np.log10(0.5))])


@pytest.mark.parametrize("text", ["a\tb\n  \tc\n", "a,b\nc, \t\n"])
def test_a_field_of_spaces_is_an_empty_field_on_both_paths(tmp_path, monkeypatch, text):
    # a field with nothing but spaces and tabs is an empty field, as "" is (docs/formats.md)
    p = _w(tmp_path, "e.txt", text)

    def read():
        with pytest.raises(InputFormatError) as info:
            read_network(p)
        return str(info.value)

    fast, careful = _both_paths(monkeypatch, read)
    assert fast == careful and "line 2: has an empty field" in fast


def test_delimiter_inside_quotes_on_the_first_line_is_not_the_delimiter(tmp_path):
    # Found by fuzzing the input layer: a semicolon file whose first line quotes names holding a
    # comma ("a,1;z";"a,2;z") was taken for a comma file, and a CSV quoting a name with a tab on its
    # first line for a TSV: the run failed on line 2, or read other nodes. Checked against
    # docs/formats.md ("CSV quoting is honoured") and Python's csv module, which reads the quoted
    # field as one name: the delimiter is found outside quoted fields.
    import csv as pycsv

    for sep, text in ((";", '"a,1;z";"a,2;z"\n"a,2;z";b\n'),
                      (",", 'x,"y\tz"\n"y\tz",w\n'),
                      ("\t", '"a\tb"\tc\nc\td\n'),   # a tab outside quotes still makes it a TSV
                      ("\t", 'a"b\tc"d\nc"d\te\n')):  # a quote inside a field does not open one
        p = _w(tmp_path, "q.txt", text)
        want = sorted({f for row in pycsv.reader(text.splitlines(), delimiter=sep) for f in row})
        assert read_network(p).names.tolist() == want, text


def test_a_quote_left_open_on_the_first_line_names_the_line(tmp_path):
    # Found by fuzzing the input layer: when the delimiter came to be looked for outside quoted
    # fields, a first line whose quote is never closed ('"x<TAB>a1') hid its tab, the file was
    # read as white-space delimited and the error named no line ("EOF inside string"). As
    # docs/errors.md asks: the message names the file and the line at fault.
    p = _w(tmp_path, "open.tsv", '"x\ta1\na1\ta2\na2\ta3\n')
    with pytest.raises(InputFormatError, match=r"open\.tsv, line 1: has 1 column"):
        read_network(p)


@pytest.mark.parametrize("text, line", [('"x a1\na1 a2\na2 a3\n', 1), ('a1 a2\n"x a1\na2 a3\n', 2),
                                        ('a"b c\na1 a2\n"x a1\n', 3)])
def test_a_quote_left_open_in_a_white_space_delimited_file_names_the_line(tmp_path, text, line):
    # Found by fuzzing the input layer: in a white-space delimited file a quote never closed
    # ('"x a1') gave "cannot be parsed (Error tokenizing data. C error: EOF inside string starting
    # at row 0)", naming no line, where a TSV names it. docs/errors.md: the message names the
    # file and the line at fault. A quote inside a field ('a"b') is text and opens nothing.
    p = _w(tmp_path, "ws.txt", text)
    with pytest.raises(InputFormatError, match=rf"ws\.txt, line {line}: has a quote that is not closed on its line"):
        read_network(p)


@pytest.mark.parametrize("text", ["1e400", "NaN", "Infinity", "-1e999", "inf"])
def test_a_non_finite_number_is_quoted_as_the_file_has_it_on_both_paths(tmp_path, monkeypatch, text):
    # Found by fuzzing the input layer: the fast reader parsed a score of 1e400 to an infinity and the
    # message quoted 'inf', a value the file does not hold ('nan' for NaN, 'inf' for Infinity); the
    # careful reader quoted '1e400'. docs/errors.md: the message says what is wrong and where, so it
    # quotes the field as written, on both paths alike (for a score and an edge weight).
    a = read_network(_w(tmp_path, "a.tsv", "a1\ta2\na2\ta3\n"))
    prior = _w(tmp_path, "p.tsv", f"a1\ta2\t1\na2\ta3\t{text}\n")
    weights = _w(tmp_path, "w.tsv", f"a1\ta2\t1\na2\ta3\t{text}\n")

    def message(read):
        with pytest.raises(InputFormatError) as err:
            read()
        return str(err.value)

    for read, label in ((lambda: read_prior(prior, a, a), "score"), (lambda: read_network(weights), "edge weight")):
        fast, careful = _both_paths(monkeypatch, lambda: message(read))
        assert fast == careful
        assert f"line 2: the {label} '{text}' is not a finite number" in fast


def test_a_quoted_name_longer_than_the_csv_modules_field_limit_on_the_first_line(tmp_path):
    # Found by fuzzing the input layer: a CSV whose first line quoted a name of 200,000 characters
    # was refused with "cannot be parsed (field larger than field limit (131072))", while the same
    # name unquoted, or quoted on a later line, was read. docs/formats.md: node identifiers are
    # arbitrary strings and CSV quoting is honoured; reference: the rows as written.
    name = "L" * 200_000 + ",x"
    import csv as pycsv

    limit = pycsv.field_size_limit()
    p = _w(tmp_path, "long.csv", f'"{name}",a2\na2,a3\na3,"{name}"\n')
    net = read_network(p)
    assert sorted(net.names.tolist()) == sorted([name, "a2", "a3"]) and net.n_edges == 3
    assert pycsv.field_size_limit() == limit  # the process's limit is left as it was


@pytest.mark.parametrize("directed, rows", [(False, "a1\ta2\t1e308\na2\ta1\t1e308\n"),
                                            (True, "a1\ta2\t1e308\na1\ta2\t1e308\n"),
                                            (True, "a1\ta2\t1e308\na2\ta1\t1e308\n")])
def test_weights_of_a_repeated_edge_that_sum_past_the_largest_number(tmp_path, directed, rows):
    # Found by fuzzing the input layer: one row with a weight of inf is refused, but two rows of
    # the same edge weighing 1e308 each were merged into a weight of inf and accepted (the run
    # wrote total_weight null, against docs/summary.schema.json's number >= 0). docs/formats.md:
    # repeated edges are merged with their weights summed, and a weight is a finite number >= 0.
    p = _w(tmp_path, "w.tsv", "a2\ta3\t1\n" + rows)
    with pytest.raises(InputFormatError, match=r"w\.tsv: the (edge|arc) a1 - a2 is given on several rows whose "
                                               r"weights sum to more than the largest number"):
        read_network(p, directed=directed)
    assert read_network(_w(tmp_path, "ok.tsv", "a2\ta3\t1\n" + rows.replace("1e308", "1e307")),
                        directed=directed).weights.max() == pytest.approx(2e307)


def test_edge_weights_whose_total_passes_the_largest_number_are_refused(tmp_path):
    # Found by fuzzing the input layer: five distinct edges of weight 1e308 each passed the
    # readers, and the run wrote total_weight null (docs/summary.schema.json: a number >= 0).
    # The total of finite weights is refused as the merged weight of a repeated edge is.
    p = _w(tmp_path, "big.tsv", "".join(f"a{i}\ta{i + 1}\t1e308\n" for i in range(5)))
    with pytest.raises(InputFormatError, match=r"big\.tsv: the edge weights sum to more than the largest number"):
        read_network(p)
    assert read_network(_w(tmp_path, "ok.tsv", "a0\ta1\t1e308\n")).weights.sum() == 1e308


def test_a_first_row_taken_for_a_header_whose_names_are_nodes_is_reported(tmp_path):
    # Found by fuzzing the input layer: a prior whose first row has a score that is not a number
    # ('a1 b1 abc') over numeric rows was taken for a header line (docs/formats.md: "its third field
    # is text over a numeric column") and skipped without a word, though a1 and b1 are nodes of the
    # other rows, as a header's names would not be. Common practice for a header guess (and this
    # reader's own warning for the opposite guess): say so, naming the file, the line and the option.
    a = read_network(_w(tmp_path, "a.tsv", "a1\ta2\n"))
    p = _w(tmp_path, "p.tsv", "a1\ta2\tabc\na1\ta2\t1\na2\ta1\t2\n")
    with pytest.warns(AlignerWarning, match=r"p\.tsv, line 1: the first row .* was taken for a header line .*"
                                            r"--header yes"):
        t = read_prior(p, a, a)
    assert t.n_rows == 2  # still read as a header: the docs' rule stands
    # a real header over the same rows, and column names, stay silent
    import warnings

    for head in ("query\tsubject\tbits\n", "node_a\tnode_b\tscore\n"):
        q = _w(tmp_path, "q.tsv", head + "a1\ta2\t1\na2\ta1\t2\n")
        with warnings.catch_warnings():
            warnings.simplefilter("error", AlignerWarning)
            assert read_prior(q, a, a).n_rows == 2
