"""Detailed-balance diode models of a batch of junctions.

Each junction of each stack is an ideal detailed-balance diode,

    J(V) = J_ph - J_dark(V),     J_dark(V) = (J_rad(V) - J_rad(0)) / ERE,

with the radiative current ``J_rad`` from the generalised Planck law (front emission into
a hemisphere of refractive index 1 by default, scaled by ``emission_factor``). Two forms
of ``J_rad`` are available:

* ``boltzmann`` (default): ``J_rad(V) = J0_rad exp(qV / kT)`` with the closed form
  ``J0_rad = q g (kT)^3 exp(-x) (x^2 + 2x + 2)``, ``x = E_g / kT``, ``g = 2 pi/(h^3 c^2)``;
* ``bose-einstein``: the exact integral ``q g (kT)^3 int_x^inf t^2/(exp(t - qV/kT) - 1) dt``
  (polylogarithms), needed at small gaps and high concentration.

Every model exposes the same vectorised interface: current, its first two derivatives in
voltage, and the inverse voltage(current) with its first two derivatives, so that the
connection solvers in :mod:`.connections` can find exact maximum power points with
Newton's method for either form.

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] U. Rau, "Reciprocity relation between photovoltaic quantum efficiency and
   electroluminescent emission of solar cells", Phys. Rev. B 76, 085303 (2007)
   (non-radiative loss through the external radiative efficiency).
.. [3] G. L. Araujo and A. Marti, "Absolute limiting efficiencies for photovoltaic energy
   conversion", Sol. Energy Mater. Sol. Cells 33, 213 (1994) (Boltzmann closed form).
"""

from __future__ import annotations

import numpy as np

from ..units import K_B, Q
from .planck import PLANCK_PREFACTOR, bose_tail, polylog_exp

__all__ = [
    "DARK_MODELS",
    "ln_j0_radiative",
    "BoltzmannDiodes",
    "BoseEinsteinDiodes",
    "make_diodes",
]

DARK_MODELS = ("boltzmann", "bose-einstein")
#: smallest distance ``(E_g - qV) / kT`` to the gap evaluated by the Bose-Einstein model
BE_D_MIN = 1e-10


def ln_j0_radiative(gap_J, temperature_K, emission_factor=1.0) -> np.ndarray:  # noqa: N803
    """Natural log of the radiative saturation current density ``J0_rad`` [ln(A m^-2)].

    Parameters
    ----------
    gap_J : array_like
        Band gap [J].
    temperature_K : array_like
        Cell temperature [K].
    emission_factor : array_like
        Multiplier on hemispherical front emission into index 1 (dimensionless); 1 for
        the default geometry.

    Returns
    -------
    numpy.ndarray
        ``ln J0_rad`` with ``J0_rad = q g F (kT)^3 exp(-x) (x^2 + 2x + 2)``.

    References
    ----------
    .. [1] Shockley and Queisser (1961); Boltzmann approximation of the generalised
       Planck law.
    """
    kt = K_B * np.asarray(temperature_K, dtype=float)
    x = np.asarray(gap_J, dtype=float) / kt
    return (
        np.log(Q * PLANCK_PREFACTOR * np.asarray(emission_factor, dtype=float) * kt**3)
        + np.log(x * x + 2.0 * x + 2.0)
        - x
    )


class BoltzmannDiodes:
    """Ideal diodes ``J = J_ph - J0 (exp(V/V_t) - 1)`` for a batch of junctions.

    Parameters
    ----------
    jph : numpy.ndarray
        Photocurrent density [A m^-2], shape ``(M, N)``.
    j0 : numpy.ndarray
        Dark saturation current density ``J0_rad / ERE`` [A m^-2], same shape.
    vt : numpy.ndarray
        Thermal voltage kT/q [V], same shape.
    """

    model = "boltzmann"

    def __init__(self, jph: np.ndarray, j0: np.ndarray, vt: np.ndarray) -> None:
        self.jph, self.j0, self.vt = (
            np.asfortranarray(a, dtype=float) for a in np.broadcast_arrays(jph, j0, vt)
        )
        self._cols = None
        self._voc = None
        self._lnj0 = None

    def take(self, sel) -> BoltzmannDiodes:
        """Subset of stacks (a numpy index applied to the first axis of every array)."""
        return BoltzmannDiodes(self.jph[sel], self.j0[sel], self.vt[sel])

    def _columns(self):
        # per-junction contiguous columns: the series kernel loops over the (few)
        # junctions and works on long contiguous arrays of stacks
        if self._cols is None:
            self._cols = [
                (
                    np.ascontiguousarray(self.jph[:, i] + self.j0[:, i]),
                    np.ascontiguousarray(np.log(self.j0[:, i])),
                    np.ascontiguousarray(self.vt[:, i]),
                )
                for i in range(self.jph.shape[1])
            ]
        return self._cols

    def series_terms(self, j):
        """Sums over the junctions of a series string at current ``j`` [A m^-2], ``(M,)``.

        Returns
        -------
        tuple of numpy.ndarray
            ``S = sum V_i`` [V], ``S1 = -sum dV_i/dJ`` and ``S2 = -sum d2V_i/dJ2``.
        """
        s = s1 = s2 = 0.0
        for c, lnj0, vt in self._columns():
            a = c - j
            s = s + vt * (np.log(a) - lnj0)
            w = vt / a
            s1 = s1 + w
            s2 = s2 + w / a
        return s, s1, s2

    def series_guess(self, jmin, lim):
        """Start current [A m^-2] for the series solver: exact when every junction but
        the limiting one ``lim`` keeps the voltage it has at ``jmin``."""
        rows = np.arange(jmin.shape[0])
        vt = self.vt[rows, lim]
        j0 = self.j0[rows, lim]
        with np.errstate(divide="ignore", invalid="ignore"):
            v_other = self.voltage(jmin[:, None]).sum(axis=1)
            big_l = 1.0 + np.log1p(jmin / j0) + v_other / vt
            y = _omega_large(big_l)
        return jmin + j0 - (jmin + j0) / y

    # current as a function of voltage
    def current(self, v):
        """Terminal current density [A m^-2] at voltage ``v`` [V]."""
        return self.jph - self.j0 * np.expm1(v / self.vt)

    def dcurrent(self, v):
        """dJ/dV [A m^-2 V^-1]."""
        return -self.j0 / self.vt * np.exp(v / self.vt)

    def d2current(self, v):
        """d^2J/dV^2 [A m^-2 V^-2]."""
        return -self.j0 / self.vt**2 * np.exp(v / self.vt)

    # voltage as a function of current
    def j_limit(self):
        """Current density [A m^-2] at which the voltage diverges to -inf."""
        return self.jph + self.j0

    def voltage(self, j):
        """Voltage [V] at which the junction carries current density ``j`` [A m^-2]."""
        if self._lnj0 is None:
            self._lnj0 = np.log(self.j0)
        return self.vt * (np.log(self.jph - j + self.j0) - self._lnj0)

    def dvoltage(self, j):
        """dV/dJ [V m^2 A^-1]."""
        return -self.vt / (self.jph - j + self.j0)

    def d2voltage(self, j):
        """d^2V/dJ^2 [V m^4 A^-2]."""
        return -self.vt / (self.jph - j + self.j0) ** 2

    def voc(self):
        """Open-circuit voltage [V]."""
        if self._voc is None:
            self._voc = self.vt * np.log1p(self.jph / self.j0)
        return self._voc

    def v_upper(self):
        """A voltage [V] above which the model is not evaluated (none for Boltzmann)."""
        return np.full(self.jph.shape, np.inf)

    def mpp(self):
        """Exact maximum power point of each junction alone.

        Returns
        -------
        tuple of numpy.ndarray
            ``(v_mpp [V], j_mpp [A m^-2])``.

        Notes
        -----
        ``V_mpp = V_t (W(e (1 + J_ph/J0)) - 1)`` with Lambert's W, evaluated as the Wright
        omega function of ``1 + ln(1 + J_ph/J0)`` so that it cannot overflow.
        """
        from scipy.special import wrightomega

        y = 1.0 + np.log1p(self.jph / self.j0)
        v = self.vt * (wrightomega(y).real - 1.0)
        return v, self.current(v)


class BoseEinsteinDiodes:
    """Detailed-balance diodes with the exact Bose-Einstein radiative current.

    Parameters
    ----------
    jph : numpy.ndarray
        Photocurrent density [A m^-2], shape ``(M, N)``.
    gap_J : numpy.ndarray
        Band gap [J].
    temperature_K : numpy.ndarray
        Cell temperature [K].
    ere : numpy.ndarray
        External radiative efficiency in (0, 1].
    emission_factor : numpy.ndarray
        Multiplier on hemispherical front emission (dimensionless).

    Notes
    -----
    ``J_rad(V) = q g F (kT)^3 T2(x, x - qV/kT)`` with ``T2`` from
    :func:`.planck.bose_tail`. Its voltage derivatives follow by integrating by parts:
    ``dT2/du = x^2 f(d) + 2 T1`` and ``d^2T2/du^2 = x^2 e^d f(d)^2 + 2 x f(d) + 2 Li1``,
    with ``f(d) = 1/(e^d - 1)`` and ``d = x - u``.
    """

    model = "bose-einstein"

    def __init__(self, jph, gap_J, temperature_K, ere, emission_factor=1.0) -> None:  # noqa: N803
        (self.jph, self.gap_J, self.temperature_K, self.ere, self.emission_factor) = (
            np.broadcast_arrays(
                np.asarray(jph, float),
                np.asarray(gap_J, float),
                np.asarray(temperature_K, float),
                np.asarray(ere, float),
                np.asarray(emission_factor, float),
            )
        )
        self.kt = K_B * self.temperature_K
        self.vt = self.kt / Q
        self.x = self.gap_J / self.kt
        self.scale = Q * PLANCK_PREFACTOR * self.emission_factor * self.kt**3 / self.ere
        self.jrad0 = self.scale * bose_tail(2, self.x, self.x)
        self._voc = None

    def take(self, sel) -> BoseEinsteinDiodes:
        """Subset of junctions (any numpy index applied to every array)."""
        return BoseEinsteinDiodes(
            self.jph[sel],
            self.gap_J[sel],
            self.temperature_K[sel],
            self.ere[sel],
            self.emission_factor[sel],
        )

    def _d(self, v):
        return self.x - v / self.vt

    def _dark(self, v):
        return self.scale * bose_tail(2, self.x, self._d(v)) - self.jrad0

    def _ddark(self, v):
        d = self._d(v)
        f = 1.0 / np.expm1(d)
        t1 = bose_tail(1, self.x, d)
        return self.scale / self.vt * (self.x**2 * f + 2.0 * t1)

    def _d2dark(self, v):
        d = self._d(v)
        f = 1.0 / np.expm1(d)
        li1 = polylog_exp(1, d)
        return self.scale / self.vt**2 * (self.x**2 * np.exp(d) * f * f + 2 * self.x * f + 2 * li1)

    def current(self, v):
        """Terminal current density [A m^-2] at voltage ``v`` [V] (``v < E_g/q``)."""
        return self.jph - self._dark(v)

    def dcurrent(self, v):
        """dJ/dV [A m^-2 V^-1]."""
        return -self._ddark(v)

    def d2current(self, v):
        """d^2J/dV^2 [A m^-2 V^-2]."""
        return -self._d2dark(v)

    def j_limit(self):
        """Current density [A m^-2] at which the voltage diverges to -inf."""
        return self.jph + self.jrad0

    def v_upper(self):
        """Largest voltage [V] evaluated: the Bose-Einstein integral diverges at qV = E_g.

        ``E_g/q - D_MIN kT/q`` with ``D_MIN = 1e-10``: the dark current there is finite
        (``ln(1/D_MIN)`` times its Boltzmann scale), and a junction whose photocurrent
        exceeds it is pinned at most ``2.6e-12 V`` (at 300 K) below its true ``V_oc``.
        """
        return self.vt * (self.x - BE_D_MIN)

    def j0_boltzmann(self):
        """Saturation current density [A m^-2] of the Boltzmann approximation of the
        same junctions (start points of the iterations)."""
        return self.scale * np.exp(-self.x) * (self.x**2 + 2 * self.x + 2)

    def voltage(self, j):
        """Voltage [V] at current density ``j`` [A m^-2], by monotone Newton iteration.

        The dark current is convex and increasing in V, so Newton's method started above
        the root (from the Boltzmann estimate, which is never below it) converges
        monotonically.
        """
        target = self.jph - j  # dark current needed
        v = self.vt * np.log1p(target / self.j0_boltzmann())
        v = np.minimum(v, self.v_upper())
        for _ in range(100):
            step = (self._dark(v) - target) / self._ddark(v)
            step = np.where(np.isfinite(step), step, 0.0)
            v = np.minimum(v - step, self.v_upper())
            if np.all(np.abs(step) <= 1e-14 * np.maximum(np.abs(v), self.vt)):
                break
        return v

    def dvoltage(self, j):
        """dV/dJ [V m^2 A^-1]."""
        return 1.0 / self.dcurrent(self.voltage(j))

    def series_terms(self, j):
        """``S = sum V_i`` [V], ``S1 = -sum dV_i/dJ``, ``S2 = -sum d2V_i/dJ2`` at ``j``."""
        jj = j[:, None]
        v = self.voltage(jj)
        d1 = self.dcurrent(v)
        d2 = self.d2current(v)
        return v.sum(axis=1), (-1.0 / d1).sum(axis=1), (d2 / d1**3).sum(axis=1)

    def series_guess(self, jmin, lim):
        """Start current [A m^-2]: the Boltzmann-diode solution for the same junctions."""
        return BoltzmannDiodes(self.jph, self.j0_boltzmann(), self.vt).series_guess(jmin, lim)

    def d2voltage(self, j):
        """d^2V/dJ^2 [V m^4 A^-2]."""
        v = self.voltage(j)
        d1 = self.dcurrent(v)
        return -self.d2current(v) / d1**3

    def voc(self):
        """Open-circuit voltage [V]."""
        if self._voc is None:
            self._voc = self.voltage(np.zeros_like(self.jph))
        return self._voc

    def mpp(self):
        """Exact maximum power point of each junction alone, ``(v [V], j [A m^-2])``."""
        from .solvers import maximise_concave

        voc = self.voc()

        def grad(v):
            return self.current(v) + v * self.dcurrent(v)

        def hess(v):
            return 2 * self.dcurrent(v) + v * self.d2current(v)

        v = maximise_concave(grad, hess, np.zeros_like(voc), voc, 0.9 * voc)
        return v, self.current(v)


def _omega_large(big_l):
    """Wright omega ``y + ln y = L`` for ``L >= 1`` by two Newton steps from the
    asymptotic start ``L - ln L`` (relative error below 1e-12 for L > 5; used only as a
    starting point, so accuracy elsewhere is not needed)."""
    big_l = np.maximum(big_l, 1.0)
    y = np.maximum(big_l - np.log(big_l), 0.5)
    for _ in range(2):
        y = y - (y + np.log(y) - big_l) / (1.0 + 1.0 / y)
    return y


def make_diodes(model: str, jph, gap_J, temperature_K, ere, emission_factor=1.0):  # noqa: N803
    """Build the diode batch for a dark-current model.

    Parameters
    ----------
    model : {"boltzmann", "bose-einstein"}
        Form of the radiative current.
    jph : numpy.ndarray
        Photocurrent density [A m^-2], shape ``(M, N)``.
    gap_J : numpy.ndarray
        Band gap [J].
    temperature_K : numpy.ndarray
        Cell temperature [K].
    ere : numpy.ndarray
        External radiative efficiency in (0, 1].
    emission_factor : numpy.ndarray
        Multiplier on hemispherical front emission (dimensionless).

    Returns
    -------
    BoltzmannDiodes or BoseEinsteinDiodes
    """
    if model == "boltzmann":
        j0 = np.exp(ln_j0_radiative(gap_J, temperature_K, emission_factor)) / ere
        return BoltzmannDiodes(jph, j0, K_B * np.asarray(temperature_K, float) / Q)
    if model == "bose-einstein":
        return BoseEinsteinDiodes(jph, gap_J, temperature_K, ere, emission_factor)
    raise ValueError(f"dark model must be one of {DARK_MODELS}")
