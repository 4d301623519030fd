"""The polylogarithm behind every Bose-Einstein integral, against mpmath.

``gapmatch.core.planck.polylog_exp(s, d)`` returns ``Li_s(exp(-d))`` for orders 1 to 4 and
``d > 0``. It switches method at ``d = 1`` (direct series above, closed forms / the
expansion about ``d = 0`` below). The reference is ``mpmath.polylog`` evaluated at 40
significant digits on the exact binary value of each ``d`` (mpmath is a general-purpose
arbitrary-precision library; its polylog does not share code or method with ours).
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest

from gapmatch.core.planck import polylog_exp

# Tolerance 1e-14 relative (about 45 ulp): each method sums at most 45 terms of one sign
# (or a closed form of two library calls), every term carrying a few ulp of rounding from
# exp(-d) and the division, so the result is good to a few ulp; the largest deviation seen
# on this grid is 2e-15. A wrong branch or a truncated series would be off by far more
# (the first omitted series term at d = 1 is exp(-46) / 46^s, but at d = 0.5 it would
# already be 1e-10).
RTOL = 1e-14

_SWITCH = 1.0  # where planck.py changes method; the grid straddles it closely
D_GRID = np.unique(
    np.concatenate(
        [
            np.geomspace(1e-6, 60.0, 61),
            [np.nextafter(_SWITCH, 0.0), _SWITCH, np.nextafter(_SWITCH, 2.0)],
            [0.999, 0.9999999, 1.0000001, 1.001],
            [2.0 * np.pi - 1e-3, 2.0 * np.pi, 6.0],  # radius of the d = 0 expansion is 2 pi
        ]
    )
)


def _reference(s: int, d: np.ndarray) -> np.ndarray:
    with mpmath.workdps(40):
        return np.array([float(mpmath.polylog(s, mpmath.exp(-mpmath.mpf(float(x))))) for x in d])


@pytest.mark.parametrize("s", [1, 2, 3, 4])
def test_polylog_exp_matches_mpmath(s):
    got = polylog_exp(s, D_GRID)
    ref = _reference(s, D_GRID)
    assert got.shape == D_GRID.shape
    np.testing.assert_allclose(got, ref, rtol=RTOL, atol=0.0)


@pytest.mark.parametrize("s", [1, 2, 3, 4])
def test_polylog_exp_is_continuous_across_the_branch_switch(s):
    # Both sides of d = 1 agree with each other to the same tolerance (the value itself
    # is checked against mpmath above): no jump where the method changes.
    lo = polylog_exp(s, np.array([np.nextafter(_SWITCH, 0.0)]))[0]
    hi = polylog_exp(s, np.array([_SWITCH]))[0]
    assert lo == pytest.approx(hi, rel=RTOL)


@pytest.mark.parametrize("s", [1, 2, 3, 4])
def test_polylog_exp_keeps_the_shape_of_its_argument(s):
    d = D_GRID[:60].reshape(3, 4, 5)
    np.testing.assert_array_equal(polylog_exp(s, d), polylog_exp(s, d.ravel()).reshape(d.shape))
