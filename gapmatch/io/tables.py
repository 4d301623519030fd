"""Reading two-column numeric CSV tables against wavelength (spectra, alpha tables)."""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = ["read_wavelength_table"]


def read_wavelength_table(
    path: str | Path, field: str, value_name: str, value_unit: str
) -> tuple[np.ndarray, np.ndarray]:
    """Read ``wavelength [nm], value`` rows from a CSV file, validating every row.

    Parameters
    ----------
    path : str or pathlib.Path
        The file. A header row (a non-numeric first row) and lines starting with ``#``
        are skipped.
    field : str
        How the file is named in error messages (e.g. ``"spectrum file x.csv"``).
    value_name, value_unit : str
        Name and unit of the second column, for error messages.

    Returns
    -------
    tuple of numpy.ndarray
        Wavelengths [nm] (strictly increasing) and values (finite, >= 0), at least two
        rows, not all zero.

    Raises
    ------
    InputError
        Naming the file, the row (1-based line number) and the problem.
    """
    p = Path(path)
    if not p.is_file():
        raise InputError(field, "file not found")
    wl: list[float] = []
    vals: list[float] = []
    rows: list[int] = []
    seen_row = False
    with p.open(newline="", encoding="utf-8-sig") as fh:
        for lineno, row in enumerate(csv.reader(fh), start=1):
            if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
                continue
            if len(row) < 2:
                raise InputError(
                    field,
                    f"row {lineno}: needs two columns, wavelength [nm] and {value_name} "
                    f"[{value_unit}]",
                    ",".join(row),
                )
            first, seen_row = not seen_row, True
            try:
                a, b = float(row[0]), float(row[1])
            except ValueError:
                if first:  # one header row
                    continue
                raise InputError(field, f"row {lineno}: not a number", ",".join(row[:2])) from None
            if not (math.isfinite(a) and math.isfinite(b)):
                raise InputError(field, f"row {lineno}: values must be finite", ",".join(row[:2]))
            if a <= 0:
                raise InputError(field, f"row {lineno}: wavelength must be > 0 nm", a)
            if b < 0:
                raise InputError(field, f"row {lineno}: {value_name} must be >= 0 {value_unit}", b)
            if wl and a <= wl[-1]:
                raise InputError(
                    field,
                    f"row {lineno}: wavelengths must be strictly increasing "
                    f"(previous row {rows[-1]} has {wl[-1]:g} nm)",
                    a,
                )
            wl.append(a)
            vals.append(b)
            rows.append(lineno)
    if len(wl) < 2:
        raise InputError(field, f"needs at least two data rows, found {len(wl)}")
    if max(vals) <= 0:
        raise InputError(field, f"the {value_name} is zero everywhere")
    return np.array(wl), np.array(vals)
