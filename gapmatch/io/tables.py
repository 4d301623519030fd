"""Reading numeric CSV tables against wavelength (spectra, absorption tables), with units.

A table is a CSV file whose first column is the spectral axis and whose other columns are
values. An optional header row (the first non-comment row, if it is not numeric) names the
columns and may state their units; units found there are converted, units not found are
assumed and the assumption is recorded (:attr:`UnitTable.assumptions`), so that reports and
error messages can say what was assumed.

Spectral axis units recognised in the first header cell: ``nm`` (default), ``um`` / ``µm`` /
``micron``, ``eV``. Value units recognised in the value column's header cell:

- spectral irradiance: ``W m^-2 nm^-1`` (default), ``W m^-2 um^-1``, ``mW cm^-2 nm^-1``,
  ``mW cm^-2 um^-1``, ``W cm^-2 nm^-1``, ``W cm^-2 um^-1``, ``W m^-2 eV^-1`` — written
  with or without ``^``, ``/``, brackets and spaces (``W/m2/nm``, ``[W m-2 nm-1]``,
  ``W/(m^2 nm)``, ``irradiance_W_m2_nm``);
- absorption coefficient: ``cm^-1`` (default), ``m^-1``, ``um^-1``, ``nm^-1`` (also
  ``1/cm`` and the like).

Numbers must be plain decimal or scientific notation: Python's ``float`` also accepts
``280_0`` (as 2800), ``inf`` and ``nan``; a data reader must not.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..units import C, H, Q

__all__ = ["UnitTable", "read_unit_table", "parse_number"]

#: h c / q in eV nm: lambda [nm] = HC_EV_NM / E [eV]
HC_EV_NM = H * C / Q * 1e9

_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_NONFINITE = re.compile(r"[+-]?(?:nan|inf|infinity)", re.IGNORECASE)
#: longest excerpt of a file's content echoed in an error message
_ECHO = 40


def parse_number(text: str) -> float:
    """Parse one CSV cell as a number, strictly.

    Parameters
    ----------
    text : str
        The cell, surrounding whitespace allowed.

    Returns
    -------
    float
        The value; ``nan`` or ``inf`` for cells spelling those (the caller rejects them
        with a message of its own).

    Raises
    ------
    ValueError
        For anything that is not a plain decimal or scientific-notation number
        (``280_0``, ``1,5``, ``0x10``, empty cells).
    """
    s = text.strip()
    if _NUMBER.fullmatch(s) or _NONFINITE.fullmatch(s):
        return float(s)
    raise ValueError(s)


def _compact(cell: str) -> str:
    s = cell.lower().replace("µ", "u").replace("μ", "u").replace("²", "2")
    s = s.replace("micron", "um").replace("per", "/")
    return re.sub(r"[\s_^*·.()\[\]{}]", "", s)


def _axis_unit(cell: str) -> str | None:
    tokens = re.split(r"[^a-z0-9]+", cell.lower().replace("µ", "u").replace("μ", "u"))
    for tok in tokens:
        if tok == "nm" or tok.endswith("nm") and tok[:-2] in ("wavelength", "lambda", "wl"):
            return "nm"
        if tok in ("um", "micron", "microns", "micrometre", "micrometer", "micrometres"):
            return "um"
        if tok.endswith("um") and tok[:-2] in ("wavelength", "lambda", "wl"):
            return "um"
        if tok == "ev" or tok.endswith("ev") and tok[:-2] in ("energy", "e", "photonenergy"):
            return "eV"
    return None


_IRR = re.compile(r"(m?w)/?(cm|m)-?2/?(nm|um|ev)")
#: factor to W m^-2 per (nm | um | eV) for each (power, area) pair
_POWER_AREA = {("w", "m"): 1.0, ("mw", "m"): 1e-3, ("w", "cm"): 1e4, ("mw", "cm"): 10.0}
_PER_NM = {"nm": 1.0, "um": 1e-3}


def _irradiance_unit(cell: str) -> tuple[str, float] | None:
    """(label, factor) with factor converting to W m^-2 per spectral unit, or None."""
    m = _IRR.search(_compact(cell))
    if not m:
        return None
    power, area, per = m.groups()
    factor = _POWER_AREA[(power, area)]
    label = f"{'mW' if power == 'mw' else 'W'} {area}^-2 {'µm' if per == 'um' else per}^-1"
    if per == "ev":
        return label.replace("ev", "eV"), factor  # density per eV: converted with lambda
    return label, factor * _PER_NM[per]


_ALPHA = re.compile(r"(?:(cm|um|nm|m)-1|1/(cm|um|nm|m))")
_ALPHA_TO_CM = {"cm": 1.0, "m": 0.01, "um": 1e4, "nm": 1e7}


def _alpha_unit(cell: str) -> tuple[str, float] | None:
    m = _ALPHA.search(_compact(cell))
    if not m:
        return None
    unit = m.group(1) or m.group(2)
    return f"{'µm' if unit == 'um' else unit}^-1", _ALPHA_TO_CM[unit]


#: quantity -> (default unit label, unit parser)
QUANTITIES = {
    "irradiance": ("W m^-2 nm^-1", _irradiance_unit),
    "absorption coefficient": ("cm^-1", _alpha_unit),
}


@dataclass(frozen=True)
class UnitTable:
    """A wavelength table read from a file, in canonical units.

    Attributes
    ----------
    wavelength_nm : numpy.ndarray
        Strictly increasing wavelengths [nm].
    values : numpy.ndarray
        Values in the quantity's canonical unit (W m^-2 nm^-1 or cm^-1), >= 0.
    column : str
        Which column was read (its header, or ``"column K"``, 1-based).
    assumptions : tuple of str
        What was converted or assumed, in words (for reports and messages).
    """

    wavelength_nm: np.ndarray
    values: np.ndarray
    column: str
    assumptions: tuple[str, ...]

    def describe(self) -> str:
        """One line: the column and every unit conversion or assumption."""
        col = self.column if self.column.startswith("column ") else f"column {self.column!r}"
        return "; ".join((col, *self.assumptions))


def _echo(row: list[str]) -> str:
    text = ",".join(row)
    return text if len(text) <= _ECHO else text[: _ECHO - 3] + "..."


#: a cell that looks like a mistyped number (shown in messages); anything else is not
#: shown, so that pointing the reader at the wrong file never echoes that file's text
_NUMBERISH = re.compile(r"[0-9eE+\-._, xX]{1,24}|[+-]?(?:nan|inf|infinity)", re.IGNORECASE)


def _shown(cells: list[str]) -> str | None:
    """The cells for a message if they look like (mistyped) numbers, else None."""
    cells = [c.strip() for c in cells]
    return ",".join(cells) if all(_NUMBERISH.fullmatch(c) or not c for c in cells) else None


def _pick_column(header: list[str] | None, ncols: int, column, field: str, value_name: str):
    """0-based index of the value column and its label."""
    names = [h.strip() for h in header] if header else []
    if column is None:
        if ncols > 2:
            listed = ", ".join(
                f"{k + 1}={names[k]!r}" if k < len(names) and len(names[k]) <= 30 else str(k + 1)
                for k in range(min(ncols, 8))
            ) + (", ..." if ncols > 8 else "")
            raise InputError(
                field,
                f"has {ncols} columns ({listed}); choose the {value_name} column by its "
                "header name or 1-based number (the second column is not taken silently: "
                "in the usual ASTM G173 column order it is the extraterrestrial spectrum, "
                "not the global one)",
            )
        k = 1
    elif isinstance(column, int | np.integer) and not isinstance(column, bool):
        if not 2 <= int(column) <= ncols:
            raise InputError(
                f"{field}: column",
                f"must be a column number in 2..{ncols} (1 = wavelength)",
                column,
            )
        k = int(column) - 1
    else:
        wanted = str(column).strip().lower()
        lowered = [n.lower() for n in names]
        if wanted not in lowered[1:]:
            import difflib

            near = difflib.get_close_matches(wanted, lowered[1:], n=1)
            hint = f" (did you mean {names[lowered.index(near[0])]!r}?)" if near else ""
            raise InputError(
                f"{field}: column",
                f"no column with that header; headers are {names[1:]}{hint}",
                column,
            )
        k = lowered.index(wanted, 1)
    label = names[k] if k < len(names) and names[k] else f"column {k + 1}"
    return k, label


def read_unit_table(
    path: str | Path,
    field: str,
    quantity: str,
    *,
    column: int | str | None = None,
) -> UnitTable:
    """Read a wavelength table with units from a CSV file, validating every row.

    Parameters
    ----------
    path : str or pathlib.Path
        UTF-8 CSV file (a byte-order mark is allowed). Lines starting with ``#`` and blank
        lines are skipped; the first other row is a header if it is not numeric.
    field : str
        How the file is named in error messages (e.g. ``"spectrum file x.csv"``).
    quantity : {"irradiance", "absorption coefficient"}
        What the value column holds; selects the recognised and default units.
    column : int or str, optional
        The value column: its 1-based number (the wavelength is column 1) or its header
        name (case-insensitive). Required when the file has more than two columns.

    Returns
    -------
    UnitTable
        Wavelengths [nm] ascending (an energy axis is converted and reversed) and values
        in W m^-2 nm^-1 or cm^-1.

    Raises
    ------
    InputError
        Naming the file, the row (1-based line number) and the problem.
    """
    default_unit, parse_unit = QUANTITIES[quantity]
    p = Path(path)
    if not p.is_file():
        raise InputError(field, "file not found")
    axis: list[float] = []
    vals: list[float] = []
    rows: list[int] = []
    header: list[str] | None = None
    k_col: int | None = None
    label = ""
    seen_row = False
    try:
        with p.open(newline="", encoding="utf-8-sig") as fh:
            for lineno, row in enumerate(csv.reader(fh), start=1):
                if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
                    continue
                first, seen_row = not seen_row, True
                if first:
                    try:
                        [parse_number(c) for c in row[:2]]
                    except ValueError:
                        header = row
                        continue
                if k_col is None:
                    ncols = len(header) if header else len(row)
                    if ncols < 2:
                        raise InputError(
                            field,
                            f"row {lineno}: needs two columns, wavelength [nm] and "
                            f"{quantity} [{default_unit}]",
                            _shown(row),
                        )
                    k_col, label = _pick_column(header, ncols, column, field, quantity)
                if len(row) <= k_col:
                    raise InputError(
                        field,
                        f"row {lineno}: needs {k_col + 1} columns, wavelength [nm] and "
                        f"{quantity} [{default_unit}]",
                        _shown(row),
                    )
                try:
                    a, b = parse_number(row[0]), parse_number(row[k_col])
                except ValueError:
                    shown = _shown([row[0], row[k_col]])
                    what = "" if shown is not None else " (text, not shown: is this a table?)"
                    raise InputError(
                        field,
                        f"row {lineno}: not a number{what}; numbers are plain decimal or "
                        "scientific notation (no '_', ',' or hexadecimal)",
                        shown,
                    ) from None
                if not (math.isfinite(a) and math.isfinite(b)):
                    raise InputError(
                        field,
                        f"row {lineno}: values must be finite numbers (no inf, nan or "
                        "values beyond 1.8e308)",
                        _echo([row[0], row[k_col]]),
                    )
                if a <= 0:
                    raise InputError(field, f"row {lineno}: wavelength must be > 0 nm", a)
                if b < 0:
                    raise InputError(
                        field, f"row {lineno}: {quantity} must be >= 0 {default_unit}", b
                    )
                axis.append(a)
                vals.append(b)
                rows.append(lineno)
    except UnicodeDecodeError:
        raise InputError(field, "is not UTF-8 text; save it as a UTF-8 CSV file") from None
    except csv.Error as exc:
        raise InputError(field, f"is not a readable CSV table ({exc})") from None
    if len(axis) < 2:
        raise InputError(field, f"needs at least two data rows, found {len(axis)}")

    assumptions: list[str] = []
    axis_cell = header[0] if header else ""
    axis_unit = _axis_unit(axis_cell) if header else None
    if axis_unit is None:
        axis_unit = "nm"
        assumptions.append(
            "wavelength unit nm assumed (no unit in the header)"
            if header
            else "no header: wavelength [nm] and " + f"{quantity} [{default_unit}] assumed"
        )
    a = np.array(axis)
    v = np.array(vals)
    order_rows = np.array(rows)
    wl = HC_EV_NM / a if axis_unit == "eV" else a * (1000.0 if axis_unit == "um" else 1.0)
    if axis_unit == "eV":
        assumptions.append("photon energies [eV] converted to wavelengths [nm]")
        if wl.size > 1 and wl[1] < wl[0]:  # energies listed ascending: reverse to wavelength order
            wl, a, v, order_rows = wl[::-1], a[::-1], v[::-1], order_rows[::-1]
    elif axis_unit == "um":
        assumptions.append("wavelengths in µm converted to nm")
    bad = np.flatnonzero(np.diff(wl) <= 0)
    if bad.size:
        r = bad[0]
        what = (
            "photon energies must be strictly monotonic"
            if axis_unit == "eV"
            else ("wavelengths must be strictly increasing")
        )
        raise InputError(
            field,
            f"row {order_rows[r + 1]}: {what} (previous row {order_rows[r]} has "
            f"{a[r]:g} {axis_unit})",
            float(a[r + 1]),
        )

    unit = parse_unit(label) if header else None
    if unit is None:
        if header:
            assumptions.append(f"{quantity} unit {default_unit} assumed (no unit in the header)")
        values = v
    else:
        unit_label, factor = unit
        values = v * factor
        if unit_label.endswith("eV^-1"):
            values = values * HC_EV_NM / wl**2  # per eV -> per nm: |dE/dlambda| = hc/lambda^2
        if unit_label != default_unit:
            assumptions.append(f"{quantity} in {unit_label} converted to {default_unit}")
    if not np.all(np.isfinite(values)) or not np.all(np.isfinite(wl)):
        raise InputError(field, "values overflow after unit conversion")
    if values.max() <= 0:
        raise InputError(field, f"the {quantity} is zero everywhere")
    return UnitTable(wl, values, label, tuple(assumptions))
