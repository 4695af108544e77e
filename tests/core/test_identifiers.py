"""Interning and look-up of identifiers against plain Python (sorted, set, dict)."""

import numpy as np
import pyarrow as pa

from aligner.core.identifiers import _ARROW_NAMES, intern, lookup


def test_intern_numbers_by_code_point_like_python_sorted():
    # reference: Python's sorted() over the set of identifiers (code point order) and list.index
    rng = np.random.default_rng(0)
    words = ["b", "a", "ä", "B", "z", "10", "9", "a b", "ß", "\u00e9", "e\u0301", "日本", "", "𝔘"]
    a = [words[i] for i in rng.integers(0, len(words), 300)]
    b = [words[i] for i in rng.integers(0, len(words) - 3, 200)]
    for cols in ((a, b), (pa.array(a), pa.array(b)), (pa.chunked_array([a[:100], a[100:]]), np.array(b, dtype=object))):
        names, codes = intern(*cols)
        want = sorted(set(a) | set(b))
        assert names.dtype == object and names.tolist() == want
        assert codes.dtype == np.int64 and codes.tolist() == [want.index(x) for x in a + b]
    names, codes = intern([], [])
    assert len(names) == 0 and len(codes) == 0


def test_lookup_uses_the_interned_names_and_matches_a_dict():
    names, _ = intern(["x", "y", "w"], ["v"])
    assert id(names) in _ARROW_NAMES  # kept from the interning, not converted again
    index = {s: i for i, s in enumerate(names)}
    query = ["y", "nope", "v", "w", "y"]
    assert lookup(names, query).tolist() == [index.get(q, -1) for q in query]
    copy = names.copy()  # another array with the same identifiers: converted, same answer
    assert lookup(copy, pa.array(query)).tolist() == [index.get(q, -1) for q in query]
    key = id(names)
    del names
    assert key not in _ARROW_NAMES  # forgotten with its array


def test_as_arrow_strings_takes_fixed_width_text_as_it_is():
    # names kept in a run's state come back as numpy fixed-width text; the fast conversion must
    # give the same strings as going through Python objects (reference: the Python strings).
    import pyarrow as pa

    from aligner.core.identifiers import as_arrow_strings

    names = np.array(["b7", "a", "zeta-12", "é ñ", ""], dtype=str)
    got = as_arrow_strings(names)
    assert got.type == pa.string()
    assert got.to_pylist() == [str(v) for v in names.tolist()]
