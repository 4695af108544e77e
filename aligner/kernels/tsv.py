"""Compiled text of table columns: ``%.<P>g`` and decimal formatting of numbers into byte
slots, a check that rows are already in order, and the assembly of rows into TSV bytes.

A column here is ragged bytes: ``data`` (uint8), ``start`` and ``length`` per row.
"""

import math

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner

_TAB = 9
_NEWLINE = 10
_ZERO = 48
_DOT = 46
_MINUS = 45
_PLUS = 43
_E = 101
#: 10**0 .. 10**22, each exact in double precision
_POW10 = np.array([10.0 ** i for i in range(23)])


@inner
def _scaled(v, s):
    """v * 10**s for v > 0, in steps by exact powers of ten (at most 22 each): every step rounds
    once, so the relative error is at most (|s| // 22 + 1) half-units in the last place."""
    p = v
    while s > 22:
        p *= 1e22
        s -= 22
    while s < -22:
        p /= 1e22
        s += 22
    if s >= 0:
        return p * _POW10[s]
    return p / _POW10[-s]


@inner
def _digits(v, precision, tol):
    """The ``precision`` significant digits of v > 0 rounded to nearest, as an integer D in
    [10**(P-1), 10**P), and the decimal exponent X (v ~ D * 10**(X - P + 1)). X = -9999 when
    the rounding is too close to call in double precision (left to the exact formatter)."""
    top = _POW10[precision]
    low = _POW10[precision - 1]
    x = int(math.floor(math.log10(v)))
    for _ in range(2):
        p = _scaled(v, precision - 1 - x)
        if p >= top:
            x += 1
        elif p < low:
            x -= 1
        else:
            break
    if p < low + tol or p >= top - tol:  # near a power of ten: the decade may be wrong
        return 0, -9999
    whole = math.floor(p)
    frac = p - whole
    if abs(frac - 0.5) <= tol:  # near a tie: the exact value decides
        return 0, -9999
    d = np.int64(whole) + (1 if frac > 0.5 else 0)
    if d == np.int64(top):
        d = np.int64(low)
        x += 1
    return d, x


@inner
def _put_g(out, v, precision, tol, digits):
    """Write ``'%.<precision>g' % v`` into ``out`` (a byte slot); return its length, or -1 when
    the value is left to the exact formatter (not finite, subnormal, or too close to call).
    ``digits`` is scratch space of ``precision`` bytes."""
    if not math.isfinite(v):
        return -1
    k = 0
    if v < 0 or (v == 0 and math.copysign(1.0, v) < 0):
        out[0] = _MINUS
        k = 1
        v = -v
    if v == 0:
        out[k] = _ZERO
        return k + 1
    if v < 2.2250738585072014e-308:
        return -1
    d, x = _digits(v, precision, tol)
    if x == -9999:
        return -1
    for i in range(precision - 1, -1, -1):
        digits[i] = _ZERO + d % 10
        d //= 10
    n = precision  # significant digits kept: trailing zeros dropped, as %g does
    while n > 1 and digits[n - 1] == _ZERO:
        n -= 1
    if -4 <= x < precision:
        if x < 0:
            out[k] = _ZERO
            out[k + 1] = _DOT
            k += 2
            for _ in range(-x - 1):
                out[k] = _ZERO
                k += 1
            for i in range(n):
                out[k] = digits[i]
                k += 1
            return k
        for i in range(x + 1):
            out[k] = digits[i]
            k += 1
        if n > x + 1:
            out[k] = _DOT
            k += 1
            for i in range(x + 1, n):
                out[k] = digits[i]
                k += 1
        return k
    out[k] = digits[0]
    k += 1
    if n > 1:
        out[k] = _DOT
        k += 1
        for i in range(1, n):
            out[k] = digits[i]
            k += 1
    out[k] = _E
    out[k + 1] = _MINUS if x < 0 else _PLUS
    k += 2
    e = -x if x < 0 else x
    width = 3 if e >= 100 else 2
    for i in range(width - 1, -1, -1):
        out[k + i] = _ZERO + e % 10
        e //= 10
    return k + width


@numba.njit(cache=True, nogil=True, **OUTER)
def format_general(values, precision, width):
    """``'%.<precision>g' % v`` of every value, in slots of ``width`` bytes (precision in 1..15,
    width at least precision + 8).

    Returns ``data`` (len(values) * width bytes) and ``length`` per value; a length of -1
    marks a value left to the exact formatter: not finite, subnormal, or so close to a
    rounding tie or a power of ten that double arithmetic cannot decide (a few in 10^4).
    """
    m = len(values)
    data = np.zeros(m * width, dtype=np.uint8)
    length = np.empty(m, dtype=np.int64)
    tol = _POW10[precision] * 2.0 ** -46  # 8 times the largest rounding error of the scaled value
    digits = np.empty(precision, dtype=np.uint8)
    for i in range(m):
        length[i] = _put_g(data[i * width:(i + 1) * width], values[i], precision, tol, digits)
    return data, length


@numba.njit(cache=True, nogil=True, **OUTER)
def format_integers(values):
    """Decimal text of every int64, in slots of 20 bytes: ``data`` and ``length`` per value."""
    m = len(values)
    data = np.zeros(m * 20, dtype=np.uint8)
    length = np.empty(m, dtype=np.int64)
    tmp = np.empty(20, dtype=np.uint8)
    for i in range(m):
        v = values[i]
        base = i * 20
        k = 0
        if v < 0:
            data[base] = _MINUS
            k = 1
        t = 0
        while True:  # digits from the last; negative values by their negative remainders
            r = v % 10
            q = v // 10
            if v < 0 and r != 0:
                r = 10 - r
                q += 1
            tmp[t] = _ZERO + r
            t += 1
            v = q
            if v == 0:
                break
        for j in range(t):
            data[base + k + j] = tmp[t - 1 - j]
        length[i] = k + t
    return data, length


@numba.njit(cache=True, nogil=True, **OUTER)
def has_any_byte(data, start, length, forbidden):
    """Whether any field holds a byte with ``forbidden[byte]`` set."""
    for r in range(len(start)):
        for p in range(start[r], start[r] + length[r]):
            if forbidden[data[p]]:
                return True
    return False


@inner
def _compare(data, s1, n1, s2, n2):
    """-1, 0 or 1 as the bytes data[s1:s1+n1] sort before, equal to or after data[s2:s2+n2]."""
    for i in range(min(n1, n2)):
        a = data[s1 + i]
        b = data[s2 + i]
        if a != b:
            return -1 if a < b else 1
    if n1 == n2:
        return 0
    return -1 if n1 < n2 else 1


@numba.njit(cache=True, nogil=True, **OUTER)
def rows_in_order(data, start, length):
    """Whether the rows are non-decreasing by their fields compared as bytes, field 0 first
    (``start`` and ``length`` of shape (fields, rows))."""
    for r in range(1, start.shape[1]):
        for c in range(start.shape[0]):
            o = _compare(data, start[c, r - 1], length[c, r - 1], start[c, r], length[c, r])
            if o < 0:
                break
            if o > 0:
                return False
    return True


@numba.njit(cache=True, nogil=True, **OUTER)
def row_offsets(width, first):
    """``width`` turned in place into each row's offset: ``first`` plus the widths of the rows
    before it; returns the end of the last row."""
    p = first
    for r in range(width.shape[0]):
        w = width[r]
        width[r] = p
        p += w
    return p


@numba.njit(cache=True, nogil=True, **OUTER)
def place_field(out, cursor, data, start, length, sep):
    """Copy each row's field to ``out[cursor[r]:]`` followed by the byte ``sep``, and move the
    row's cursor past them (one column of the rows at a time: no table of all the fields'
    starts and lengths is made)."""
    for r in range(cursor.shape[0]):
        p = cursor[r]
        s = start[r]
        n = length[r]
        for i in range(n):
            out[p + i] = data[s + i]
        out[p + n] = sep
        cursor[r] = p + n + 1
