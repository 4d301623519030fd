"""Output guards: no NaN or Infinity is ever written to JSON or CSV.

``json.dumps`` writes ``NaN`` and ``Infinity`` by default, which is not JSON and which a
reader takes for a number. Every JSON output of gapmatch goes through :func:`dumps`
(``allow_nan=False``), every CSV table through :func:`check_frame`; a non-finite value
becomes one :class:`gapmatch.errors.InputError` instead of a silent wrong number.
"""

from __future__ import annotations

import json
from typing import Any

from ..errors import InputError

__all__ = ["dumps", "check_frame"]

_PROBLEM = (
    "a computed value is not a finite number (NaN or Infinity); nothing was written. "
    "The inputs are at the edge of the model (e.g. extreme ERE, concentration or gaps)"
)


def dumps(obj: Any, *, what: str = "JSON output", **kwargs) -> str:
    """``json.dumps(obj, allow_nan=False, **kwargs)``, one-line error on NaN or Infinity.

    Parameters
    ----------
    obj : Any
        What to serialise.
    what : str
        Name of the output, shown in the error message.
    **kwargs
        Passed to :func:`json.dumps` (``indent``, ``default``...).
    """
    try:
        return json.dumps(obj, allow_nan=False, **kwargs)
    except ValueError as exc:
        if "out of range float" not in str(exc).lower():
            raise
        raise InputError(what, _PROBLEM) from None


def check_frame(frame, *, what: str = "CSV output"):
    """Return ``frame`` unchanged if its numeric cells are finite (empty cells allowed).

    Parameters
    ----------
    frame : pandas.DataFrame
        The table to be written.
    what : str
        Name of the output, shown in the error message.

    Raises
    ------
    InputError
        If a numeric cell is +-Infinity, or NaN where the column has no missing values
        by design (every numeric column here: gapmatch writes no empty numeric cells).
    """
    import numpy as np

    num = frame.select_dtypes(include="number")
    if num.size and not np.isfinite(num.to_numpy(dtype=float)).all():
        bad = [c for c in num.columns if not np.isfinite(num[c].to_numpy(dtype=float)).all()]
        raise InputError(what, f"{_PROBLEM}; columns {', '.join(map(str, bad))}")
    return frame


def check_columns(columns, *, what: str = "CSV output"):
    """Return ``columns`` unchanged if every numeric cell is finite (as
    :func:`check_frame`, for a mapping of column name to array).

    Parameters
    ----------
    columns : mapping of str to numpy.ndarray
        The table to be written, column by column.
    what : str
        Name of the output, shown in the error message.

    Raises
    ------
    InputError
        If a numeric cell is +-Infinity or NaN.
    """
    import numpy as np

    bad = [
        str(c)
        for c, v in columns.items()
        if np.asarray(v).dtype.kind == "f" and not np.isfinite(v).all()
    ]
    if bad:
        raise InputError(what, f"{_PROBLEM}; columns {', '.join(bad)}")
    return columns
