"""Score kinds turned into similarities (aligner.core.prior), checked against docs/formats.md's table."""

import math

import numpy as np

from aligner.core.prior import transform_scores


def test_a_zero_similarity_is_positive_zero():
    # docs/formats.md: similarities are >= 0. E = 1 gives -log10(1), which numpy computes as -0.0,
    # and a file may hold -0 as a similarity; both must come out as 0.0, not -0.0, or alignment.tsv
    # shows "-0" in its prior column (noticed by differential testing).
    for kind, raw in (("evalue", [1.0, 0.5]), ("similarity", [-0.0, 2.0])):
        s, keep = transform_scores(np.array(raw), kind)
        assert keep.all()
        assert not np.signbit(s).any(), (kind, s)
        assert s[0] == 0.0


def test_evalue_transform_against_math_log10():
    # docs/formats.md: -log10(E), E = 0 capped at 310, rows with E > 1 dropped; checked against
    # Python's math.log10. E-values below 1e-310 (subnormal doubles) are capped as E = 0 is.
    raw = np.array([0.0, 1e-320, 1e-300, 1e-30, 0.5, 1.0, 2.0])
    s, keep = transform_scores(raw, "evalue")
    assert keep.tolist() == [True, True, True, True, True, True, False]
    want = [310.0, 310.0, -math.log10(1e-300), -math.log10(1e-30), -math.log10(0.5), 0.0]
    assert np.allclose(s[:6], want, rtol=1e-15, atol=0)
