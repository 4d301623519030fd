"""Where the incident power goes: a loss breakdown per junction and per stack.

Every term is a power density [W m^-2]; for each stack they add up, with the delivered
power, to the incident power (to rounding error). Carriers are counted at the energy of
the gap ``E_g`` of the junction they are in (at the cell temperature).

Reference point. The voltage and recombination terms are evaluated at each junction's
own maximum power point with no series resistance (the independent connection of the
same junctions; with luminescent coupling, the coupled optimum). What the actual
connection and the series resistance cost on top of that is in ``mismatch`` and
``series_resistance``. For a series stack without resistance ``mismatch`` is exactly the
power an independent connection of the same junctions would add.

Terms (``J``, ``V``: reference current and junction voltage; ``D = J_eff - J`` the
recombination current; ``Phi_abs``, ``P_abs``: photons and power the junction absorbs
from the incident light; ``L_in``: coupled luminescence it absorbs, as a current):

==========================  ======================================================
``below_gap``               power leaving the stack unabsorbed below its smallest gap
``incomplete_absorption``   power leaving unabsorbed at or above the smallest gap
                            (finite absorbers)
``thermalisation``          ``P_abs - E_g Phi_abs`` (+ ``(E_g,above - E_g) L_in / q``)
``incomplete_collection``   ``E_g (1 - eta_c) (Phi_abs + L_in / q)``
``emission``                ``E_g / q`` times the radiative recombination that leaves
                            (front emission and lost downward emission)
``nonradiative``            ``E_g (1 - ERE) D / q``
``carnot``                  ``E_g (T_cell / T_sun) J / q``            (blackbody sun)
``boltzmann``               ``kT_cell ln(Omega_emit / Omega_sun) J / q`` (blackbody sun)
``voltage_radiative``       the rest of ``(E_g - q V_oc,rad) J / q``; for a measured
                            spectrum the whole of it
``voltage_nonradiative``    ``(V_oc,rad - V_oc) J``: the voltage lost to ERE < 1
``voltage_mpp``             ``(V_oc - V) J``: open circuit to maximum power
``mismatch``                ``V J`` at the reference minus at the actual operating point
``series_resistance``       ``r J^2`` at the actual operating point
``luminescent_transfer``    coupled luminescence sent to the junction below minus that
                            received (``E_g``-weighted); zero summed over a stack
``output``                  delivered power
==========================  ======================================================

``Omega_emit / Omega_sun = (F + n^2 r) / (C sin^2 theta_sun)`` with front emission factor
``F``, downward emission ``n^2 r`` and the sun's dilution; it is 1 (no Boltzmann loss) at
maximum concentration for a cell emitting into the hemisphere only. For a measured
spectrum the Carnot and Boltzmann terms are not defined and the voltage loss
``(E_g - qV) J / q`` is decomposed into ``voltage_radiative`` (radiative-limit deficit of
``V_oc``), ``voltage_nonradiative`` and ``voltage_mpp``.

With ``E_g q^-1 J``: ``E_g (Phi_abs + L_in/q) = thermalisation' + incomplete_collection +
E_g J_eff / q`` and ``E_g J_eff / q = V J + (E_g - qV) J / q + E_g D / q``, which is how
the terms close.

References
----------
.. [1] L. C. Hirst and N. J. Ekins-Daukes, "Fundamental losses in solar cells",
   Prog. Photovolt. 19, 286 (2011) (below-gap, thermalisation, emission, Carnot and
   Boltzmann losses).
.. [2] U. Rau, Phys. Rev. B 76, 085303 (2007) (non-radiative voltage loss
   ``(kT/q) ln(1/ERE)``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..units import K_B, Q

__all__ = [
    "TERMS",
    "LossBreakdown",
    "carnot_per_carrier",
    "boltzmann_per_carrier",
    "compute_losses",
]

#: loss terms in display order (``output`` last)
TERMS = (
    "below_gap",
    "incomplete_absorption",
    "thermalisation",
    "incomplete_collection",
    "emission",
    "nonradiative",
    "carnot",
    "boltzmann",
    "voltage_radiative",
    "voltage_nonradiative",
    "voltage_mpp",
    "mismatch",
    "series_resistance",
    "luminescent_transfer",
    "output",
)
_STACK_ONLY = ("below_gap", "incomplete_absorption")


def carnot_per_carrier(gap_J, cell_K, sun_K):
    """Carnot loss per extracted carrier ``E_g T_cell / T_sun`` [J] (Hirst & Ekins-Daukes
    2011)."""
    return np.asarray(gap_J, float) * np.asarray(cell_K, float) / np.asarray(sun_K, float)


def boltzmann_per_carrier(cell_K, omega_ratio):
    """Boltzmann loss per extracted carrier ``kT_cell ln(Omega_emit / Omega_sun)`` [J]
    (Hirst & Ekins-Daukes 2011)."""
    return K_B * np.asarray(cell_K, float) * np.log(np.asarray(omega_ratio, float))


@dataclass
class LossBreakdown:
    """Loss terms of a batch of stacks [W m^-2].

    Attributes
    ----------
    junction : dict of str to numpy.ndarray
        Per-junction terms, ``(M, N)`` each (top first).
    stack : dict of str to numpy.ndarray
        Stack-level terms, ``(M,)``: ``below_gap``, ``incomplete_absorption`` and
        ``series_resistance`` (the stack's own resistance in series connection).
    incident_W_m2 : float
        Incident power density [W m^-2].
    output_W_m2 : numpy.ndarray
        Delivered power density [W m^-2], ``(M,)``.
    blackbody : bool
        Whether Carnot and Boltzmann terms are defined (blackbody sun).
    junction_output_W_m2 : numpy.ndarray
        Power each junction delivers [W m^-2], ``(M, N)``, after its own series
        resistance but before the stack's (series connection).
    """

    junction: dict
    stack: dict
    incident_W_m2: float
    output_W_m2: np.ndarray
    blackbody: bool
    junction_output_W_m2: np.ndarray | None = None

    @property
    def terms(self) -> tuple[str, ...]:
        """Names of the terms present, display order."""
        return tuple(t for t in TERMS if t in self.junction or t in self.stack or t == "output")

    def totals(self) -> dict:
        """Stack totals of every term [W m^-2], ``(M,)`` each, ``output`` included."""
        out = {}
        for t in self.terms:
            if t == "output":
                out[t] = self.output_W_m2
                continue
            v = 0.0
            if t in self.junction:
                v = v + self.junction[t].sum(axis=1)
            if t in self.stack:
                v = v + self.stack[t]
            out[t] = np.asarray(v, float)
        return out

    def closure_error(self) -> np.ndarray:
        """``|incident - sum of terms - output| / incident``, ``(M,)``."""
        tot = self.totals()
        s = sum(tot.values())
        return np.abs(self.incident_W_m2 - s) / self.incident_W_m2


def compute_losses(
    *,
    gaps_J,
    temperature_K,
    incident_W_m2: float,
    optics,
    ere,
    collection,
    front_factor,
    n2r,
    coupling_fraction,
    ref_j,
    ref_v,
    ref_jeff,
    ref_voc,
    ref_voc_rad,
    act_j,
    act_v,
    junction_r,
    p_out,
    sun_K=None,
    sun_dilution=None,
    stack_r=0.0,
    stack_j=0.0,
) -> LossBreakdown:
    """Assemble the loss breakdown from the optics and two operating points.

    Parameters
    ----------
    gaps_J : numpy.ndarray
        Gaps at the cell temperature [J], ``(M, N)``.
    temperature_K : numpy.ndarray
        Cell temperature [K], ``(M, N)``.
    incident_W_m2 : float
        Incident power density [W m^-2].
    optics : gapmatch.core.absorption.Optics
        Absorbed photons and powers, unabsorbed power.
    ere, collection, front_factor, n2r, coupling_fraction : numpy.ndarray
        Radiative efficiency, collection efficiency, front emission factor ``F``,
        downward emission factor ``n^2 r`` and coupling fraction ``c`` (0 where none),
        ``(M, N)``.
    ref_j, ref_v, ref_jeff, ref_voc, ref_voc_rad : numpy.ndarray
        Reference point (each junction at its maximum power, no series resistance):
        current [A m^-2], junction voltage [V], total photocurrent [A m^-2], open-circuit
        voltage [V] and radiative-limit open-circuit voltage (ERE = 1) [V].
    act_j, act_v : numpy.ndarray
        Actual junction currents [A m^-2] and junction voltages [V].
    junction_r : numpy.ndarray
        Per-junction series resistance [ohm m^2] (independent connection), ``(M, N)``.
    p_out : numpy.ndarray
        Delivered power density [W m^-2], ``(M,)``.
    stack_r, stack_j : numpy.ndarray
        Series stack only: the stack's series resistance [ohm m^2] and current [A m^-2]
        (the stack-level resistive loss is ``r J^2``).
    sun_K : float, optional
        Sun temperature [K] for a blackbody sun (enables Carnot and Boltzmann terms).
    sun_dilution : float, optional
        ``C sin^2 theta_sun`` of the blackbody sun.

    Returns
    -------
    LossBreakdown

    References
    ----------
    .. [1] L. C. Hirst and N. J. Ekins-Daukes, Prog. Photovolt. 19, 286 (2011).
    """
    g = np.asarray(gaps_J, float)
    t = np.broadcast_to(np.asarray(temperature_K, float), g.shape)
    ere, eta, front, n2r, c = (
        np.broadcast_to(np.asarray(x, float), g.shape)
        for x in (ere, collection, front_factor, n2r, coupling_fraction)
    )
    d = ref_jeff - ref_j
    beta = ere * n2r / (front + n2r)
    sent = c * beta * d  # coupled luminescence sent down [A m^-2]
    l_in = np.zeros_like(g)
    l_in[:, 1:] = sent[:, :-1]
    g_above = np.zeros_like(g)
    g_above[:, 1:] = g[:, :-1]
    eg_q = g / Q
    jt = {}
    jt["thermalisation"] = optics.p_abs - g * optics.phi_abs + (g_above - g) * l_in / Q
    jt["incomplete_collection"] = g * (1.0 - eta) * (optics.phi_abs + l_in / Q)
    jt["emission"] = eg_q * d * ere * (front + n2r * (1.0 - c)) / (front + n2r)
    jt["nonradiative"] = eg_q * d * (1.0 - ere)
    rad_deficit = (eg_q - ref_voc_rad) * ref_j
    blackbody = sun_K is not None
    if blackbody:
        jt["carnot"] = carnot_per_carrier(g, t, sun_K) / Q * ref_j
        jt["boltzmann"] = boltzmann_per_carrier(t, (front + n2r) / sun_dilution) / Q * ref_j
        jt["voltage_radiative"] = rad_deficit - jt["carnot"] - jt["boltzmann"]
    else:
        jt["voltage_radiative"] = rad_deficit
    jt["voltage_nonradiative"] = (ref_voc_rad - ref_voc) * ref_j
    jt["voltage_mpp"] = (ref_voc - ref_v) * ref_j
    jt["mismatch"] = ref_v * ref_j - act_v * act_j
    r = np.broadcast_to(np.asarray(junction_r, float), g.shape)
    jt["series_resistance"] = r * act_j**2
    jt["luminescent_transfer"] = eg_q * sent - g_above / Q * l_in
    jt["output"] = act_v * act_j - r * act_j**2
    st = {
        "below_gap": np.asarray(optics.trans_below, float),
        "incomplete_absorption": np.asarray(optics.trans_above, float),
        "series_resistance": np.broadcast_to(
            np.asarray(stack_r, float) * np.nan_to_num(np.asarray(stack_j, float)) ** 2, g.shape[:1]
        ).copy(),
    }
    j_out = jt.pop("output")
    return LossBreakdown(jt, st, float(incident_W_m2), np.asarray(p_out, float), blackbody, j_out)
