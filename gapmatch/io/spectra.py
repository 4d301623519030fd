"""Loading spectra: ASTM G173-03 through pvlib, user CSV files, and name resolution.

References
----------
.. [1] ASTM G173-03, Standard Tables for Reference Solar Spectral Irradiances (the table
   packaged with pvlib, read by :func:`pvlib.spectrum.get_reference_spectra`).
"""

from __future__ import annotations

from functools import cache
from pathlib import Path

from ..core.spectra import BlackbodySun, Spectrum, TabulatedSpectrum
from ..errors import InputError
from .tables import read_unit_table

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


def _pvlib_g173_file() -> Path | None:
    """pvlib's packaged ASTM G173-03 table, found without importing pvlib (slow)."""
    import importlib.util

    spec = importlib.util.find_spec("pvlib")
    if spec is None or not spec.submodule_search_locations:
        return None
    p = Path(next(iter(spec.submodule_search_locations))) / "data" / "ASTMG173.csv"
    return p if p.is_file() else None


@cache
def _g173(column: str) -> TabulatedSpectrum:
    from importlib.metadata import version

    name = next(k for k, v in STANDARD_SPECTRA.items() if v == column)
    path = _pvlib_g173_file()
    if path is not None:
        # the file pvlib.spectrum.get_reference_spectra reads (a title line, then
        # wavelength and one column per spectrum); numpy parses it to the same doubles
        import numpy as np

        with path.open(encoding="utf-8") as fh:
            fh.readline()
            header = [h.strip() for h in fh.readline().split(",")]
        data = np.loadtxt(path, delimiter=",", skiprows=2)
        wl, irr = data[:, 0], data[:, header.index(column)]
    else:  # pragma: no cover - a pvlib without the data file where expected
        import pvlib

        table = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
        wl, irr = table.index.to_numpy(dtype=float), table[column].to_numpy(dtype=float)
    return TabulatedSpectrum(
        wl,
        irr,
        name=name,
        source=f"ASTM G173-03 ({column}), as packaged with pvlib {version('pvlib')}",
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
    for k in (*SPECTRUM_CHOICES, "file"):
        if str(name).strip().lower() == k.lower():
            return k
    return str(name)


#: plausible wavelength range of a spectrum file [nm]; outside it the file is taken to be
#: in other units (common practice, no source: solar spectra span ~280-4000 nm)
WAVELENGTH_RANGE_NM = (100.0, 1e5)
#: plausible integral of a one-sun spectrum file [W m^-2] (common practice, no source:
#: terrestrial and extraterrestrial one-sun spectra lie near 100-1400 W m^-2)
FILE_IRRADIANCE_RANGE_W_M2 = (1.0, 1e5)


def read_spectrum_csv(
    path: str | Path, name: str | None = None, *, column: int | str | None = None
) -> TabulatedSpectrum:
    """Read a spectrum from a CSV file, with units from its header.

    Parameters
    ----------
    path : str or pathlib.Path
        UTF-8 CSV file: the spectral axis, then one or more value columns. An optional
        header row names the columns and may state units: wavelength in nm (default), µm
        or photon energy in eV; spectral irradiance in W m^-2 nm^-1 (default),
        W m^-2 µm^-1, mW cm^-2 nm^-1, W m^-2 eV^-1 and similar (see
        :mod:`gapmatch.io.tables`). Lines starting with ``#`` are skipped.
    name : str, optional
        Label; defaults to the file name.
    column : int or str, optional
        The irradiance column, by 1-based number or header name; required when the file
        has more than two columns.

    Returns
    -------
    TabulatedSpectrum
        Its ``source`` names the file, the column and every unit conversion or
        assumption made. The same object for repeated calls while the file is
        unchanged (same path, modification time and size): it is read and validated once.

    Raises
    ------
    InputError
        Naming the file, the row (1-based line number) and the problem: fewer than two
        data rows, a non-numeric or non-finite value, wavelengths not strictly
        increasing or not positive, negative irradiance, several value columns and none
        chosen, or wavelengths outside 100-100,000 nm after unit conversion (a sign of
        unlabelled µm or eV).
    """
    p = Path(path)
    try:
        st = p.stat()
        key = (str(p.resolve()), st.st_mtime_ns, st.st_size, name, column)
    except OSError:
        key = None  # let the reader name the problem
    if key is not None and key in _READ_CACHE:
        return _READ_CACHE[key]
    field = f"spectrum file {p}"
    t = read_unit_table(p, field, "irradiance", column=column)
    lo, hi = WAVELENGTH_RANGE_NM
    if t.wavelength_nm[0] < lo or t.wavelength_nm[-1] > hi:
        hint = (
            "; if the axis is in µm or eV, say so in its header, e.g. 'wavelength [um]'"
            if t.wavelength_nm[-1] < lo
            else ""
        )
        raise InputError(
            field,
            f"wavelengths {t.wavelength_nm[0]:.4g}-{t.wavelength_nm[-1]:.4g} nm lie outside "
            f"the plausible {lo:g}-{hi:g} nm ({t.describe()}){hint}",
        )
    spec = TabulatedSpectrum(
        t.wavelength_nm, t.values, name=name or p.stem, source=f"{p} ({t.describe()})"
    )
    if key is not None:
        if len(_READ_CACHE) >= 16:
            _READ_CACHE.pop(next(iter(_READ_CACHE)))
        _READ_CACHE[key] = spec
    return spec


#: spectra read from files, by (path, modification time, size, name, column): a file that
#: does not change is read and validated once per process, however many layers ask for it
_READ_CACHE: dict[tuple, TabulatedSpectrum] = {}


def _check_file_irradiance(spec: TabulatedSpectrum) -> None:
    """Refuse a spectrum file whose integral suggests a unit error."""
    lo, hi = FILE_IRRADIANCE_RANGE_W_M2
    total = spec.total_irradiance_W_m2
    if not lo <= total <= hi:
        raise InputError(
            f"spectrum file {spec.source}",
            f"integrates to {total:.4g} W m^-2, outside the plausible {lo:g}-{hi:g} W m^-2 "
            "of a one-sun spectrum; check the irradiance unit in the header (W m^-2 nm^-1 "
            "is assumed when none is given), or pass irradiance_W_m2 (--irradiance) to "
            "rescale it, or store the one-sun spectrum and set the concentration",
        )


def get_spectrum(
    spectrum: str | Spectrum = "AM1.5G",
    *,
    spectrum_file: str | Path | None = None,
    sun_temperature_K: float = 6000.0,
    irradiance_W_m2: float | None = None,
    concentration: float = 1.0,
    spectrum_column: int | str | None = None,
) -> Spectrum:
    """Resolve a spectrum from a name, a file or an object, then scale it.

    Parameters
    ----------
    spectrum : str or Spectrum
        ``"AM1.5G"``, ``"AM1.5D"``, ``"AM0"``, ``"blackbody"``, ``"file"`` (then
        ``spectrum_file`` is required), or a Spectrum object.
    spectrum_file : str or pathlib.Path, optional
        CSV file (see :func:`read_spectrum_csv`); overrides ``spectrum``.
    sun_temperature_K : float
        Blackbody sun temperature [K], in [1000, 20000] (``blackbody`` only).
    irradiance_W_m2 : float, optional
        Rescale the unconcentrated spectrum to this total [W m^-2], in (0, 1e5].
    concentration : float
        Concentration [suns], in (0, 46,200].
    spectrum_column : int or str, optional
        Irradiance column of ``spectrum_file`` (1-based number or header name); needed
        when the file has more than two columns.

    Returns
    -------
    Spectrum
    """
    if spectrum_file is None and isinstance(spectrum, str) and _canonical(spectrum) == "file":
        raise InputError("spectrum_file", "is required with spectrum 'file' (a CSV spectrum)")
    if spectrum_file is not None:
        spec: Spectrum = read_spectrum_csv(spectrum_file, column=spectrum_column)
        if irradiance_W_m2 is None:
            _check_file_irradiance(spec)
    elif isinstance(spectrum, Spectrum):
        spec = spectrum
    elif _canonical(spectrum) == "blackbody":
        spec = BlackbodySun(sun_temperature_K)
    else:
        spec = standard_spectrum(spectrum)
    if irradiance_W_m2 is not None or concentration != 1.0:
        spec = spec.scaled(irradiance_W_m2=irradiance_W_m2, concentration=concentration)
    return spec
