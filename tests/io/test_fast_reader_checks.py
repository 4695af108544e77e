"""The fast reader's look at a column's bytes against pyarrow's own string functions."""

import numpy as np
import pyarrow as pa
import pyarrow.compute as pac
import pytest

from aligner.io.readers import _needs_care, read_network


def _reference(col, first, comment=True):
    """What the fast reader asked of pyarrow's string kernels before, column by column."""
    if len(col) == 0:
        return False
    bad = pac.any(pac.equal(pac.utf8_length(col), 0)).as_py() or pac.any(
        pac.match_substring_regex(col, "[\r\n\"]")).as_py()
    if comment:
        bad = bad or pac.any(pac.starts_with(pac.utf8_ltrim(col, characters=" \t"), "#")).as_py()
    return bool(bad or (first and col[0].as_py().startswith("\ufeff")))


PIECES = ["a", "b7", "ß", "日", " ", "\t", "#", "\"", "\r", "\n", "\ufeff", "x#y", "é"]


@pytest.mark.parametrize("seed", range(6))
def test_needs_care_agrees_with_pyarrow_string_functions(seed):
    rng = np.random.default_rng(seed)
    for _ in range(200):
        n = int(rng.integers(0, 6))
        safe = rng.random() < 0.5  # half of the columns hold only plain values
        pieces = PIECES[:4] + PIECES[-2:] if safe else PIECES
        values = ["".join(rng.choice(pieces, size=int(rng.integers(0 if not safe else 1, 4)))) for _ in range(n)]
        col = pa.array(["pad"] + values + ["pad"], type=pa.string()).slice(1, n)  # offset != 0
        for first in (True, False):
            for comment in (True, False):
                assert _needs_care(col, first=first, comment=comment) == _reference(col, first, comment), values


@pytest.mark.parametrize("values, want", [
    (["a", "\t#b"], True), (["a", " #b"], True), (["a", " \t #"], True), (["#"], True),  # comments after blanks
    (["a", " a"], False), (["\tb", "x#"], False), (["a", "b c"], False),                   # blanks, '#' inside
    (["", "a"], True), (["a\"b"], True), (["\ufeffa"], True), (["a", "\ufeffa"], False),   # empty, quote, BOM first
])
def test_needs_care_hand_worked(values, want):
    col = pa.array(values, type=pa.string())
    assert _needs_care(col, first=True) is want and _reference(col, True) is want


def test_files_the_fast_reader_hands_over_are_read_alike(tmp_path):
    # a comment further down (after spaces), a quoted field: the careful reader gives the same
    # network as the same file without them (hand-worked)
    plain = tmp_path / "plain.tsv"
    plain.write_text("a\tb\nb\tc\n")
    tricky = tmp_path / "tricky.tsv"
    tricky.write_text("a\tb\n  # note\n\"b\"\tc\n")
    p, t = read_network(str(plain)), read_network(str(tricky))
    assert p.names.tolist() == t.names.tolist() == ["a", "b", "c"] and p.edges.tolist() == t.edges.tolist()


@pytest.mark.parametrize("seed", range(3))
def test_trim_agrees_with_pyarrow_utf8_trim(seed):
    # the fast reader strips the spaces and tabs around fields only when a value starts or ends with
    # one (a look at the bytes); the reference is pyarrow's own utf8_trim on every column
    from aligner.io.readers import _trim

    rng = np.random.default_rng(seed)
    for _ in range(200):
        n = int(rng.integers(0, 6))
        values = ["".join(rng.choice(PIECES, size=int(rng.integers(0, 4)))) for _ in range(n)]
        col = pa.array(["pad"] + values + [" pad "], type=pa.string()).slice(1, n)  # offset != 0
        assert _trim(col).to_pylist() == pac.utf8_trim(col, characters=" \t").to_pylist(), values
