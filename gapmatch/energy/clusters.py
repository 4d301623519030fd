"""Representative spectra: a year of hours reduced to a few dozen weighted spectra.

Searches evaluate thousands of candidate stacks; a year of hours per candidate is
costly, and the annual energy is a smooth function of a small number of distinct
conditions. Following Ripalda et al. (2018), the hours are clustered by k-means
(:func:`scipy.cluster.vq.kmeans2`, fixed seed, so one seed gives one answer) on
features that decide a stack's output:

* the *shape* of the in-plane spectrum (each hour's spectrum divided by its integral,
  each wavelength whitened to unit spread over the year), which sets the current
  balance between junctions;
* the in-plane irradiance and the air temperature (whitened, with weights
  ``irradiance_weight`` and ``temperature_weight``), which set the voltages.

Each cluster is replaced by the *mean* spectrum of its members with weight equal to the
number of members, so the in-plane irradiation of the reduced set equals the full
year's exactly; its air temperature and wind speed are the members' means. The
reduced set serves searches; the final answer is evaluated on the full year, and
:func:`reduction_error` reports the annual-energy error of the reduced set.

References
----------
.. [1] J. M. Ripalda, J. Buencuerpo and I. Garcia, "Solar cell designs by maximizing
   energy production based on machine learning clustering of spectral variations",
   Nat. Commun. 9, 5126 (2018).
.. [2] D. Arthur and S. Vassilvitskii, "k-means++: the advantages of careful seeding",
   Proc. SODA 2007 (``minit="++"``).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .spectra import HourlySpectra, trapezoid_W_m2

__all__ = ["representative_spectra", "reduction_error"]


def representative_spectra(
    spectra: HourlySpectra,
    k: int = 36,
    *,
    seed: int = 0,
    irradiance_weight: float = 1.0,
    temperature_weight: float = 0.5,
) -> tuple[HourlySpectra, np.ndarray]:
    """Cluster the hours into ``k`` weighted representative spectra.

    Parameters
    ----------
    spectra : HourlySpectra
        The full set of intervals (weights 1).
    k : int
        Number of representatives, in [2, number of intervals].
    seed : int
        Seed of the k-means initialisation (k-means++).
    irradiance_weight, temperature_weight : float
        Weights of the whitened irradiance and air temperature features relative to
        the (whitened) spectral shape as a whole, each in [0, 100].

    Returns
    -------
    tuple
        ``(reduced, labels)``: the reduced :class:`HourlySpectra` (weights = cluster
        sizes; times of the member nearest each centroid, so month/hour tables of a
        reduced set are indicative only) and each interval's cluster, ``(H,)``.
    """
    from scipy.cluster.vq import kmeans2

    h = spectra.hours
    if not isinstance(k, int | np.integer) or not 2 <= k <= h:
        raise InputError("k", f"must be an integer in [2, {h}] (the number of intervals)", k)
    for name, v in (
        ("irradiance_weight", irradiance_weight),
        ("temperature_weight", temperature_weight),
    ):
        if not 0.0 <= float(v) <= 100.0:
            raise InputError(name, "must be in [0, 100]", v)
    poa = spectra.poa_W_m2
    ok = poa > 0
    shape = np.zeros_like(spectra.poa_W_m2_nm)
    shape[ok] = spectra.poa_W_m2_nm[ok] / poa[ok, None]

    def whiten(a):
        s = a.std(axis=0)
        return (a - a.mean(axis=0)) / np.where(s > 0, s, 1.0)

    ws = whiten(shape) / np.sqrt(shape.shape[1])  # the whole shape counts as one feature
    feats = np.column_stack(
        [
            ws,
            irradiance_weight * whiten(poa[:, None]),
            temperature_weight * whiten(spectra.temp_air_C[:, None]),
        ]
    )
    centroids, labels = kmeans2(feats, int(k), seed=int(seed), minit="++", iter=30)
    used = np.unique(labels)
    counts = np.bincount(labels, minlength=int(k))[used].astype(float)
    wsum = np.zeros((int(k), spectra.poa_W_m2_nm.shape[1]))
    np.add.at(wsum, labels, spectra.poa_W_m2_nm)
    mean_spec = wsum[used] / counts[:, None]
    ta = np.bincount(labels, weights=spectra.temp_air_C, minlength=int(k))[used] / counts
    wind = np.bincount(labels, weights=spectra.wind_speed_m_s, minlength=int(k))[used] / counts
    d2 = ((feats - centroids[labels]) ** 2).sum(axis=1)
    medoid = np.array([np.flatnonzero(labels == c)[np.argmin(d2[labels == c])] for c in used])
    bb = {}
    for key, v in spectra.broadband.items():
        s = np.bincount(labels, weights=v, minlength=int(k))[used]
        bb[key] = s / counts
    total = trapezoid_W_m2(spectra.wavelength_nm, mean_spec)
    bb["poa_global"] = total
    assumptions = dict(spectra.assumptions)
    assumptions["representative_spectra"] = {
        "method": "k-means (scipy.cluster.vq.kmeans2, k-means++) on whitened spectral "
        "shape, irradiance and air temperature (Ripalda et al. 2018)",
        "k": int(used.size),
        "seed": int(seed),
    }
    reduced = HourlySpectra(
        spectra.times[medoid],
        spectra.wavelength_nm,
        mean_spec,
        spectra.interval_h,
        counts * (spectra.weights[0] if np.all(spectra.weights == spectra.weights[0]) else 1.0),
        bb,
        ta,
        wind,
        assumptions,
    )
    return reduced, labels


def reduction_error(full, reduced, connection: str = "series") -> np.ndarray:
    """Relative annual-energy error of a reduced set against the full year.

    Parameters
    ----------
    full, reduced : YieldResult
        Results of the same stacks on the full year and on its representative spectra.
    connection : str
        Connection compared.

    Returns
    -------
    numpy.ndarray
        ``E_reduced / E_full - 1`` per stack (fraction).
    """
    return reduced.annual_energy_kWh_m2(connection) / full.annual_energy_kWh_m2(connection) - 1.0
