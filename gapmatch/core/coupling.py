"""Luminescent coupling between junctions and the geometry of emission.

Downward emission. A junction of refractive index ``n`` that emits isotropically sends
``n^2`` times as many photons into the (index-matched) material below as through its
front surface into a hemisphere of index 1 (the ``n^2`` of the density of photon
states). With downward emission modelled, the junction's radiative dark current is
``(F + n^2) J0_rad`` instead of ``F J0_rad`` (``F``: front emission factor), so a junction
whose downward emission is lost loses ``(kT/q) ln((F + n^2)/F)`` of open-circuit voltage
(68 mV for ``n = 3.6``, ``F = 1``, 300 K). A fraction ``c`` of the downward emission can
instead be absorbed by the junction below (luminescent coupling). The bottom junction is
taken to sit on an ideal mirror: its rear emission is returned (no rear loss), as in the
ideal engine.

Coupled photocurrent. Junction ``i`` recombines ``D_i = J_eff,i - J_i`` (its dark
current at the operating point); the fraction ``beta_i = ERE_i n_i^2 / (F_i + n_i^2)`` of
that is emitted downwards, and the junction below collects
``k_i D_i`` with ``k_i = eta_c,i+1 c_i beta_i``. Its photocurrent therefore depends on the
upper junction's voltage. For Boltzmann diodes in series (one current ``J``), the chain is
linear in ``J``: ``D_i = a_i - b_i J`` with ``a_1 = J_ph,1``, ``b_1 = 1`` and
``a_i = J_ph,i + k_{i-1} a_{i-1}``, ``b_i = 1 + k_{i-1} b_{i-1}``, so each junction's
voltage is that of a Boltzmann diode with photocurrent ``a_i/b_i`` and saturation current
``J0_i/b_i``: the self-consistent series operating point is then exact and found by the
ordinary series solver. For independent connection each junction's optimum depends on
the junctions below through the coupled power; :func:`solve_independent_coupled`
maximises the total power by block coordinate ascent (exact Newton per junction, a few
sweeps).

Restricted emission cone. A cell that emits only into a cone of half-angle ``theta``
(angle-selective filter, no loss of the incident light, which must come from inside the
cone) has front emission factor ``sin^2 theta`` and gains ``(kT/q) ln(1/sin^2 theta)``
of open-circuit voltage.

References
----------
.. [1] E. Yablonovitch, J. Opt. Soc. Am. 72, 899 (1982) (n^2 enhancement of the internal
   photon density; emission into the substrate).
.. [2] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [3] A. Marti, J. L. Balenzategui and R. F. Reyna, "Photon recycling and Shockley's
   diode equation", J. Appl. Phys. 82, 4067 (1997) (emission channels of a cell).
"""

from __future__ import annotations

import numpy as np

from ..units import K_B, Q
from . import kernels
from .diodes import BoltzmannDiodes
from .solvers import maximise_concave

__all__ = [
    "emission_factor_from_half_angle",
    "voc_gain_restricted_cone",
    "voc_loss_rear_emission",
    "downward_fraction",
    "coupling_coefficients",
    "series_chain",
    "solve_independent_coupled",
]


def emission_factor_from_half_angle(half_angle_rad):
    """Front emission factor ``sin^2(theta)`` for emission into a cone of half-angle
    ``theta`` [rad] (1 for a hemisphere)."""
    return np.sin(np.asarray(half_angle_rad, dtype=float)) ** 2


def voc_gain_restricted_cone(temperature_K, half_angle_rad):  # noqa: N803
    """Open-circuit voltage gain [V] of restricting emission to a cone: ``(kT/q) ln(1/sin^2)``.

    References
    ----------
    .. [1] Standard consequence of the generalised Planck law (J0 proportional to the
       etendue of emission), e.g. Marti et al., J. Appl. Phys. 82, 4067 (1997).
    """
    return (
        K_B
        * np.asarray(temperature_K, float)
        / Q
        * -np.log(emission_factor_from_half_angle(half_angle_rad))
    )


def voc_loss_rear_emission(temperature_K, refractive_index, front_factor=1.0):  # noqa: N803
    """Open-circuit voltage loss [V] when the downward emission (``n^2`` times the front
    emission) is lost: ``(kT/q) ln((F + n^2)/F)``."""
    n2 = np.asarray(refractive_index, float) ** 2
    f = np.asarray(front_factor, float)
    return K_B * np.asarray(temperature_K, float) / Q * np.log((f + n2) / f)


def downward_fraction(ere, front_factor, refractive_index, rear_on):
    """Fraction of a junction's recombination emitted downwards, ``ERE n^2 r / (F + n^2 r)``.

    Parameters
    ----------
    ere : array_like
        Radiative efficiency (fraction of recombination that is radiative), (0, 1].
    front_factor : array_like
        Front emission factor ``F`` (dimensionless).
    refractive_index : array_like
        Refractive index ``n``.
    rear_on : array_like of bool
        Whether the junction's downward emission is modelled (``r``).

    Returns
    -------
    numpy.ndarray
    """
    n2r = np.asarray(refractive_index, float) ** 2 * np.asarray(rear_on, float)
    return np.asarray(ere, float) * n2r / (np.asarray(front_factor, float) + n2r)


def coupling_coefficients(beta, coupling_fraction, collection):
    """``k_i = eta_c,i+1 c_i beta_i``: collected coupled current in junction ``i+1`` per unit
    dark current of junction ``i``; shape ``(M, N)``, last column 0."""
    beta = np.asarray(beta, float)
    k = np.zeros(beta.shape)
    c = np.broadcast_to(np.asarray(coupling_fraction, float), beta.shape)
    eta = np.broadcast_to(np.asarray(collection, float), beta.shape)
    k[..., :-1] = eta[..., 1:] * c[..., :-1] * beta[..., :-1]
    return k


def series_chain(jph, j0, vt, k):
    """Equivalent Boltzmann diodes of a luminescently coupled series string.

    Parameters
    ----------
    jph : numpy.ndarray
        Photocurrents from the incident light [A m^-2], ``(M, N)``.
    j0 : numpy.ndarray
        Dark saturation currents (all channels) [A m^-2].
    vt : numpy.ndarray
        Thermal voltages [V].
    k : numpy.ndarray
        Coupling coefficients (:func:`coupling_coefficients`).

    Returns
    -------
    tuple
        ``(BoltzmannDiodes(a/b, j0/b, vt), a, b)``; at series current ``J`` the dark
        current of junction ``i`` is ``a_i - b_i J`` and its total photocurrent
        ``a_i - (b_i - 1) J``.
    """
    jph = np.asarray(jph, float)
    a = np.empty_like(jph)
    b = np.empty_like(jph)
    a[:, 0] = jph[:, 0]
    b[:, 0] = 1.0
    for i in range(1, jph.shape[1]):
        a[:, i] = jph[:, i] + k[:, i - 1] * a[:, i - 1]
        b[:, i] = 1.0 + k[:, i - 1] * b[:, i - 1]
    return BoltzmannDiodes(a / b, j0 / b, vt), a, b


def _mpp_with_price(jeff, j0, vt, r, price, x0):
    """Maximise ``J V(J) - r J^2 + price (J_eff - J)`` over ``J`` in ``[0, J_eff]``."""
    lnj0 = np.log(j0)

    def grad(j):
        w = jeff + j0 - j
        return vt * (np.log(w) - lnj0) - j * vt / w - 2.0 * r * j - price

    def hess(j):
        w = jeff + j0 - j
        return -2.0 * vt / w - j * vt / (w * w) - 2.0 * r

    with np.errstate(divide="ignore", invalid="ignore"):
        return maximise_concave(grad, hess, np.zeros_like(jeff), np.maximum(jeff, 0.0), x0)


def solve_independent_coupled(jph, j0, vt, k, r=0.0, *, tol_rel=1e-13, max_sweeps=100):
    """Maximum total power of independently connected, luminescently coupled junctions.

    Parameters
    ----------
    jph : numpy.ndarray
        Photocurrents from the incident light [A m^-2], ``(M, N)``.
    j0 : numpy.ndarray
        Dark saturation currents (all channels) [A m^-2].
    vt : numpy.ndarray
        Thermal voltages [V].
    k : numpy.ndarray
        Coupling coefficients (:func:`coupling_coefficients`).
    r : float or numpy.ndarray
        Series resistance of each junction [ohm m^2].

    Returns
    -------
    tuple of numpy.ndarray
        ``(j, v_junction, j_eff)``: current density [A m^-2], junction voltage [V] and
        total photocurrent (incident plus coupled) [A m^-2] of each junction, ``(M, N)``.

    Notes
    -----
    Junction ``i`` maximises ``J_i (V_i(J_i) - r_i J_i) + k_i mu_{i+1} D_i`` where
    ``mu_{i+1}`` is the derivative of the power of the junctions below with respect to
    their photocurrent, ``mu_i = J_i V_t,i / (J_eff,i + J0_i - J_i) + k_i mu_{i+1}``. Each
    sub-problem is strictly concave (exact Newton); sweeps alternate down (photocurrents)
    and up (prices) until no current moves by more than ``tol_rel`` of the photocurrent.
    Without coupling one sweep gives every junction's own maximum power point.

    Batches of at least ``kernels.MIN_STACKS`` stacks run the same sweeps in the
    compiled kernel of :mod:`._jit`, one stack at a time (each stops at its own
    convergence); the numpy sweeps stay the reference (``tests/test_kernels.py``).
    """
    jph = np.asarray(jph, float)
    m, n = jph.shape
    j0 = np.broadcast_to(j0, jph.shape)
    vt = np.broadcast_to(vt, jph.shape)
    r = np.broadcast_to(np.asarray(r, float), jph.shape)
    k = np.broadcast_to(k, jph.shape)
    if kernels.for_batch(m):
        j, jeff = np.empty((m, n)), np.empty((m, n))
        c = [np.ascontiguousarray(x, dtype=float) for x in (jph, j0, vt, k, r)]
        kernels.jit().independent_coupled(*c, float(tol_rel), int(max_sweeps), j, jeff)
    else:
        j, jeff = _sweeps(jph, j0, vt, k, r, tol_rel, max_sweeps)
    with np.errstate(divide="ignore"):
        v = vt * (np.log(jeff + j0 - j) - np.log(j0))
    return j, v, jeff


def _sweeps(jph, j0, vt, k, r, tol_rel, max_sweeps):
    """The block coordinate sweeps of :func:`solve_independent_coupled` on whole arrays
    (the numpy reference of the compiled kernel); returns ``(j, j_eff)``."""
    m, n = jph.shape
    price = np.zeros((m, n))  # k_i mu_{i+1}
    j = 0.9 * jph
    jeff = jph.copy()
    scale = np.maximum(jph.max(axis=1, keepdims=True), 1e-300)
    for _ in range(max_sweeps):
        j_old = j.copy()
        for i in range(n):
            jeff[:, i] = jph[:, i] + (k[:, i - 1] * (jeff[:, i - 1] - j[:, i - 1]) if i else 0.0)
            j[:, i] = _mpp_with_price(
                jeff[:, i],
                j0[:, i],
                vt[:, i],
                r[:, i],
                price[:, i],
                np.clip(j[:, i], 0.0, jeff[:, i]),
            )
        mu = np.zeros(m)
        for i in range(n - 1, 0, -1):
            w = jeff[:, i] + j0[:, i] - j[:, i]
            mu = j[:, i] * vt[:, i] / w + k[:, i] * mu
            price[:, i - 1] = k[:, i - 1] * mu
        if np.all(np.abs(j - j_old) <= tol_rel * scale) or not np.any(k):
            break
    return j, jeff
