"""Reading tabulated absorption coefficients from CSV files.

References
----------
.. [1] The file layout mirrors :func:`gapmatch.io.spectra.read_spectrum_csv` (our own
   convention): wavelength first, so tables copied from optical-constant data sets
   (which are usually listed against wavelength) need no conversion.
"""

from __future__ import annotations

from pathlib import Path

from ..core.absorption import TabulatedAbsorption
from ..units import C, H
from .tables import read_unit_table

__all__ = ["read_alpha_csv"]


def read_alpha_csv(path: str | Path) -> TabulatedAbsorption:
    """Read an absorption coefficient table.

    Parameters
    ----------
    path : str or pathlib.Path
        CSV file with two numeric columns, wavelength [nm] and absorption coefficient
        [cm^-1]. An optional header row may state other units (wavelength in µm or
        photon energy in eV; alpha in m^-1, µm^-1 or nm^-1; see
        :mod:`gapmatch.io.tables`). Lines starting with ``#`` are skipped.

    Returns
    -------
    TabulatedAbsorption
        Energies [J] ascending, absorption coefficient [m^-1]. Its ``source`` states
        the extension used outside the table: above the highest tabulated photon
        energy (below the shortest wavelength) alpha keeps its last value; below the
        lowest it is 0, so a table must reach each junction's gap (a table that does
        not is refused when the junction is built, naming the file).

    Raises
    ------
    InputError
        Naming the file, the row (1-based line number) and the problem: file missing,
        fewer than two data rows, a non-numeric or non-finite value, a wavelength that is
        not > 0 or not increasing, a negative absorption coefficient, or a table that is
        zero everywhere.
    """
    p = Path(path)
    t = read_unit_table(p, f"absorption file {p}", "absorption coefficient")
    energy = (H * C / (t.wavelength_nm * 1e-9))[::-1]
    alpha = (t.values * 100.0)[::-1]  # cm^-1 -> m^-1
    lo_nm, hi_nm = float(t.wavelength_nm[0]), float(t.wavelength_nm[-1])
    extension = (
        f"alpha held at its {lo_nm:g} nm value ({float(t.values[0]):.4g} cm^-1) at shorter "
        f"wavelengths; 0 beyond {hi_nm:g} nm"
    )
    return TabulatedAbsorption(energy, alpha, source=f"{p} ({t.describe()}; {extension})")
