"""The prior's columns picked from a wider table (prior_columns / --prior-columns): by position or
header name, from a file or a DataFrame, the best row kept per pair, errors naming file, line and option."""

import numpy as np
import pandas as pd
import pytest

from aligner.core.prior import EVALUE_CAP
from aligner.errors import AlignerWarning, InputFormatError, InvalidParameterError
from aligner.io.inputs import as_prior
from aligner.io.readers import _read_arrow, read_network, read_prior

#: the common 12-column tabular layout of sequence searches (common practice)
LAYOUT = ["query", "subject", "identity", "length", "mismatches", "gap_opens", "q_start", "q_end", "s_start",
          "s_end", "evalue", "bitscore"]
ROWS = [
    ("a1", "b1", 98.0, 100, 2, 0, 1, 100, 1, 100, 1e-50, 200.0),
    ("a1", "b1", 60.0, 30, 12, 1, 110, 140, 110, 140, 1e-3, 40.0),   # a second, weaker hit of the same pair
    ("a1", "b2", 40.0, 50, 30, 2, 1, 50, 1, 50, 1e-5, 50.0),
    ("a2", "b2", 90.0, 100, 10, 0, 1, 100, 1, 100, 1e-40, 180.0),
    ("a3", "b3", 95.0, 100, 5, 0, 1, 100, 1, 100, 0.0, 250.0),
    ("a4", "b4", 80.0, 100, 20, 0, 1, 100, 1, 100, 1e-20, 120.0),
    ("a4", "b4", 85.0, 90, 14, 0, 5, 95, 5, 95, 1e-25, 110.0),      # better E-value, lower bit score
    ("a4", "b3", 30.0, 100, 70, 3, 1, 100, 1, 100, 2.0, 20.0),      # E > 1: dropped by the evalue kind
    ("zz", "b1", 99.0, 100, 1, 0, 1, 100, 1, 100, 1e-60, 300.0),    # unknown node of A
]


def _write(path, rows, header=False, sep="\t"):
    lines = ([sep.join(LAYOUT)] if header else []) + [sep.join(str(v) for v in r) for r in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return str(path)


@pytest.fixture
def nets(tmp_path):
    a = tmp_path / "A.tsv"
    b = tmp_path / "B.tsv"
    a.write_text("a1\ta2\na2\ta3\na3\ta4\n")
    b.write_text("b1\tb2\nb2\tb3\nb3\tb4\n")
    return read_network(a), read_network(b)


def _as_dict(t, net_a, net_b):
    return {(net_a.names[i], net_b.names[j]): s for (i, j), s in zip(t.pairs.tolist(), t.scores.tolist())}


def _recount(best):
    # pandas recount: each known pair's best row, as the score kind ranks them
    df = pd.DataFrame(ROWS, columns=LAYOUT)
    df = df[df["query"] != "zz"]
    if best == "evalue":
        df = df[df.evalue <= 1]
        e = df.groupby(["query", "subject"]).evalue.min()
        return {k: (EVALUE_CAP if v == 0 else -np.log10(v)) for k, v in e.items()}
    return df.groupby(["query", "subject"])[best].max().to_dict()


def test_positions_keep_the_best_row_per_pair(tmp_path, nets):
    path = _write(tmp_path / "hits.tsv", ROWS)
    t = read_prior(path, *nets, kind="evalue", columns="1,2,11")
    got = _as_dict(t, *nets)
    want = _recount("evalue")
    assert got.keys() == want.keys() and all(np.isclose(got[k], want[k]) for k in want)
    # hand-worked: a4/b4 keeps E = 1e-25 (not the first row's 1e-20), a1/b1 keeps 1e-50
    assert np.isclose(got[("a4", "b4")], 25.0) and np.isclose(got[("a1", "b1")], 50.0)
    assert (t.n_rows, t.n_unknown, t.n_duplicates, t.n_dropped_kind) == (9, 1, 2, 1)
    # the bit score as a similarity: a4/b4 now keeps its first row (120 > 110)
    t = read_prior(path, *nets, kind="similarity", columns="1,2,12")
    assert _as_dict(t, *nets) == _recount("bitscore") and _as_dict(t, *nets)[("a4", "b4")] == 120.0


def test_header_names_and_a_dataframe_pick_the_same_columns(tmp_path, nets):
    by_pos = _as_dict(read_prior(_write(tmp_path / "h.tsv", ROWS), *nets, kind="evalue", columns="1,2,11"), *nets)
    named = _write(tmp_path / "named.csv", ROWS, header=True, sep=",")
    assert _as_dict(read_prior(named, *nets, kind="evalue", columns="query, subject, evalue"), *nets) == by_pos
    # names in another case still find their column; positions over a file with a header line
    # (its score field is text above a number: detected under --header auto)
    assert _as_dict(read_prior(named, *nets, kind="evalue", columns="Query,Subject,EVALUE"), *nets) == by_pos
    assert _as_dict(read_prior(named, *nets, kind="evalue", columns="1,2,11"), *nets) == by_pos
    df = pd.DataFrame(ROWS, columns=LAYOUT)
    for obj, cols in ((df, "query,subject,evalue"), (df, "1,2,11"), (ROWS, "1,2,11")):  # rows: by position
        with pytest.warns(AlignerWarning) as notes:
            t = as_prior(obj, *nets, "evalue", None, "auto", cols)
        assert _as_dict(t, *nets) == by_pos and t.source == ("<prior>" if obj is ROWS else "<DataFrame prior>")
        said = " ".join(str(n.message) for n in notes)
        assert "2 prior rows repeat a pair" in said and "1 of 9 prior rows have an E-value above 1" in said


def test_fast_reader_reads_only_the_picked_columns(tmp_path):
    # the pyarrow path stays in use for a wide table (a regression guard on the fast path): the two
    # identifier columns as strings, the score column parsed as float64
    path = _write(tmp_path / "hits.tsv", ROWS)
    cols = _read_arrow(path, "\t", 12, 0, use=[0, 1, 10])
    assert cols is not None and len(cols) == 3
    assert cols[0].to_pylist()[:2] == ["a1", "a1"] and cols[2].dtype == np.float64
    assert cols[2][0] == 1e-50


def test_a_comment_line_further_down_is_skipped(tmp_path, nets):
    plain = _as_dict(read_prior(_write(tmp_path / "p.tsv", ROWS), *nets, kind="evalue", columns="1,2,11"), *nets)
    rows = list(ROWS)
    rows.insert(3, ("# a comment", "x", 1, 1, 1, 1, 1, 1, 1, 1, 1, 1))  # as wide as the rows around it
    t = read_prior(_write(tmp_path / "c.tsv", rows), *nets, kind="evalue", columns="1,2,11")
    assert _as_dict(t, *nets) == plain and t.n_rows == len(ROWS)


@pytest.mark.parametrize("columns, header, pattern, line", [
    ("1,2,13", False, r"has 12 columns but --prior-columns 1,2,13 \(prior_columns='1,2,13'\) picks column 13", 1),
    ("query,subject,eval", True, r"has no column named 'eval' \(its columns: query, subject, .*\); check "
     r"--prior-columns query,subject,eval", 1),
    ("query,subject,evalue", False, r"has no column named 'query'", 1),
    ("1,2,1", False, r"one column picked twice by --prior-columns 1,2,1", 1),
])
def test_bad_columns_name_file_line_and_option(tmp_path, nets, columns, header, pattern, line):
    path = _write(tmp_path / "hits.tsv", ROWS, header=header)
    with pytest.raises(InputFormatError, match=pattern) as exc:
        read_prior(path, *nets, columns=columns)
    assert exc.value.path == path and exc.value.line == line and str(exc.value).startswith(f"{path}, line {line}:")


def test_a_non_numeric_score_names_its_line_column_and_option(tmp_path, nets):
    rows = [list(r) for r in ROWS]
    rows[2][10] = "NA"
    path = _write(tmp_path / "hits.tsv", rows, header=True)
    with pytest.raises(InputFormatError, match=r"line 4: the score 'NA' is not a finite number; column 11, picked "
                       r"by --prior-columns query,subject,evalue"):
        read_prior(path, *nets, kind="evalue", columns="query,subject,evalue")


def test_names_need_a_header_and_objects_name_the_keyword(tmp_path, nets):
    path = _write(tmp_path / "hits.tsv", ROWS, header=True)
    with pytest.raises(InputFormatError, match=r"--header no .* picks columns by header name"):
        read_prior(path, *nets, header="no", columns="query,subject,evalue")
    df = pd.DataFrame(ROWS, columns=LAYOUT)
    with pytest.raises(InvalidParameterError, match=r"the DataFrame prior has no column named 'e_value'.*"
                       r"prior_columns='query,subject,e_value'") as exc:
        as_prior(df, *nets, "evalue", None, "auto", "query,subject,e_value")
    assert exc.value.param == "prior_columns"
    with pytest.raises(InvalidParameterError, match=r"the DataFrame prior has 12 columns but prior_columns='1,2,20'"):
        as_prior(df, *nets, "evalue", None, "auto", "1,2,20")
    with pytest.raises(InvalidParameterError, match=r"picks columns by name, but the prior is rows"):
        as_prior(ROWS, *nets, "evalue", None, "auto", "query,subject,evalue")


@pytest.mark.parametrize("bad", ["1,2", "0,1,2", "a,,b", "1,2,3,4", 11])
def test_the_option_is_checked_where_it_is_declared(bad):
    # the declaration's check (aligner/config.py): three columns, 1-based
    from aligner.config import AlignConfig

    with pytest.raises(InvalidParameterError, match=r"^prior_columns must be three comma-separated columns"):
        AlignConfig(prior_columns=bad)


@pytest.mark.parametrize("columns, kind, warned", [
    ("query,subject,evalue", "similarity", True),  # an E-value read as a similarity: the best hits count least
    ("1,2,11", "similarity", True),
    ("query,subject,evalue", "evalue", False),
    ("query,subject,bitscore", "similarity", False),
])
def test_an_evalue_column_read_as_a_similarity_is_warned_about(tmp_path, nets, columns, kind, warned):
    # Found by a user trial: a score column headed "evalue" was read as a similarity without a
    # word (NC fell from 0.919 to 0.879 on the trial's data). Common practice (the E-value of a
    # sequence search: lower is better): warn, naming the file, the column and the option.
    import warnings

    path = _write(tmp_path / "hits.tsv", ROWS, header=True)
    if warned:
        with pytest.warns(AlignerWarning, match=r"hits\.tsv: the score column is named 'evalue' but is read as a "
                                                r"similarity .*--score-kind evalue"):
            read_prior(path, *nets, kind=kind, columns=columns)
        frame = pd.read_csv(path, sep="\t")[["query", "subject", "evalue"]]
        with pytest.warns(AlignerWarning, match="named 'evalue'"):  # a DataFrame's column name too
            as_prior(frame, *nets, kind, None, "auto")
    else:
        with warnings.catch_warnings():
            warnings.simplefilter("error", AlignerWarning)
            read_prior(path, *nets, kind=kind, columns=columns)


def test_too_wide_a_prior_and_a_delimiter_for_every_file_are_named(tmp_path, nets):
    # Found by a user trial: the message for a 12-column prior did not name the option that reads
    # it, and a --delimiter meant for one file gave a column count with no hint (common practice:
    # a message says what to do).
    with pytest.raises(InputFormatError, match=r"has 12 columns, expected at most 3 for a prior table; remove the "
                                               r"extra columns or pick .* with --prior-columns"):
        read_prior(_write(tmp_path / "hits.tsv", ROWS), *nets)
    with pytest.raises(InputFormatError, match=r"A\.tsv, line 1: has 1 column, expected 2 to 3 for an edge list "
                                               r"\(the delimiter was given as 'comma' with --delimiter, which applies "
                                               r"to every input file\)"):
        read_network(tmp_path / "A.tsv", delimiter="comma")
