"""Current-voltage curves of an evaluated stack, for plotting.

:func:`jv_curve` draws the curves of the stack a result describes under the result's own
illumination and cell conditions (it takes nothing else), so the curve always passes
through the result's numbers: J(0) is each junction's J_sc and the current vanishes at
its V_oc.
"""

from __future__ import annotations

import numpy as np

from .core.diodes import make_diodes
from .core.engine import step_photocurrents
from .errors import InputError
from .limits import check_cell_conditions, check_gaps
from .results import BatchResult
from .units import EV, K_B, Q, a_m2_to_ma_cm2

__all__ = ["jv_curve"]


def jv_curve(result: BatchResult, i: int = 0, *, points: int = 200) -> dict:
    """Current-voltage curves of stack ``i`` of a result.

    Parameters
    ----------
    result : BatchResult
        An evaluation (from :func:`gapmatch.evaluate` or :func:`gapmatch.api.solve`);
        its illumination, cell conditions and stack physics are used.
    i : int
        Stack index (0 = first row of the batch).
    points : int
        Points per curve, 2 to 100,000.

    Returns
    -------
    dict
        ``junctions``: a list (top first) of ``(voltage [V], current density
        [mA cm^-2])`` arrays, one per junction from 0 V to its V_oc; ``stack``: the
        series string's curve from J = 0 to the smallest photocurrent (series
        connection only, else ``None``).

    Raises
    ------
    InputError
        For something other than a result, an index outside the batch, ``points``
        outside 2-100,000, a result without its model objects, cell conditions outside
        the ranges :func:`gapmatch.evaluate` accepts, or a luminescently coupled stack
        (whose junction curves depend on each other).

    Notes
    -----
    Ideal stacks: each junction's diode (Boltzmann or Bose-Einstein form, as evaluated)
    with the other junctions at 0 V. Non-ideal stacks (finite absorbers, emission cone,
    gap temperature model, collection, series resistance): Boltzmann diodes rebuilt from
    the result's own photocurrents and open-circuit voltages; the series curve includes
    the stack's series resistance.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    """
    if not isinstance(result, BatchResult):
        raise InputError(
            "result", "must be a result of gapmatch.evaluate or gapmatch.api.solve", type(result)
        )
    whole = (int, np.integer)
    if isinstance(i, bool) or not isinstance(i, whole) or not 0 <= i < len(result):
        raise InputError("i", f"must be a stack index in [0, {len(result) - 1}]", i)
    if isinstance(points, bool) or not isinstance(points, whole) or not 2 <= points <= 100_000:
        raise InputError("points", "must be a whole number in [2, 100000]", points)
    stack, illum, cell = result.stack_model, result.illumination, result.cell
    if stack is None or illum is None or cell is None:
        raise InputError("result", "carries no model objects (build it with gapmatch.evaluate)")
    # the same checks as evaluate: a hand-built CellConditions is not validated on its own
    check_gaps(stack.gaps_eV[i : i + 1], require_descending=False)
    check_cell_conditions(stack.n_junctions, cell.temperature_K, cell.ere, cell.dark_current)
    if stack.physics is not None:
        return _nonideal(result, i, points)
    t, e, model = cell.temperature_K, cell.ere, cell.dark_current
    gaps = stack.gaps_eV[i : i + 1] * EV
    jph = step_photocurrents(gaps, illum.spectrum)
    d = make_diodes(model, jph, gaps, t, e, 1.0)
    voc = d.voc()[0]
    n = gaps.shape[1]
    curves = []
    dk = make_diodes(model, np.repeat(jph, points, 0), np.repeat(gaps, points, 0), t, e, 1.0)
    for k in range(n):
        v = np.linspace(0.0, voc[k], points)
        volts = np.zeros((points, n))  # other junctions at 0 V: always valid
        volts[:, k] = v
        curves.append((v, a_m2_to_ma_cm2(dk.current(volts)[:, k])))
    curve = None
    if stack.connection == "series":
        j = np.linspace(0.0, jph.min(), points)
        with np.errstate(divide="ignore"):
            v = dk.voltage(j[:, None]).sum(axis=1)
        curve = (v, a_m2_to_ma_cm2(j))
    return {"junctions": curves, "stack": curve}


def _nonideal(result: BatchResult, i: int, points: int) -> dict:
    """J-V curves of a non-ideal result from its own photocurrents and V_oc."""
    physics = result.stack_model.physics
    if physics.coupled:
        raise InputError("jv_curve", "curves of luminescently coupled stacks are not drawn")
    if result.cell.dark_current != "boltzmann":
        raise InputError("jv_curve", "non-ideal curves need the 'boltzmann' dark current")
    sol = result.solution
    n = sol.jph.shape[1]
    vt = K_B * result.cell.temperature_per_junction(n) / Q
    jph = sol.jph[i]
    voc = sol.voc_junction[i]
    j0 = jph / np.expm1(voc / vt)
    curves = []
    for k in range(n):
        v = np.linspace(0.0, voc[k], points)
        curves.append((v, a_m2_to_ma_cm2(jph[k] - j0[k] * np.expm1(v / vt[k]))))
    curve = None
    if result.connection == "series":
        r = float(physics.series_resistance_ohm_m2.ravel()[0])
        j = np.linspace(0.0, jph.min(), points)
        with np.errstate(divide="ignore"):
            v = (vt * np.log1p((jph - j[:, None]) / j0)).sum(axis=1) - r * j
        curve = (v, a_m2_to_ma_cm2(j))
    return {"junctions": curves, "stack": curve}
