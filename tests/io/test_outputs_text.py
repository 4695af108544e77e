"""Text of the output tables: the compiled formatter and row assembly against Python and pandas.

Outside references: Python's own ``%`` formatting (``'%.10g' % v``, ``str(i)``), and pandas'
``DataFrame.to_csv`` (tab-separated, no index, ``\\n`` line ends), which wrote these tables
before and whose text they must keep byte for byte (docs/formats.md).
"""

import io

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from aligner.core import tsv
from aligner.io import outputs
from aligner.io.outputs import table_text, write_outputs


@pytest.fixture(autouse=True)
def compiled_for_every_table(monkeypatch):
    # tables this small are otherwise left to pandas (aligner.io.outputs._COMPILED_FROM_ROWS)
    monkeypatch.setattr(outputs, "_COMPILED_FROM_ROWS", 1)


def _texts(field):
    return [bytes(field.data[s:s + n]).decode() for s, n in zip(field.start, field.length)]


def _to_csv(df, float_format="%.10g", na_rep=""):
    buf = io.StringIO()
    df.to_csv(buf, sep="\t", index=False, float_format=float_format, na_rep=na_rep, lineterminator="\n")
    return buf.getvalue()


#: values where %g changes notation, rounds a tie (2**-15 has 11 significant digits ending in 5;
#: 12345678905 too), carries into a new decade, or is not finite
_EDGES = [0.0, -0.0, 1.0, -1.0, 0.5, 2.0**-15, 12345678905.0, 9999999999.5, 99999.999995, 1e-4, 9.99999999995e-5,
          1e-5, 0.0001234, 1e9, 1e10, 123456789.05, 0.1 + 0.2, 253.1, 1e16, 1e22, 1e23, 1e100, 1e-100, 1e308,
          1e-300, 5e-324, 2.2250738585072014e-308, np.nan, np.inf, -np.inf]


@pytest.mark.parametrize("precision", [1, 3, 6, 10, 12, 15])
def test_float_text_equals_python_formatting(rng, precision):
    # Reference: Python's '%.<P>g' % v (NaN written as na_rep, as pandas does)
    fmt = f"%.{precision}g"
    bits = rng.integers(0, 2**63, 20000, dtype=np.uint64) | (rng.integers(0, 2, 20000, dtype=np.uint64) << 63)
    values = np.concatenate([_EDGES, bits.view(np.float64), rng.random(20000) * 10.0 ** rng.integers(-30, 30, 20000),
                             [k * 2.0**-e for k in range(1, 60) for e in range(0, 40)],
                             [10.0**k for k in range(-300, 300, 7)]])
    got = _texts(tsv.float_field(values, fmt, "NA"))
    assert got == ["NA" if np.isnan(v) else fmt % v for v in values]


@settings(max_examples=300, deadline=None)
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True), min_size=1, max_size=20))
def test_float_text_equals_python_formatting_for_any_double(values):
    # Reference: Python's '%.10g' % v, on doubles hypothesis picks (it favours awkward ones)
    got = _texts(tsv.float_field(np.array(values, dtype=np.float64), "%.10g", ""))
    assert got == ["" if v != v else "%.10g" % v for v in values]


def test_integer_text_equals_str(rng):
    # Reference: Python's str of each integer, the ends of int64 included
    values = np.concatenate([rng.integers(-2**63, 2**63 - 1, 5000), [0, -1, 1, 9, 10, -10, -2**63, 2**63 - 1]])
    assert _texts(tsv.int_field(values)) == [str(int(v)) for v in values]


def test_other_float_formats_are_left_to_pandas():
    assert tsv.float_field(np.array([1.5]), "%.3f", "") is None
    assert tsv.float_field(np.array([1.5]), "%.20g", "") is None


def _frame(rng, n, string_dtype):
    names = np.array(["ünï", "a b", ""] + [f"n{i}" for i in rng.integers(0, 10**6, n)], dtype=object)[:n]
    return pd.DataFrame({"node_a": pd.array(names, dtype=string_dtype), "node_b": names[::-1].copy(),
                         "score": rng.random(n) * 1e-4, "prior": rng.integers(0, 1000, n) / 10.0,
                         "conserved": rng.integers(0, 50, n), "confidence": rng.random(n)})


@pytest.mark.parametrize("string_dtype", [object, "string[python]", "string[pyarrow]"])
def test_table_text_equals_pandas_to_csv(rng, string_dtype):
    # Reference: pandas DataFrame.to_csv, for text held as objects, python strings or pyarrow strings
    df = _frame(rng, 500, string_dtype)
    df.loc[3, "score"] = np.nan
    df.loc[4, "prior"] = np.inf
    assert table_text(df) == _to_csv(df)
    assert table_text(df, float_format="%.6g", na_rep="NA") == _to_csv(df, "%.6g", "NA")


@pytest.mark.parametrize("odd", ['has"quote', "has\ttab", "has\nnewline", "has\rreturn", None])
def test_table_text_with_text_a_csv_writer_quotes_or_a_missing_value(rng, odd):
    # Reference: pandas DataFrame.to_csv (these are written by pandas itself)
    df = _frame(rng, 20, object)
    df.loc[5, "node_b"] = odd
    assert table_text(df) == _to_csv(df)


def test_table_text_of_other_columns_and_shapes(rng):
    # Reference: pandas DataFrame.to_csv on what the compiled path does not render itself
    df = _frame(rng, 10, object)
    cases = [df.iloc[:0], df[["node_a"]], df.assign(flag=df["conserved"] > 3), df.assign(f32=np.float32(0.1)),
             df.assign(n=pd.array([1] * 9 + [None], dtype="Int64")), df.rename(columns={"node_a": 'a"b'})]
    for case in cases:
        assert table_text(case) == _to_csv(case)
    assert table_text(df, float_format="%.3f") == _to_csv(df, "%.3f")


class _Result:
    def __init__(self, pairs, conserved):
        self.pairs, self.conserved_edges, self.summary = pairs, conserved, {"x": 1}

    def transferred_edges(self):
        return pd.DataFrame({"direction": [], "support": []})


@pytest.mark.parametrize("shuffle", [False, True])
def test_write_outputs_sorts_like_pandas(tmp_path, rng, shuffle):
    # Reference: pandas sort_values (stable) then to_csv, as the files were written before. Sorted
    # input is written as it is; shuffled input, repeated keys included, is sorted first.
    pairs = _frame(rng, 300, object).sort_values(["node_a", "node_b"], kind="stable")
    a = rng.choice(np.array(["x", "ab", "a", "é", "B"], dtype=object), 400)
    cons = pd.DataFrame({"node_a1": a, "node_a2": rng.choice(a, 400), "node_b1": a[::-1], "node_b2": a})
    cons = cons.sort_values(["node_a1", "node_a2"], kind="stable")
    if shuffle:
        pairs, cons = pairs.sample(frac=1, random_state=1), cons.sample(frac=1, random_state=2)
    write_outputs(tmp_path / "out", _Result(pairs, cons))
    want_pairs = _to_csv(pairs.sort_values(["node_a", "node_b"], kind="stable"))
    want_cons = _to_csv(cons.sort_values(["node_a1", "node_a2"], kind="stable"))
    assert (tmp_path / "out" / "alignment.tsv").read_text() == want_pairs
    assert (tmp_path / "out" / "conserved_edges.tsv").read_text() == want_cons


def test_text_field_of_sliced_and_chunked_arrays():
    # Reference: the arrow array's own Python strings
    arr = pa.chunked_array([pa.array(["a", "bc"]), pa.array(["", "déf", "g"])])
    assert _texts(tsv.text_field(arr)) == arr.to_pylist()
    sliced = pa.array(["x", "yy", "zzz", "w"]).slice(1, 2)
    assert _texts(tsv.text_field(sliced)) == ["yy", "zzz"]
    assert tsv.text_field(pa.array(["a", None])) is None
    assert tsv.text_field(pa.array([1, 2])) is None


def test_small_tables_are_the_same_text_through_pandas(rng, monkeypatch):
    # Reference: the compiled path (forced above) against the pandas path used below the threshold
    df = _frame(rng, 50, object)
    compiled = table_text(df)
    monkeypatch.setattr(outputs, "_COMPILED_FROM_ROWS", 10**9)
    assert table_text(df) == compiled == _to_csv(df)


@pytest.mark.parametrize("rows", [30, 25_000])
def test_a_first_field_starting_with_hash_is_quoted(rows, monkeypatch):
    # Reference: Python's csv module (tab delimiter, '"' quote), after dropping the lines that
    # start with '#' as the readers do (docs/formats.md: such lines are comments). Unquoted,
    # a row of a node named '#x' was read back as a comment and lost. Both the pandas path
    # (small tables) and the compiled one; a '#' inside a quoted field's line is left alone.
    import csv

    monkeypatch.setattr(outputs, "_COMPILED_FROM_ROWS", 20_000)
    a = [f"#n{i}" if i % 3 == 0 else f"n{i}" for i in range(rows)]
    b = [f"m{i}" if i != 4 else "x\n#y" for i in range(rows)]
    df = pd.DataFrame({"node_a": a, "node_b": b, "score": np.arange(rows) / 7.0})
    text = table_text(df)
    back = list(csv.reader(io.StringIO(text), delimiter="\t"))
    assert [r[:2] for r in back[1:]] == [[x, y] for x, y in zip(a, b)]
    # the one line starting with '#' is inside the quoted field "x\n#y"
    assert [line[:3] for line in text.split("\n") if line.startswith("#")] == ['#y"']
    assert text.count('"#n0"\t') == 1 and '"x\n#y"' in text
