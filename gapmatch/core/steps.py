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
    # the running maximum junction by junction: N whole-array passes (a strided
    # np.maximum.accumulate along the short last axis costs 3-4x more); same values
    acc = np.array(above, copy=True, order="K")
    for i in range(1, acc.shape[-1]):
        np.maximum(acc[..., i - 1], acc[..., i], out=acc[..., i])
    shares = acc.copy(order="K")
    shares[..., 1:] -= acc[..., :-1]
    return shares, acc[..., -1]
