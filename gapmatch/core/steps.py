"""Step absorptance: what each junction of a stack takes of the light above its gap.

One function, :func:`step_shares`, for every quantity counted above a gap (photon flux,
power), for one spectrum ``(M, N)`` or a batch of spectra ``(H, M, N)``.

References
----------
.. [1] A. De Vos, J. Phys. D 13, 839 (1980) (stacked ideal absorbers).
"""

from __future__ import annotations

import numpy as np

__all__ = ["step_shares"]


def step_shares(above: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each junction's share of a quantity counted above its gap (step absorptance).

    Parameters
    ----------
    above : numpy.ndarray
        A cumulative quantity above each junction's gap (photon flux, power), shape
        ``(..., N)`` with the junctions, top first, on the last axis.

    Returns
    -------
    shares : numpy.ndarray
        ``max(F_i, max_{j<=i} F_j) - max_{j<i} F_j``, shape ``(..., N)``: what junction
        ``i`` absorbs of what the junctions above it let through.
    total : numpy.ndarray
        What the whole stack absorbs, ``max_i F_i``, shape ``(...)``.
    """
    acc = np.maximum.accumulate(above, axis=-1)
    prev = np.concatenate([np.zeros_like(acc[..., :1]), acc[..., :-1]], axis=-1)
    return acc - prev, acc[..., -1]
