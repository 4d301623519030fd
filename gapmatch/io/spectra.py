"""Loading spectra: ASTM G173-03 through pvlib, user CSV files, and name resolution.

References
----------
.. [1] ASTM G173-03, Standard Tables for Reference Solar Spectral Irradiances (the table
   packaged with pvlib, read by :func:`pvlib.spectrum.get_reference_spectra`).
"""

from __future__ import annotations

import csv
import math
from functools import cache
from pathlib import Path

import numpy as np

from ..core.spectra import BlackbodySun, Spectrum, TabulatedSpectrum
from ..errors import InputError

__all__ = [
    "STANDARD_SPECTRA",
    "SPECTRUM_CHOICES",
    "standard_spectrum",
    "read_spectrum_csv",
    "get_spectrum",
]

#: standard spectrum name -> column of pvlib's ASTM G173-03 table
STANDARD_SPECTRA = {"AM1.5G": "global", "AM1.5D": "direct", "AM0": "extraterrestrial"}
#: every value accepted for a spectrum name
SPECTRUM_CHOICES = (*STANDARD_SPECTRA, "blackbody")


@cache
def _g173(column: str) -> TabulatedSpectrum:
    import pvlib

    table = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    name = next(k for k, v in STANDARD_SPECTRA.items() if v == column)
    return TabulatedSpectrum(
        table.index.to_numpy(dtype=float),
        table[column].to_numpy(dtype=float),
        name=name,
        source=f"ASTM G173-03 ({column}), as packaged with pvlib {pvlib.__version__}",
    )


def standard_spectrum(name: str) -> TabulatedSpectrum:
    """One of the ASTM G173-03 reference spectra.

    Parameters
    ----------
    name : {"AM1.5G", "AM1.5D", "AM0"}
        AM1.5 global tilt (37 deg), AM1.5 direct (+circumsolar), or the extraterrestrial
        spectrum of the same table.

    Returns
    -------
    TabulatedSpectrum
        280-4000 nm, W m^-2 nm^-1; integrals 1000.37, 900.14 and 1347.93 W m^-2.
    """
    key = _canonical(name)
    if key not in STANDARD_SPECTRA:
        raise InputError("spectrum", f"must be one of {', '.join(SPECTRUM_CHOICES)}", name)
    return _g173(STANDARD_SPECTRA[key])


def _canonical(name: str) -> str:
    for k in SPECTRUM_CHOICES:
        if str(name).strip().lower() == k.lower():
            return k
    return str(name)


def read_spectrum_csv(path: str | Path, name: str | None = None) -> TabulatedSpectrum:
    """Read a spectrum from a CSV file.

    Parameters
    ----------
    path : str or pathlib.Path
        File with two numeric columns, wavelength [nm] and spectral irradiance
        [W m^-2 nm^-1]. A header row (any non-numeric first row) and lines starting with
        ``#`` are skipped.
    name : str, optional
        Label; defaults to the file name.

    Returns
    -------
    TabulatedSpectrum

    Raises
    ------
    InputError
        Naming the file, the row (1-based line number) and the problem: fewer than two
        data rows, a non-numeric or non-finite value, wavelengths not strictly
        increasing or not positive, negative irradiance.
    """
    p = Path(path)
    field = f"spectrum file {p}"
    if not p.is_file():
        raise InputError(field, "file not found")
    wl: list[float] = []
    irr: list[float] = []
    rows: list[int] = []
    seen_row = False
    with p.open(newline="", encoding="utf-8-sig") as fh:
        for lineno, row in enumerate(csv.reader(fh), start=1):
            if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
                continue
            if len(row) < 2:
                raise InputError(
                    field,
                    f"row {lineno}: needs two columns, wavelength [nm] and "
                    "irradiance [W m^-2 nm^-1]",
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
                raise InputError(field, f"row {lineno}: irradiance must be >= 0 W m^-2 nm^-1", b)
            if wl and a <= wl[-1]:
                raise InputError(
                    field,
                    f"row {lineno}: wavelengths must be strictly increasing "
                    f"(previous row {rows[-1]} has {wl[-1]:g} nm)",
                    a,
                )
            wl.append(a)
            irr.append(b)
            rows.append(lineno)
    if len(wl) < 2:
        raise InputError(field, f"needs at least two data rows, found {len(wl)}")
    if sum(irr) <= 0:
        raise InputError(field, "the irradiance is zero everywhere")
    return TabulatedSpectrum(np.array(wl), np.array(irr), name=name or p.stem, source=str(p))


def get_spectrum(
    spectrum: str | Spectrum = "AM1.5G",
    *,
    spectrum_file: str | Path | None = None,
    sun_temperature_K: float = 6000.0,  # noqa: N803
    irradiance_W_m2: float | None = None,  # noqa: N803
    concentration: float = 1.0,
) -> Spectrum:
    """Resolve a spectrum from a name, a file or an object, then scale it.

    Parameters
    ----------
    spectrum : str or Spectrum
        ``"AM1.5G"``, ``"AM1.5D"``, ``"AM0"``, ``"blackbody"``, or a Spectrum object.
    spectrum_file : str or pathlib.Path, optional
        CSV file (see :func:`read_spectrum_csv`); overrides ``spectrum``.
    sun_temperature_K : float
        Blackbody sun temperature [K], in [1000, 20000] (``blackbody`` only).
    irradiance_W_m2 : float, optional
        Rescale the unconcentrated spectrum to this total [W m^-2], in (0, 1e5].
    concentration : float
        Concentration [suns], in (0, 46,200].

    Returns
    -------
    Spectrum
    """
    if spectrum_file is not None:
        spec: Spectrum = read_spectrum_csv(spectrum_file)
    elif isinstance(spectrum, Spectrum):
        spec = spectrum
    elif _canonical(spectrum) == "blackbody":
        spec = BlackbodySun(sun_temperature_K)
    else:
        spec = standard_spectrum(spectrum)
    if irradiance_W_m2 is not None or concentration != 1.0:
        spec = spec.scaled(irradiance_W_m2=irradiance_W_m2, concentration=concentration)
    return spec
