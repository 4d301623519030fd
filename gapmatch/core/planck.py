"""Bose-Einstein photon integrals and the generalised Planck law.

The photon flux a black or grey body emits into a hemisphere (refractive index 1) per unit
area and photon energy is

    phi(E) = (2 pi / (h^3 c^2)) E^2 / (exp((E - mu) / kT) - 1)            [m^-2 s^-1 J^-1]

with chemical potential ``mu`` (``mu = qV`` for a cell at voltage ``V``; ``mu = 0`` for
thermal radiation). Integrals of ``E^k phi`` above an energy threshold are written here
exactly in terms of polylogarithms, so no numerical quadrature is involved:

    int_x^inf t^k / (exp(t - u) - 1) dt = sum_j k!/(k-j)! x^(k-j) Li_(j+1)(exp(-(x - u)))

References
----------
.. [1] P. Wurfel, "The chemical potential of radiation", J. Phys. C 15, 3967 (1982)
   (generalised Planck law).
.. [2] W. Shockley and H. J. Queisser, "Detailed balance limit of efficiency of p-n
   junction solar cells", J. Appl. Phys. 32, 510 (1961).
.. [3] Expansion of Li_s(e^mu) about mu = 0: standard series, e.g. NIST Digital Library of
   Mathematical Functions, eq. 25.12.12.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from ..units import C, H

__all__ = [
    "PLANCK_PREFACTOR",
    "polylog_exp",
    "boltzmann_bin_emission",
    "NARROW_BIN_KT",
    "NARROW_BIN_TERMS",
    "bose_tail",
]

#: 2 pi / (h^3 c^2), the hemispherical generalised-Planck prefactor [m^-2 s^-1 J^-3]
PLANCK_PREFACTOR: float = 2.0 * math.pi / (H**3 * C**2)

_SERIES_SWITCH = 1.0  # d >= this: direct series; d < this: expansion about d = 0
_SERIES_TERMS = 45  # exp(-45) ~ 3e-20: the direct series is converged for d >= 1
# terms needed at distance d: exp(-(n - 1) d) / (1 - exp(-d)) < 2^-53 for n - 1 >= 37.2 / d
_SERIES_EXPONENT = 37.2
_EXPANSION_TERMS = 40  # terms of (d / 2 pi)^k: converged for d < 1


def _zeta_nonpositive_safe(s: int) -> float:
    """Riemann zeta at an integer s != 1 (scipy handles negative arguments)."""
    return float(special.zeta(float(s)))


def polylog_exp(s: int, d: np.ndarray) -> np.ndarray:
    """Polylogarithm ``Li_s(exp(-d))`` for integer order ``s >= 1`` and ``d > 0``.

    Parameters
    ----------
    s : int
        Order, 1 to 4.
    d : numpy.ndarray
        Positive argument (dimensionless).

    Returns
    -------
    numpy.ndarray
        ``Li_s(exp(-d))``, same shape as ``d``.

    Notes
    -----
    For ``d >= 1`` the direct series ``sum z^n / n^s`` (``z = exp(-d)``) is used, with as
    many terms as the smallest ``d`` of the batch needs for the remainder to fall below
    double precision (``n = 1 + ceil(37.2 / d_min)``, at most 45: 38 at ``d = 1``, 5 at
    ``d = 10``).
    Below, ``Li_1`` and ``Li_2`` use closed forms (``-log(1 - z)`` and scipy's ``spence``)
    and ``s >= 3`` the expansion about ``d = 0`` (DLMF 25.12.12); both are converged to
    double precision.
    """
    d = np.asarray(d, dtype=float)
    out = np.empty_like(d)
    far = d >= _SERIES_SWITCH
    if np.any(far):
        df = d[far]
        z = np.exp(-df)
        acc = np.zeros_like(df)
        zn = np.ones_like(df)
        d_min = float(df.min())
        n_terms = _SERIES_TERMS
        if np.isfinite(d_min):
            n_terms = min(_SERIES_TERMS, 1 + math.ceil(_SERIES_EXPONENT / d_min))
        for n in range(1, n_terms + 1):
            zn = zn * z
            acc += zn / n**s
        out[far] = acc
    near = ~far
    if np.any(near):
        dn = d[near]
        if s == 1:
            out[near] = -np.log(-np.expm1(-dn))
        elif s == 2:
            out[near] = special.spence(-np.expm1(-dn))
        else:
            mu = -dn
            acc = np.zeros_like(mu)
            harmonic = sum(1.0 / j for j in range(1, s))
            for k in range(_EXPANSION_TERMS):
                if k == s - 1:
                    acc += mu**k / math.factorial(k) * (harmonic - np.log(-mu))
                else:
                    acc += _zeta_nonpositive_safe(s - k) * mu**k / math.factorial(k)
            out[near] = acc
    return out


def bose_tail(k: int, x: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Dimensionless Bose-Einstein tail integral ``int_x^inf t^k / (exp(t - u) - 1) dt``.

    Parameters
    ----------
    k : int
        Power of ``t``, 0 to 3.
    x : numpy.ndarray
        Lower limit, ``E_threshold / kT`` (dimensionless, >= 0).
    d : numpy.ndarray
        ``x - u`` with ``u = mu / kT``; must be > 0 (the integral diverges at ``d = 0``).

    Returns
    -------
    numpy.ndarray
        The integral, broadcast shape of ``x`` and ``d``.
    """
    x, d = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(d, dtype=float))
    total = np.zeros(x.shape)
    for j in range(k + 1):
        coeff = math.factorial(k) / math.factorial(k - j)
        total = total + coeff * x ** (k - j) * polylog_exp(j + 1, d)
    return total


#: bins narrower than this (in units of kT) take their Boltzmann emission from the
#: difference form of :func:`boltzmann_bin_emission`, which does not cancel
NARROW_BIN_KT = 0.1
#: Taylor terms of ``1 - e^-h`` for ``h < NARROW_BIN_KT``: 0.1**12 / 12! < 3e-21
NARROW_BIN_TERMS = 11


def boltzmann_bin_emission(edges: np.ndarray, kt: float | np.ndarray) -> tuple:
    """Boltzmann photon number and energy emitted in each bin between ``edges`` [J]
    (last axis ascending) at ``kt`` [J] (broadcast against ``edges``), in units of
    ``q g (kT)^3`` and ``q g (kT)^4``, and the photon emission above each node.

    With ``x = E / kT``, the emission above a node is ``G(x) = e^-x p2(x)``,
    ``p2 = x^2 + 2x + 2`` (energy: ``e^-x p3(x)``, ``p3 = x^3 + 3x^2 + 6x + 6``). A bin
    ``[x_a, x_b]`` emits ``G(x_a) - G(x_b)``; in a narrow bin (``h = x_b - x_a <
    NARROW_BIN_KT``) that difference cancels (a 1-ulp change of ``e^-x`` became 1e-12 of
    a thick direct absorber's ``J0``), so it is taken as ``e^-x_a [(1 - e^-h) p2(x_b) -
    h (x_a + x_b + 2)]`` (and ``p3(x_a) - p3(x_b) = -h (x_a^2 + x_a x_b + x_b^2 +
    3 (x_a + x_b) + 6)``), ``1 - e^-h`` by its Taylor series. The last bin is open above.

    Returns
    -------
    tuple of numpy.ndarray
        ``(dg, dg3, t2)``: photon number and energy per bin, and ``G`` at each node.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961) (radiative
       emission in the Boltzmann limit, the integrand of ``G``).
    """
    x = edges / kt
    ex = np.exp(-x)
    t2 = ex * (x * x + 2.0 * x + 2.0)
    t3 = ex * (x * (x * x + 3.0 * x + 6.0) + 6.0)
    xa, xb = x[..., :-1], x[..., 1:]
    h = (edges[..., 1:] - edges[..., :-1]) / kt
    em = np.ones_like(h)
    for k in range(NARROW_BIN_TERMS, 1, -1):
        em = 1.0 - h / k * em
    em = h * em
    p2b = xb * xb + 2.0 * xb + 2.0
    p3b = xb * (xb * xb + 3.0 * xb + 6.0) + 6.0
    narrow = h < NARROW_BIN_KT
    exa = ex[..., :-1]
    dg = np.where(narrow, exa * (em * p2b - h * (xa + xb + 2.0)), t2[..., :-1] - t2[..., 1:])
    d3p = xa * xa + xa * xb + xb * xb + 3.0 * (xa + xb) + 6.0
    dg3 = np.where(narrow, exa * (em * p3b - h * d3p), t3[..., :-1] - t3[..., 1:])
    dg = np.concatenate([dg, t2[..., -1:]], axis=-1)
    dg3 = np.concatenate([dg3, t3[..., -1:]], axis=-1)
    return dg, dg3, t2
