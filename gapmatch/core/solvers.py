"""Vectorised one-dimensional solvers used by the connection models.

All maximum power points in gapmatch are maxima of a strictly concave function of one
variable (current for series strings, voltage otherwise). They are found as the root of
the decreasing derivative by Newton's method, safeguarded by a bracket that every
iteration tightens and by bisection whenever a Newton step would leave the bracket.
Convergence is quadratic near the root; the loop runs over iterations, never over stacks.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = ["maximise_concave", "XTOL_REL"]

#: relative tolerance on the solution variable
XTOL_REL = 1e-13


def maximise_concave(
    grad: Callable[[np.ndarray], np.ndarray],
    hess: Callable[[np.ndarray], np.ndarray],
    lo: np.ndarray,
    hi: np.ndarray,
    x0: np.ndarray,
    *,
    xtol_rel: float = XTOL_REL,
    max_iter: int = 200,
) -> np.ndarray:
    """Maximiser of concave functions on brackets, element-wise.

    Parameters
    ----------
    grad, hess : callable
        First and second derivatives of the objective, vectorised over arrays shaped like
        ``x0``. ``grad`` must be decreasing on ``[lo, hi]``.
    lo, hi : numpy.ndarray
        Bracket: the maximiser lies in ``[lo, hi]``. Where ``grad(hi) >= 0`` the result is
        ``hi``; where ``grad(lo) <= 0`` it is ``lo``.
    x0 : numpy.ndarray
        Starting points inside the bracket.
    xtol_rel : float
        Stop when every Newton step is below ``xtol_rel * (hi0 - lo0)`` plus four units
        in the last place of the iterate.
    max_iter : int
        Iteration cap (reached only by pathological input).

    Returns
    -------
    numpy.ndarray
        The maximisers.
    """
    lo = np.array(lo, dtype=float)
    hi = np.array(hi, dtype=float)
    scale = np.maximum(hi - lo, 1e-300)
    x = np.clip(np.asarray(x0, dtype=float), lo, hi)
    for _ in range(max_iter):
        g = grad(x)
        h = hess(x)
        pos = g > 0
        lo = np.where(pos, x, lo)
        hi = np.where(pos, hi, x)
        with np.errstate(divide="ignore", invalid="ignore"):
            xn = x - g / h
        bad = ~((xn >= lo) & (xn <= hi))  # also catches NaN
        xn = np.where(bad, 0.5 * (lo + hi), xn)
        step = np.abs(xn - x)
        x = xn
        # tolerance: relative to the bracket, but never below a few units in the last place
        tol = xtol_rel * scale + 4.0 * np.spacing(np.abs(x))
        if np.all((step <= tol) | (g == 0) | (hi - lo <= tol)):
            break
    return x
