"""Temperature dependence of the gap and of the dark current."""

from __future__ import annotations

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.core.temperature import varshni_gap, varshni_slope
from gapmatch.errors import InputError

# Silicon Varshni parameters as commonly tabulated (from memory; usually attributed to
# C. D. Thurmond, J. Electrochem. Soc. 122, 1133 (1975), not checked against the paper):
# Eg(0) = 1.170 eV, alpha = 4.73e-4 eV/K, beta = 636 K. The tests below use them as
# plausible inputs; what they check is the formula, not the silicon data.
SI = (1.170, 4.73e-4, 636.0)


def test_silicon_varshni_values():
    # Y. P. Varshni, Physica 34, 149 (1967): Eg(T) = Eg(0) - alpha T^2 / (T + beta),
    # written out here; its derivative -alpha T (T + 2 beta) / (T + beta)^2 by hand.
    # Tolerance 1e-12 (eV, relative): float64 rounding of a few operations.
    eg0, alpha, beta = SI
    t = 300.0
    eg300 = varshni_gap(SI[0], SI[1], SI[2], t)
    assert eg300 == pytest.approx(eg0 - alpha * t**2 / (t + beta), abs=1e-12)
    # silicon near 1.12 eV at room temperature (common practice, no source)
    assert eg300 == pytest.approx(1.12, abs=0.01)
    slope = varshni_slope(SI[1], SI[2], t)
    assert slope == pytest.approx(-alpha * t * (t + 2 * beta) / (t + beta) ** 2, rel=1e-12)
    # the slope is the derivative of the gap (central difference, step 1e-3 K; truncation
    # error ~1e-12 eV/K)
    h = 1e-3
    fd = (varshni_gap(*SI, 300.0 + h) - varshni_gap(*SI, 300.0 - h)) / (2 * h)
    assert slope == pytest.approx(fd, rel=1e-7)


def test_gap_moves_with_cell_temperature():
    # The given gap holds at the reference temperature (300 K): at 350 K the engine's gap
    # must equal the Varshni gap of the same material at 350 K. Tolerance 1e-12 eV.
    eg300 = varshni_gap(*SI, 300.0)
    res = gm.evaluate([eg300], "independent", temperature_K=350.0, varshni=SI[1:])
    eg_cell = res.solution.gaps_J[0, 0] / gm.units.EV
    assert eg_cell == pytest.approx(varshni_gap(*SI, 350.0), abs=1e-12)
    assert res.stack(0)["junctions"][0]["gap_cell_eV"] == pytest.approx(eg_cell)
    assert res.gaps_eV[0, 0] == eg300  # the gaps as given are kept for display


def test_linear_coefficient():
    # Linear model E_g(T) = E_g(T_ref) + dEg/dT (T - T_ref); tolerance 1e-12 eV.
    res = gm.evaluate(
        [1.72, 1.12],
        "series",
        temperature_K=[330.0, 340.0],
        dEg_dT_eV_K=[-3e-4, -2.5e-4],
        gap_reference_K=298.15,
    )
    eg = res.solution.gaps_J[0] / gm.units.EV
    np.testing.assert_allclose(eg, [1.72 - 3e-4 * 31.85, 1.12 - 2.5e-4 * 41.85], atol=1e-12)


@pytest.mark.parametrize("gaps", [[1.1245], [1.72, 1.1245]])
def test_efficiency_falls_as_the_cell_warms(gaps):
    # Silicon's gap narrows as it warms (Varshni 1967) and kT in the dark current grows:
    # the efficiency falls monotonically from 270 K to 400 K.
    temps = [270.0, 300.0, 325.0, 350.0, 400.0]
    eff = [
        gm.evaluate(gaps, "series", temperature_K=t, varshni=SI[1:]).efficiency[0] for t in temps
    ]
    assert np.all(np.diff(eff) < 0)
    # the temperature model does nothing at the reference temperature: same numbers as
    # the ideal engine to rounding (rtol 1e-12; different code path, same formulas)
    ideal = gm.evaluate(gaps, "series")
    assert eff[1] == pytest.approx(ideal.efficiency[0], rel=1e-12)


def test_bose_einstein_with_temperature_model():
    # The exact Bose-Einstein dark current also works with shifted gaps; close to the
    # Boltzmann result for a 1.12 eV gap (difference O(exp(-Eg/kT)), tolerance 1e-6).
    a = gm.evaluate([1.12], temperature_K=330.0, varshni=SI[1:], dark_current="bose-einstein")
    b = gm.evaluate([1.12], temperature_K=330.0, varshni=SI[1:])
    assert a.efficiency[0] == pytest.approx(b.efficiency[0], rel=1e-6)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"varshni": SI[1:], "dEg_dT_eV_K": -3e-4}, "varshni: give either"),
        ({"varshni": (-1e-4, 600.0)}, r"varshni alpha: every value must be finite and in \[0"),
        ({"varshni": (4.7e-4, 0.0)}, "varshni beta"),
        ({"varshni": [1, 2, 3]}, "varshni: needs one"),
        ({"dEg_dT_eV_K": 0.5}, r"dEg_dT_eV_K: must be a number in \[-0.01, 0.01\]"),
        ({"gap_reference_K": -5}, "gap_reference_K"),
        ({"dEg_dT_eV_K": -0.01, "temperature_K": 1000.0}, "temperature_K: moves a gap outside"),
    ],
)
def test_validation(kwargs, match):
    with pytest.raises(InputError, match=match):
        gm.evaluate([1.72, 1.12], **kwargs)
