"""Fast CSV text of a numeric table, byte-identical to ``DataFrame.to_csv``.

``pandas.DataFrame.to_csv(index=False, float_format="%.6g")`` formats a large grid value
by value through several layers of Python; an 801 x 801 map (641,601 rows) spent about
5 s there. :func:`columns_csv` formats each column once and joins the rows in one pass,
from plain arrays (no pandas needed); :func:`frame_csv` does the same for a DataFrame.
With numba present the default ``%.6g`` format is compiled (:mod:`._csvjit`: exact
rounding, about 50 ns a cell instead of about 300 ns, row blocks on several threads);
Python's ``%`` formats the rest. The text is the same as pandas' either way (checked in
``tests/test_csv_fast.py``).
"""

from __future__ import annotations

import importlib.util
import os
import sys
from collections.abc import Mapping
from concurrent.futures import ThreadPoolExecutor

import numpy as np

__all__ = ["columns_csv", "frame_csv", "prefetch_compiled"]

#: rows formatted per compiled pass (bounds the scratch memory to about 12 MB at 8 columns)
_CHUNK_ROWS = 65536


def _column_text(values: np.ndarray, float_format: str) -> list[str]:
    if values.dtype == bool:
        return np.where(values, "True", "False").tolist()
    if np.issubdtype(values.dtype, np.integer):
        return list(map(str, values.tolist()))
    flat = np.asarray(values, dtype=float)
    uniq, inverse = np.unique(flat, return_inverse=True)
    if len(uniq) * 4 < len(flat):  # few distinct values: format those, then index
        shown = np.array(list(map(float_format.__mod__, uniq.tolist())), dtype=object)
        return shown[inverse.ravel()].tolist()
    return list(map(float_format.__mod__, flat.tolist()))


def frame_csv(frame, *, float_format: str = "%.6g", threads: int | None = None) -> str:
    """CSV text of ``frame`` as ``frame.to_csv(index=False, float_format=float_format)``.

    Parameters
    ----------
    frame : pandas.DataFrame
        Columns of floats, integers or booleans (no missing values; they are refused
        before writing by :func:`gapmatch.io.finite.check_frame`). Other column types
        are passed to pandas.
    float_format : str
        ``%``-format of float cells.
    threads : int, optional
        Threads of the compiled formatter (default: the number of CPUs); the text does
        not depend on it.

    Returns
    -------
    str
        The CSV text, header first, ``\\n`` line ends.
    """
    kinds = [frame[c].dtype.kind for c in frame.columns]
    if any(k not in "fiub" for k in kinds) or any(
        "," in str(c) or '"' in str(c) for c in frame.columns
    ):
        return frame.to_csv(index=False, float_format=float_format)
    return columns_csv(
        {c: frame[c].to_numpy() for c in frame.columns},
        float_format=float_format,
        threads=threads,
    )


def columns_csv(
    columns: Mapping[str, np.ndarray], *, float_format: str = "%.6g", threads: int | None = None
) -> str:
    """CSV text of equal-length 1-D columns, as pandas would write their DataFrame.

    Parameters
    ----------
    columns : mapping of str to numpy.ndarray
        Column name to values (floats, integers or booleans; names without ``,`` or
        ``"``), in the order they are written.
    float_format : str
        ``%``-format of float cells.
    threads : int, optional
        Threads of the compiled formatter (default: the number of CPUs).

    Returns
    -------
    str
        The CSV text, header first, ``\\n`` line ends: the bytes of
        ``pandas.DataFrame(columns).to_csv(index=False, float_format=float_format)``.
    """
    names = list(columns)
    arrays = [np.asarray(columns[c]).ravel() for c in names]
    if any(a.dtype.kind not in "fiub" for a in arrays) or any(
        "," in str(c) or '"' in str(c) for c in names
    ):
        raise ValueError("columns_csv takes numeric columns with plain names")
    if len({a.size for a in arrays}) > 1:
        raise ValueError("columns_csv: columns of different lengths")
    header = ",".join(map(str, names))
    cells = len(arrays) * (arrays[0].size if arrays else 0)
    if float_format == "%.6g" and cells and _compiled(cells):
        return header + "\n" + _compiled_rows(arrays, float_format, threads)
    cols = [_column_text(a, float_format) for a in arrays]
    lines = [header]
    lines.extend(map(",".join, zip(*cols, strict=True)))
    return "\n".join(lines) + "\n"


#: below this many cells, and while numba is not yet imported, Python formats the table:
#: numba's import and first call cost about 0.6 s, which Python's ``%`` spends on about
#: 2 million cells
_COMPILED_MIN_CELLS = 200_000


def prefetch_compiled(cells: int):
    """Load the compiled formatter on a background thread, for a table of ``cells``
    cells that will be written later (the map command starts it before computing, so
    numba's import and the load of the cached kernels overlap the numpy work, which
    releases the GIL). Returns the started thread, or ``None`` when the table would not
    use the compiled formatter; join it before :func:`columns_csv` or let that call
    wait on the import lock."""
    if cells < _COMPILED_MIN_CELLS or not _compiled(cells):
        return None
    import threading

    def load():
        _compiled_block([np.zeros(1)], 0, 1, "%.6g")

    t = threading.Thread(target=load, name="csv-formatter-load")
    t.start()
    return t


def _compiled(cells: int) -> bool:
    """Whether the compiled formatter is used for a table of ``cells`` cells (numba
    present, ``GAPMATCH_NO_JIT`` unset, and the table large or numba already loaded)."""
    if os.environ.get("GAPMATCH_NO_JIT", "0") not in ("", "0"):
        return False
    if cells < _COMPILED_MIN_CELLS and "numba" not in sys.modules:
        return False
    return importlib.util.find_spec("numba") is not None


def _compiled_block(arrays: list[np.ndarray], r0: int, r1: int, float_format: str) -> bytes:
    """Rows ``r0:r1`` as CSV bytes, formatted by the compiled kernels."""
    from . import _csvjit as jit

    ncols = len(arrays)
    cells = np.empty((r1 - r0, ncols * jit.WIDTH), np.uint8)
    lengths = np.empty((r1 - r0, ncols), np.int64)
    for c, a in enumerate(arrays):
        part = a[r0:r1]
        if part.dtype.kind == "u" and part.dtype.itemsize == 8:  # may exceed int64
            lengths[:, c] = -1
        elif part.dtype == bool:
            jit.format_bools(np.ascontiguousarray(part), cells, lengths, c)
        elif part.dtype.kind in "iu":
            jit.format_ints(np.ascontiguousarray(part, dtype=np.int64), cells, lengths, c)
        else:
            jit.format_floats(np.ascontiguousarray(part, dtype=float), cells, lengths, c)
    for r, c in zip(*np.nonzero(lengths < 0), strict=True):  # outside the fast range
        a = arrays[c]
        value = a[r0 + r]
        text = (str(int(value)) if a.dtype.kind in "iu" else float_format % value).encode()
        cells[r, c * jit.WIDTH : c * jit.WIDTH + len(text)] = np.frombuffer(text, np.uint8)
        lengths[r, c] = len(text)
    return jit.join_rows(cells, lengths, ncols).tobytes()


def _compiled_rows(arrays: list[np.ndarray], float_format: str, threads: int | None) -> str:
    """Every data row as CSV text; row blocks are formatted on ``threads`` threads (the
    kernels release the GIL) and joined in order."""
    rows = arrays[0].size
    bounds = list(range(0, rows, _CHUNK_ROWS)) + [rows]
    spans = list(zip(bounds[:-1], bounds[1:], strict=True))
    threads = (os.cpu_count() or 1) if threads is None else max(1, int(threads))
    if threads == 1 or len(spans) < 2:
        parts = [_compiled_block(arrays, a, b, float_format) for a, b in spans]
    else:
        _compiled_block(arrays, 0, min(rows, 1), float_format)  # load the kernels once
        with ThreadPoolExecutor(max_workers=threads) as pool:
            parts = list(pool.map(lambda s: _compiled_block(arrays, *s, float_format), spans))
    return b"".join(parts).decode("ascii")
