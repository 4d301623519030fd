"""Reading tabulated absorption coefficients from CSV files.

References
----------
.. [1] The file layout mirrors :func:`gapmatch.io.spectra.read_spectrum_csv` (our own
   convention): wavelength first, so tables copied from optical-constant data sets
   (which are usually listed against wavelength) need no conversion.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np

from ..core.absorption import TabulatedAbsorption
from ..errors import InputError
from ..units import C, H

__all__ = ["read_alpha_csv"]


def read_alpha_csv(path: str | Path) -> TabulatedAbsorption:
    """Read an absorption coefficient table.

    Parameters
    ----------
    path : str or pathlib.Path
        CSV file with two numeric columns, wavelength [nm] and absorption coefficient
        [cm^-1]. A header row (any non-numeric first row) and lines starting with ``#``
        are skipped. Wavelengths must increase strictly.

    Returns
    -------
    TabulatedAbsorption
        Energies [J] ascending, absorption coefficient [m^-1].

    Raises
    ------
    InputError
        Naming the file, the row (1-based line number) and the problem: file missing,
        fewer than two data rows, a non-numeric or non-finite value, a wavelength that is
        not > 0 or not increasing, a negative absorption coefficient, or a table that is
        zero everywhere.
    """
    p = Path(path)
    field = f"absorption file {p}"
    if not p.is_file():
        raise InputError(field, "file not found")
    wl: list[float] = []
    al: list[float] = []
    rows: list[int] = []
    with p.open(newline="", encoding="utf-8-sig") as fh:
        for lineno, row in enumerate(csv.reader(fh), start=1):
            if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
                continue
            if len(row) < 2:
                raise InputError(
                    field,
                    f"row {lineno}: needs two columns, wavelength [nm] and "
                    "absorption coefficient [cm^-1]",
                    ",".join(row),
                )
            try:
                a, b = float(row[0]), float(row[1])
            except ValueError:
                if not wl:  # header
                    continue
                raise InputError(field, f"row {lineno}: not a number", ",".join(row[:2])) from None
            if not (math.isfinite(a) and math.isfinite(b)):
                raise InputError(field, f"row {lineno}: values must be finite", ",".join(row[:2]))
            if a <= 0:
                raise InputError(field, f"row {lineno}: wavelength must be > 0 nm", a)
            if b < 0:
                raise InputError(
                    field, f"row {lineno}: absorption coefficient must be >= 0 cm^-1", b
                )
            if wl and a <= wl[-1]:
                raise InputError(
                    field,
                    f"row {lineno}: wavelengths must be strictly increasing "
                    f"(previous row {rows[-1]} has {wl[-1]:g} nm)",
                    a,
                )
            wl.append(a)
            al.append(b)
            rows.append(lineno)
    if len(wl) < 2:
        raise InputError(field, f"needs at least two data rows, found {len(wl)}")
    if max(al) <= 0:
        raise InputError(field, "the absorption coefficient is zero everywhere")
    energy = (H * C / (np.array(wl) * 1e-9))[::-1]
    alpha = (np.array(al) * 100.0)[::-1]
    return TabulatedAbsorption(energy, alpha, source=str(p))
