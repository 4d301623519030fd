"""Compiled ``%.6g`` formatting of numeric columns (numba; imported by :mod:`.csv_fast`).

Each cell is written into a fixed-width byte row, then the rows are joined. The digits are
rounded exactly as C's ``printf`` and Python's ``'%.6g' % x`` round them: the six-digit
integer ``n`` nearest to ``|x| * 10**k`` is found with an error-free product (Dekker's
two-product), so the decision between ``n`` and ``n + 1`` is made on the exact product,
ties to even. The fast path covers ``1e-17 <= |x| < 1e6`` and zero (there ``10**k`` is
exact); other cells (larger or smaller magnitudes, infinities, NaN) come back flagged and
are formatted by Python. ``tests/test_csv_fast.py`` checks the text against pandas.

References
----------
.. [1] T. J. Dekker, "A floating-point technique for extending the available precision",
   Numer. Math. 18, 224 (1971) (two-product by splitting).
.. [2] ISO/IEC 9899 (C standard), the ``%g`` conversion of ``fprintf``.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

_JIT = dict(cache=True, nogil=True)

#: bytes per cell in the scratch rows (the longest ``%.6g`` text is 13 characters,
#: ``-1.23457e-100``; an int64 with its sign is 20)
WIDTH = 24
_SPLIT = 134217729.0  # 2**27 + 1
_TRUE = np.frombuffer(b"True", np.uint8).copy()
_FALSE = np.frombuffer(b"False", np.uint8).copy()
_POW10 = np.array([1, 10, 100, 1000, 10000, 100000], dtype=np.int64)


@njit(**_JIT)
def _two_product_err(a, b, p):
    """The exact rounding error of ``p = a * b``: ``a * b == p + err`` (Dekker 1971)."""
    t = a * _SPLIT
    ah = t - (t - a)
    al = a - ah
    t = b * _SPLIT
    bh = t - (t - b)
    bl = b - bh
    return ((ah * bh - p) + ah * bl + al * bh) + al * bl


@njit(**_JIT)
def _floor_exact(a, k):
    """``floor(a * 10**k)`` of the exact product and where it sits relative to
    ``floor + 1/2``: returns ``(n, side)`` with side -1 (below), 0 (exactly at), +1."""
    b = 10.0**k
    p = a * b
    err = _two_product_err(a, b, p)
    n = math.floor(p)
    if p == n and err < 0.0:  # the exact product lies just below the integer p
        n -= 1.0
    d = p - (n + 0.5)  # exact: both terms lie within a factor 2 of each other
    if d > 0.0:
        side = 1
    elif d < 0.0:
        side = -1
    elif err > 0.0:
        side = 1
    elif err < 0.0:
        side = -1
    else:
        side = 0
    return n, side


@njit(**_JIT)
def _g6(x, out, row, col0):
    """Write ``'%.6g' % x`` into ``out[row, col0:]``; return its length, or -1 when the
    cell is left to Python (outside the exact fast range)."""
    if x == 0.0:
        if math.copysign(1.0, x) < 0.0:
            out[row, col0] = 45  # '-'
            out[row, col0 + 1] = 48
            return 2
        out[row, col0] = 48
        return 1
    a = abs(x)
    if not (1e-17 <= a < 1e6):  # also NaN and infinities
        return -1
    e = int(math.floor(math.log10(a)))
    n = 0.0
    side = 0
    for _ in range(3):  # log10 may be one off next to a power of ten
        if e < -17 or e > 5:
            return -1
        n, side = _floor_exact(a, 5 - e)
        if n >= 1e6:
            e += 1
        elif n < 1e5:
            e -= 1
        else:
            break
    else:
        return -1
    if side > 0 or (side == 0 and n % 2.0 == 1.0):
        n += 1.0
    if n >= 1e6:
        n = 1e5
        e += 1
    v = int(n)
    last = 5  # index of the last digit that is not a trailing zero
    while last > 0 and (v // _POW10[5 - last]) % 10 == 0:
        last -= 1
    pos = col0
    if x < 0.0:
        out[row, pos] = 45
        pos += 1
    if -4 <= e < 6:
        if e >= 0:
            for i in range(e + 1):
                out[row, pos] = 48 + (v // _POW10[5 - i]) % 10
                pos += 1
            if last > e:
                out[row, pos] = 46  # '.'
                pos += 1
                for i in range(e + 1, last + 1):
                    out[row, pos] = 48 + (v // _POW10[5 - i]) % 10
                    pos += 1
        else:
            out[row, pos] = 48
            out[row, pos + 1] = 46
            pos += 2
            for _ in range(-e - 1):
                out[row, pos] = 48
                pos += 1
            for i in range(last + 1):
                out[row, pos] = 48 + (v // _POW10[5 - i]) % 10
                pos += 1
    else:
        out[row, pos] = 48 + v // 100000
        pos += 1
        if last > 0:
            out[row, pos] = 46
            pos += 1
            for i in range(1, last + 1):
                out[row, pos] = 48 + (v // _POW10[5 - i]) % 10
                pos += 1
        out[row, pos] = 101  # 'e'
        out[row, pos + 1] = 45 if e < 0 else 43
        pos += 2
        ae = -e if e < 0 else e
        if ae >= 100:
            out[row, pos] = 48 + ae // 100
            pos += 1
        out[row, pos] = 48 + (ae // 10) % 10
        out[row, pos + 1] = 48 + ae % 10
        pos += 2
    return pos - col0


@njit(**_JIT)
def format_floats(values, out, lengths, col):
    """Cells of a float column into ``out[:, col * WIDTH:]``; ``lengths[:, col]`` gets
    each length, -1 where Python must format the cell."""
    c0 = col * WIDTH
    for r in range(values.size):
        lengths[r, col] = _g6(values[r], out, r, c0)


@njit(**_JIT)
def format_ints(values, out, lengths, col):
    """Cells of an integer column (decimal, as ``str``)."""
    c0 = col * WIDTH
    tmp = np.empty(20, np.uint8)
    for r in range(values.size):
        v = values[r]
        pos = c0
        if v < 0:
            if v == -9223372036854775808:  # no positive counterpart in int64
                lengths[r, col] = -1
                continue
            out[r, pos] = 45
            pos += 1
            v = -v
        k = 0
        while True:
            tmp[k] = 48 + v % 10
            v //= 10
            k += 1
            if v == 0:
                break
        for i in range(k - 1, -1, -1):
            out[r, pos] = tmp[i]
            pos += 1
        lengths[r, col] = pos - c0


@njit(**_JIT)
def format_bools(values, out, lengths, col):
    """Cells of a boolean column (``True`` / ``False``)."""
    c0 = col * WIDTH
    for r in range(values.size):
        text = _TRUE if values[r] else _FALSE
        for i in range(text.size):
            out[r, c0 + i] = text[i]
        lengths[r, col] = text.size


@njit(**_JIT)
def join_rows(cells, lengths, ncols):
    """Rows of cells joined with ``,`` and ending in ``\\n``, as one byte array."""
    rows = lengths.shape[0]
    total = rows * ncols  # separators and line ends
    for r in range(rows):
        for c in range(ncols):
            total += lengths[r, c]
    out = np.empty(total, np.uint8)
    pos = 0
    for r in range(rows):
        for c in range(ncols):
            c0 = c * WIDTH
            for i in range(lengths[r, c]):
                out[pos] = cells[r, c0 + i]
                pos += 1
            out[pos] = 44 if c < ncols - 1 else 10
            pos += 1
    return out
