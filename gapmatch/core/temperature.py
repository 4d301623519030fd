"""Temperature dependence of the band gap (Varshni form or a linear coefficient).

The gaps a user gives are the gaps at a reference temperature ``T_ref`` (300 K unless
told otherwise), because that is how absorbers are usually described ("a 1.12 eV silicon
bottom cell"). At the cell temperature ``T`` each junction's gap becomes

* Varshni:  ``E_g(T) = E_g(T_ref) - alpha [T^2 / (T + beta) - T_ref^2 / (T_ref + beta)]``,
  i.e. ``E_g(T) = E_g(0) - alpha T^2 / (T + beta)`` with ``E_g(0)`` implied by the gap
  at ``T_ref``;
* linear:   ``E_g(T) = E_g(T_ref) + (dE_g/dT) (T - T_ref)``;
* none:     ``E_g(T) = E_g(T_ref)`` (the default, and the ideal engine's convention).

The cell temperature then enters twice: through the shifted gap (photocurrent, emission
threshold) and through ``kT`` in the radiative dark current.

References
----------
.. [1] Y. P. Varshni, "Temperature dependence of the energy gap in semiconductors",
   Physica 34, 149 (1967).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["varshni_gap", "varshni_slope", "GapTemperature"]


def varshni_gap(eg0, alpha, beta, temperature_K):
    """Varshni band gap ``E_g(T) = E_g(0) - alpha T^2 / (T + beta)``.

    Parameters
    ----------
    eg0 : array_like
        Gap at 0 K, in any energy unit (J or eV).
    alpha : array_like
        Varshni alpha, in the energy unit of ``eg0`` per K.
    beta : array_like
        Varshni beta [K], > 0.
    temperature_K : array_like
        Temperature [K], >= 0.

    Returns
    -------
    numpy.ndarray
        The gap at ``temperature_K``, unit of ``eg0``.

    References
    ----------
    .. [1] Y. P. Varshni, Physica 34, 149 (1967).
    """
    t = np.asarray(temperature_K, dtype=float)
    return np.asarray(eg0, dtype=float) - np.asarray(alpha, dtype=float) * t * t / (t + beta)


def varshni_slope(alpha, beta, temperature_K):
    """Temperature coefficient ``dE_g/dT = -alpha T (T + 2 beta) / (T + beta)^2``.

    Parameters
    ----------
    alpha : array_like
        Varshni alpha [energy unit per K].
    beta : array_like
        Varshni beta [K].
    temperature_K : array_like
        Temperature [K].

    Returns
    -------
    numpy.ndarray
        ``dE_g/dT`` in the unit of ``alpha`` (negative for alpha > 0).

    References
    ----------
    .. [1] Y. P. Varshni, Physica 34, 149 (1967) (derivative of the Varshni form).
    """
    t = np.asarray(temperature_K, dtype=float)
    b = np.asarray(beta, dtype=float)
    return -np.asarray(alpha, dtype=float) * t * (t + 2.0 * b) / (t + b) ** 2


@dataclass(frozen=True)
class GapTemperature:
    """Per-junction temperature model of the gap.

    Parameters
    ----------
    alpha_J_K : numpy.ndarray
        Varshni alpha [J K^-1] per junction, shape ``(N,)``; NaN where not Varshni.
    beta_K : numpy.ndarray
        Varshni beta [K] per junction; NaN where not Varshni.
    slope_J_K : numpy.ndarray
        Linear coefficient dE_g/dT [J K^-1] per junction; NaN where not linear.
    reference_K : float
        Temperature [K] at which the given gaps hold.

    Notes
    -----
    A junction with neither Varshni nor linear parameters keeps its gap.
    """

    alpha_J_K: np.ndarray
    beta_K: np.ndarray
    slope_J_K: np.ndarray
    reference_K: float = 300.0

    def gaps_at(self, gaps_J, temperature_K):
        """Gaps [J] at the cell temperature.

        Parameters
        ----------
        gaps_J : numpy.ndarray
            Gaps at ``reference_K`` [J], shape ``(M, N)``.
        temperature_K : numpy.ndarray
            Cell temperature [K], broadcast to ``(M, N)``.

        Returns
        -------
        numpy.ndarray
            Shifted gaps [J], ``(M, N)``.
        """
        g = np.asarray(gaps_J, dtype=float)
        t = np.broadcast_to(np.asarray(temperature_K, dtype=float), g.shape)
        tr = self.reference_K
        a = np.broadcast_to(self.alpha_J_K, g.shape)
        b = np.broadcast_to(self.beta_K, g.shape)
        s = np.broadcast_to(self.slope_J_K, g.shape)
        with np.errstate(invalid="ignore"):
            dv = -a * (t * t / (t + b) - tr * tr / (tr + b))
            dl = s * (t - tr)
        shift = np.where(np.isfinite(dv), dv, np.where(np.isfinite(dl), dl, 0.0))
        return g + shift

    def slope(self, temperature_K):
        """dE_g/dT [J K^-1] per junction at ``temperature_K`` (0 where not modelled)."""
        with np.errstate(invalid="ignore"):
            v = varshni_slope(self.alpha_J_K, self.beta_K, temperature_K)
        return np.where(
            np.isfinite(v), v, np.where(np.isfinite(self.slope_J_K), self.slope_J_K, 0.0)
        )
