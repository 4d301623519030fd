"""Finite absorbers: absorption-coefficient models, light trapping and stack optics.

A junction of thickness ``d`` with absorption coefficient ``alpha(E)`` absorbs the
fraction ``a(E)`` of the photons that reach it:

* single pass:           ``a = 1 - exp(-alpha d)``
* double pass (ideal rear mirror): ``a = 1 - exp(-2 alpha d)``
* Lambertian light trapping (4 n^2 path enhancement, ideal rear reflector)::

      a = (1 - exp(-4 alpha d)) / (1 - (1 - 1/n^2) exp(-4 alpha d))

  which tends to ``4 n^2 alpha d / (1 + 4 n^2 alpha d)`` for weak absorption and to 1
  for strong absorption.

Light a junction does not absorb goes on to the junctions below (no reflection losses
are modelled; the rear reflector of an upper junction is taken as ideal for its own
above-gap light and transparent to the light the junctions below use). A junction
below therefore receives ``prod_{j<i} (1 - a_j(E))`` of the incident spectrum.

Absorption coefficient models (``E_g`` is the junction's gap):

* ``direct``: ``alpha = alpha_0 sqrt((E - E_g) / 1 eV)`` above ``E_g + E_U/2`` and an
  exponential Urbach tail ``alpha(E_g + E_U/2) exp((E - E_g - E_U/2) / E_U)`` below; the
  join is where the logarithmic slope of the square-root edge equals ``1/E_U``, so value
  and slope are continuous. ``E_U = 0`` gives the bare square-root edge.
* ``indirect``: ``alpha = alpha_0 ((E - E_g) / 1 eV)^2`` (phonon-assisted edge, phonon
  energy neglected) with the Urbach tail joined at ``E_g + 2 E_U``.
* ``table``: ``alpha(E)`` interpolated linearly in photon energy from a table (zero below
  the table, the last value above it); read with :func:`gapmatch.io.absorption.read_alpha_csv`.
* ``step``: the ideal engine's absorptance, 1 above the gap and 0 below.

Tails are cut ``TAIL_DEPTH`` Urbach energies below the join (the absorption coefficient
has fallen by exp(-25) there). If ``E_U > kT`` the radiative dark current of a thick
absorber is dominated by the deep tail and hence by this cut-off: such tails are outside
what the model describes.

Integration: photocurrents and absorbed powers are sums over energy bins of the
absorptance at the bin's centroid photon energy times the *exact* photon flux and power
of the bin (from the spectrum's own cumulative integrals), on a grid made of the
spectrum's native nodes (for tabulated spectra), a uniform ``kT/15`` fill where the
spectrum has no nodes, and every junction's gap inserted as a node (with nodes graded in
``sqrt(E - E_g)`` just above it). The radiative dark current uses the same absorptance
(reciprocity, Rau 2007) with the exact Boltzmann emission of each bin (absorptance at the
emission centroid), so a step absorber reproduces the ideal engine to rounding error,
and the bin powers add up to the incident power exactly.

Batches of at least ``kernels.MIN_STACKS / OPTICS_WEIGHT`` stacks (64 by default) of the
built-in absorber classes run the same quadrature in the compiled kernel of
:mod:`._optics_jit`, one stack at a time over the shared grid (no per-stack sort, buffers
reused); the numpy code below stays the reference (1e-12 relative,
``tests/test_kernels.py``).

References
----------
.. [1] E. Yablonovitch, "Statistical ray optics", J. Opt. Soc. Am. 72, 899 (1982)
   (4 n^2 limit of light trapping).
.. [2] T. Tiedje, E. Yablonovitch, G. D. Cody and B. G. Brooks, "Limiting efficiency of
   silicon solar cells", IEEE Trans. Electron Devices 31, 711 (1984) (absorptance of a
   Lambertian absorber with an ideal rear reflector; form quoted from memory).
.. [3] U. Rau, Phys. Rev. B 76, 085303 (2007) (emission from the absorptance).
.. [4] F. Urbach, "The long-wavelength edge of photographic sensitivity and of the
   electronic absorption of solids", Phys. Rev. 92, 1324 (1953) (exponential tail).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..units import EV, K_B, C, H, Q
from . import kernels
from .diodes import ln_j0_radiative
from .planck import PLANCK_PREFACTOR, boltzmann_bin_emission
from .spectra import Spectrum, TabulatedSpectrum

__all__ = [
    "ABSORBER_MODELS",
    "LIGHT_TRAPPING",
    "TAIL_DEPTH",
    "DEFAULT_ALPHA0_PER_CM",
    "DirectGapAbsorption",
    "IndirectGapAbsorption",
    "TabulatedAbsorption",
    "absorptance",
    "Optics",
    "stack_optics",
    "step_optics",
]

ABSORBER_MODELS = ("step", "direct", "indirect", "table")
LIGHT_TRAPPING = ("single", "double", "lambertian")
#: tails are cut this many Urbach energies below the join
TAIL_DEPTH = 25.0
#: default alpha_0 [cm^-1] (absorption coefficient 1 eV above the gap); order-of-magnitude
#: values for a direct absorber such as GaAs and for silicon (fitted between 1.24 and
#: 1.55 eV); from memory, common practice, no source
DEFAULT_ALPHA0_PER_CM = {"direct": 5.0e4, "indirect": 4.5e3}


@dataclass(frozen=True)
class DirectGapAbsorption:
    """Direct-gap square-root edge with an exponential Urbach tail.

    Parameters
    ----------
    alpha0_per_m : float
        Absorption coefficient 1 eV above the gap [m^-1].
    urbach_J : float
        Urbach energy [J], >= 0 (0: no tail).
    """

    alpha0_per_m: float
    urbach_J: float = 0.0
    kind = "direct"
    _power = 0.5

    def _join(self) -> float:
        """Distance above the gap [J] where the tail joins the edge: the logarithmic
        slope ``p / (E - E_g)`` of ``(E - E_g)^p`` equals ``1 / E_U`` there."""
        return self._power * self.urbach_J

    def alpha(self, energy_J, gap_J):  # noqa: N803
        """Absorption coefficient [m^-1] at photon energy ``energy_J`` for gap ``gap_J``."""
        e = np.asarray(energy_J, dtype=float)
        de = e - np.asarray(gap_J, dtype=float)
        x = np.maximum(de, 0.0) * (1.0 / EV)
        edge = self.alpha0_per_m * (np.sqrt(x) if self._power == 0.5 else x * x)
        eu = self.urbach_J
        if eu <= 0:
            return edge
        j = self._join()
        a_join = self.alpha0_per_m * (j / EV) ** self._power
        below = de < j
        if not below.any():
            return edge
        # tail only where needed (bins below the join), zero beyond TAIL_DEPTH
        u = np.clip((de - j) / eu, -TAIL_DEPTH, 0.0)
        tail = np.where(u > -TAIL_DEPTH, a_join * np.exp(u), 0.0)
        return np.where(below, tail, edge)

    def floor_J(self, gap_J):  # noqa: N803
        """Lowest photon energy [J] with non-zero absorption."""
        j = self._join()
        return np.asarray(gap_J, dtype=float) + j - TAIL_DEPTH * self.urbach_J


@dataclass(frozen=True)
class IndirectGapAbsorption(DirectGapAbsorption):
    """Indirect-gap quadratic edge ``alpha_0 ((E - E_g)/1 eV)^2`` with an Urbach tail.

    Parameters
    ----------
    alpha0_per_m : float
        Absorption coefficient 1 eV above the gap [m^-1].
    urbach_J : float
        Urbach energy [J], >= 0 (0: no tail).
    """

    kind = "indirect"
    _power = 2.0


@dataclass(frozen=True, eq=False)
class TabulatedAbsorption:
    """Absorption coefficient interpolated from a table.

    Parameters
    ----------
    energy_J : numpy.ndarray
        Strictly increasing photon energies [J].
    alpha_per_m : numpy.ndarray
        Absorption coefficient [m^-1], finite and >= 0.
    source : str
        Where the table came from.
    """

    energy_J: np.ndarray
    alpha_per_m: np.ndarray
    source: str = ""
    kind = "table"

    def alpha(self, energy_J, gap_J=None):  # noqa: N803
        """Absorption coefficient [m^-1]; the gap is not used (the table is absolute)."""
        e = np.asarray(energy_J, dtype=float)
        return np.interp(
            e, self.energy_J, self.alpha_per_m, left=0.0, right=float(self.alpha_per_m[-1])
        )

    def floor_J(self, gap_J):  # noqa: N803
        """Lowest tabulated photon energy [J]."""
        return np.full(np.shape(gap_J), float(self.energy_J[0]))


def absorptance(alpha_d, trapping: str = "single", refractive_index=3.5):
    """Absorptance of a slab from its optical thickness ``alpha d``.

    Parameters
    ----------
    alpha_d : array_like
        Absorption coefficient times thickness (dimensionless), >= 0.
    trapping : {"single", "double", "lambertian"}
        Single pass, double pass (ideal rear mirror), or Lambertian light trapping.
    refractive_index : float
        Refractive index of the absorber (Lambertian only), >= 1.

    Returns
    -------
    numpy.ndarray
        Absorptance in [0, 1].

    References
    ----------
    .. [1] E. Yablonovitch, J. Opt. Soc. Am. 72, 899 (1982).
    .. [2] T. Tiedje et al., IEEE Trans. Electron Devices 31, 711 (1984).
    """
    ad = np.asarray(alpha_d, dtype=float)
    if trapping == "single":
        return -np.expm1(-ad)
    if trapping == "double":
        return -np.expm1(-2.0 * ad)
    if trapping == "lambertian":
        n2 = np.asarray(refractive_index, dtype=float) ** 2
        x = np.exp(-4.0 * ad)
        return -np.expm1(-4.0 * ad) / (1.0 - (1.0 - 1.0 / n2) * x)
    raise ValueError(f"light trapping must be one of {LIGHT_TRAPPING}")


@dataclass
class Optics:
    """Where the incident photons of each stack go (SI).

    Attributes
    ----------
    phi_abs : numpy.ndarray
        Photon flux absorbed by each junction [m^-2 s^-1], ``(M, N)``.
    p_abs : numpy.ndarray
        Power density of those photons [W m^-2], ``(M, N)``.
    trans_below : numpy.ndarray
        Power density leaving the stack unabsorbed below the smallest gap [W m^-2], ``(M,)``.
    trans_above : numpy.ndarray
        Power density leaving unabsorbed at or above the smallest gap [W m^-2], ``(M,)``.
    j0_unit : numpy.ndarray or None
        Radiative saturation current of each junction for emission into a hemisphere of
        index 1 through its absorptance [A m^-2], ``(M, N)``; ``None`` for step absorbers
        (the closed form applies).
    """

    phi_abs: np.ndarray
    p_abs: np.ndarray
    trans_below: np.ndarray
    trans_above: np.ndarray
    j0_unit: np.ndarray | None = None


def step_optics(gaps_J, spectrum: Spectrum) -> Optics:  # noqa: N803
    """Optics of step absorbers, exactly as the ideal engine treats them.

    Parameters
    ----------
    gaps_J : numpy.ndarray
        Gaps [J], ``(M, N)``, top first.
    spectrum : Spectrum
        Incident spectrum.

    Returns
    -------
    Optics
        ``j0_unit`` is ``None``.
    """

    def shares(f):
        acc = np.maximum.accumulate(f, axis=1)
        prev = np.concatenate([np.zeros((f.shape[0], 1)), acc[:, :-1]], axis=1)
        return acc - prev, acc[:, -1]

    phi, _ = shares(spectrum.photon_flux_above(gaps_J))
    p, p_tot = shares(spectrum.power_above(gaps_J))
    below = spectrum.total_irradiance_W_m2 - p_tot
    return Optics(phi, p, below, np.zeros_like(below), None)


#: how many ideal stacks a finite-absorber stack counts as against the compiled-kernel
#: threshold (:func:`.kernels.for_batch`); its optics sum over ~2,000 energy bins and cost
#: about 100 ideal stacks (``benchmarks/paths.py``), so 64 stacks already pay for
#: numba's import
OPTICS_WEIGHT = 64
_KERNEL_TRAPPING = {"single": 0, "double": 1, "lambertian": 2}


def _kernel_params(absorbers, trapping, nidx):
    """Per-junction absorber arrays of the compiled optics, or ``None`` when a junction
    has an absorber or light trapping the kernel does not implement."""
    n = len(absorbers)
    kind = np.zeros(n, np.int64)
    trap = np.zeros(n, np.int64)
    alpha0, power, urbach, join, a_join = (np.zeros(n) for _ in range(5))
    tab_lo, tab_hi = np.zeros(n, np.int64), np.ones(n, np.int64)
    tabs_e, tabs_a, used = [np.zeros(1)], [np.zeros(1)], 1
    for i, ab in enumerate(absorbers):
        if trapping[i] not in _KERNEL_TRAPPING:
            return None
        trap[i] = _KERNEL_TRAPPING[trapping[i]]
        if ab is None:
            continue
        if type(ab) in (DirectGapAbsorption, IndirectGapAbsorption):
            kind[i] = 1
            alpha0[i], power[i], urbach[i] = ab.alpha0_per_m, ab._power, ab.urbach_J
            join[i] = ab._join()
            a_join[i] = ab.alpha0_per_m * (join[i] / EV) ** ab._power
        elif type(ab) is TabulatedAbsorption:
            kind[i] = 2
            e = np.ascontiguousarray(ab.energy_J, dtype=float)
            tabs_e.append(e)
            tabs_a.append(np.ascontiguousarray(ab.alpha_per_m, dtype=float))
            tab_lo[i], tab_hi[i] = used, used + e.size
            used += e.size
        else:
            return None
    return dict(
        kind=kind,
        alpha0=alpha0,
        power=power,
        urbach=urbach,
        join=join,
        a_join=a_join,
        tab_e=np.concatenate(tabs_e),
        tab_a=np.concatenate(tabs_a),
        tab_lo=tab_lo,
        tab_hi=tab_hi,
        trap=trap,
        nidx=np.ascontiguousarray(nidx, dtype=float),
    )


def _optics_kernel(g, t, kt, d, floors, base, f_base, p_base, extra, spectrum, params):
    """:func:`stack_optics` by the compiled kernel of :mod:`._optics_jit` (same
    quadrature; the stack's own nodes sorted here, the shared ones already are)."""
    m, n = g.shape
    extra = np.sort(extra, axis=1)
    f_extra = np.ascontiguousarray(spectrum.photon_flux_above(extra))
    p_extra = np.ascontiguousarray(spectrum.power_above(extra))
    phi_abs, p_abs, j0 = np.empty((m, n)), np.empty((m, n)), np.empty((m, n))
    below, above = np.empty(m), np.empty(m)

    def c(x):
        return np.ascontiguousarray(np.broadcast_to(x, (m, n)), dtype=float)

    kernels.optics_jit().stack_optics(
        np.ascontiguousarray(base),
        np.ascontiguousarray(f_base, dtype=float),
        np.ascontiguousarray(p_base, dtype=float),
        extra,
        f_extra,
        p_extra,
        c(g),
        c(kt),
        c(d),
        c(floors),
        *params.values(),
        float(spectrum.total_irradiance_W_m2),
        float(Q * PLANCK_PREFACTOR),
        phi_abs,
        p_abs,
        j0,
        below,
        above,
    )
    step = params["kind"] == 0
    if step.any():  # step absorbers: the closed-form radiative saturation current
        j0[:, step] = np.exp(ln_j0_radiative(g[:, step], t[:, step], 1.0))
    return Optics(phi_abs, p_abs, below, above, j0)


#: nodes inserted above each gap, in units of the fill spacing kT/15: uniform in
#: sqrt(E - E_g) up to 8 spacings, where a square-root edge is not smooth in E
_EDGE_GRADING = tuple(8.0 * (j / 16.0) ** 2 for j in range(1, 17))


def _base_grid(spectrum: Spectrum, e_lo: float, e_hi_emit: float, step: float) -> np.ndarray:
    """Ascending energy nodes [J]: native nodes plus a uniform fill of spacing ``step``."""
    parts = []
    if isinstance(spectrum, TabulatedSpectrum):
        nat = (H * C / (spectrum.wavelength_nm * 1e-9))[::-1]
        parts.append(nat)
        if e_lo < nat[0]:
            parts.append(np.arange(e_lo, nat[0], step))
        if e_hi_emit > nat[-1]:
            parts.append(np.arange(nat[-1], e_hi_emit + step, step))
    else:
        kts = K_B * float(getattr(spectrum, "sun_temperature_K", 6000.0))
        top = max(e_hi_emit, 30.0 * kts)
        parts.append(np.arange(e_lo, e_hi_emit + step, step))
        parts.append(np.geomspace(e_hi_emit, top, 600))
    return np.unique(np.concatenate(parts))


def stack_optics(
    gaps_J,  # noqa: N803
    temperature_K,  # noqa: N803
    spectrum: Spectrum,
    absorbers,
    thickness_m,
    trapping,
    refractive_index,
) -> Optics:
    """Absorbed photons and radiative saturation currents of stacks of finite absorbers.

    Parameters
    ----------
    gaps_J : numpy.ndarray
        Gaps [J], ``(M, N)``, top first.
    temperature_K : numpy.ndarray
        Cell temperature [K], broadcast to ``(M, N)``.
    spectrum : Spectrum
        Incident spectrum.
    absorbers : sequence
        Per junction: ``None`` (step), or an object with ``alpha(E_J, gap_J)`` [m^-1] and
        ``floor_J(gap_J)`` (:class:`DirectGapAbsorption`, :class:`IndirectGapAbsorption`,
        :class:`TabulatedAbsorption`).
    thickness_m : numpy.ndarray
        Absorber thickness [m], broadcast to ``(M, N)`` (ignored for step junctions).
    trapping : sequence of str
        Per junction: ``"single"``, ``"double"`` or ``"lambertian"``.
    refractive_index : numpy.ndarray
        Per junction refractive index, ``(N,)``.

    Returns
    -------
    Optics
        With ``j0_unit`` from the absorptance (reciprocity), front emission into a
        hemisphere of index 1; each junction emits as if the junctions above were
        transparent to its luminescence (the ideal engine's convention).

    References
    ----------
    .. [1] U. Rau, Phys. Rev. B 76, 085303 (2007).
    .. [2] T. Tiedje et al., IEEE Trans. Electron Devices 31, 711 (1984).
    """
    g = np.atleast_2d(np.asarray(gaps_J, dtype=float))
    m, n = g.shape
    t = np.broadcast_to(np.asarray(temperature_K, dtype=float), g.shape)
    d = np.broadcast_to(np.asarray(thickness_m, dtype=float), g.shape)
    nidx = np.broadcast_to(np.asarray(refractive_index, dtype=float), (n,))
    floors = np.stack(
        [g[:, i] if absorbers[i] is None else absorbers[i].floor_J(g[:, i]) for i in range(n)],
        axis=1,
    )
    kt = K_B * t
    step = float(kt.min()) / 15.0
    e_lo = max(float(floors.min()) - step, 0.01 * EV)
    e_hi = float((g + 45.0 * kt).max())
    base = _base_grid(spectrum, e_lo, e_hi, step)
    f_base = spectrum.photon_flux_above(base)
    p_base = spectrum.power_above(base)
    # per-stack grid: the base nodes with the stack's gaps inserted, and graded nodes
    # just above each gap where a square-root edge varies fastest
    extra = np.concatenate([g] + [g + step * f for f in _EDGE_GRADING], axis=1)
    params = _kernel_params(absorbers, trapping, nidx)
    if params is not None and kernels.for_batch(m, OPTICS_WEIGHT):
        return _optics_kernel(g, t, kt, d, floors, base, f_base, p_base, extra, spectrum, params)
    edges = np.concatenate([np.broadcast_to(base, (m, base.size)), extra], axis=1)
    order = np.argsort(edges, axis=1, kind="stable")
    edges = np.take_along_axis(edges, order, axis=1)
    fe = np.take_along_axis(
        np.concatenate(
            [np.broadcast_to(f_base, (m, base.size)), spectrum.photon_flux_above(extra)], axis=1
        ),
        order,
        axis=1,
    )
    pe = np.take_along_axis(
        np.concatenate(
            [np.broadcast_to(p_base, (m, base.size)), spectrum.power_above(extra)], axis=1
        ),
        order,
        axis=1,
    )
    # bins between nodes, plus the open bin above the top node. The absorptance of a bin
    # is taken at the centroid of the bin's weight (photon energy of the incident photons
    # dP/dPhi; mean energy of the emitted photons), which removes the first-order error
    # of a constant absorptance against a sloping weight.
    mids = np.concatenate([0.5 * (edges[:, :-1] + edges[:, 1:]), edges[:, -1:]], axis=1)
    dphi = np.concatenate([fe[:, :-1] - fe[:, 1:], fe[:, -1:]], axis=1)
    dpow = np.concatenate([pe[:, :-1] - pe[:, 1:], pe[:, -1:]], axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        e_sun = np.where(dphi > 0, dpow / dphi, mids)
    # keep centroids inside their bins (the separate piecewise-linear interpolants of the
    # photon flux and the irradiance make dP/dPhi of a tiny bin slightly inexact)
    width = np.concatenate([np.diff(edges, axis=1), np.full((m, 1), np.inf)], axis=1)
    lo_c = edges + 0.05 * np.where(np.isfinite(width), width, 0.0)
    hi_c = edges + 0.95 * width
    e_sun = np.clip(e_sun, lo_c, hi_c)
    bottom_power = spectrum.total_irradiance_W_m2 - pe[:, 0]  # [0, E_0): not absorbed
    trans = np.ones_like(mids)
    phi_abs = np.empty((m, n))
    p_abs = np.empty((m, n))
    j0 = np.empty((m, n))
    cache: tuple | None = None
    for i in range(n):
        gi = g[:, i : i + 1]
        kti = kt[:, i : i + 1]
        if absorbers[i] is None:
            a = (mids > gi).astype(float)
            # step absorber: the closed-form radiative saturation current (ideal engine)
            j0[:, i] = np.exp(ln_j0_radiative(g[:, i], t[:, i], 1.0))
        else:
            if cache is None or not np.array_equal(cache[0], kti):
                # exact Boltzmann emission of each bin, and the bin's emission centroid
                # from the next moment
                dg, dg3, _ = boltzmann_bin_emission(edges, kti)
                with np.errstate(divide="ignore", invalid="ignore"):
                    e_em = np.where(dg > 0, kti * dg3 / dg, mids)
                cache = (kti, dg, np.clip(e_em, lo_c, hi_c))
            _, dg, e_em = cache
            di = d[:, i : i + 1]
            a = absorptance(absorbers[i].alpha(e_sun, gi) * di, trapping[i], nidx[i])
            a_em = absorptance(absorbers[i].alpha(e_em, gi) * di, trapping[i], nidx[i])
            j0[:, i] = Q * PLANCK_PREFACTOR * kti[:, 0] ** 3 * np.einsum("ij,ij->i", a_em, dg)
        absorbed = a * trans
        phi_abs[:, i] = np.einsum("ij,ij->i", absorbed, dphi)
        p_abs[:, i] = np.einsum("ij,ij->i", absorbed, dpow)
        trans = trans - absorbed
    e_min = g.min(axis=1, keepdims=True)
    below = mids < e_min
    trans_p = trans * dpow
    trans_below = bottom_power + np.where(below, trans_p, 0.0).sum(axis=1)
    trans_above = np.where(below, 0.0, trans_p).sum(axis=1)
    return Optics(phi_abs, p_abs, trans_below, trans_above, j0)
