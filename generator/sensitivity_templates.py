"""Templates of the sensitivity fit: expected counts per (day/night, energy, cos θ_sun) bin.

Signal moments
--------------
For source s the arriving ν_e probability is modified as

    P'_e(E, z) = 1 − a (1 − P_d(E)) + d (P_e(E, z) − P_d(E)) + b (E − E₀),

with P_d the day (zenith-independent) probability, P_e(E, z) the full one of
:class:`generator.oscillation.FlavourModel`, a the ν_μτ scale (a = 1: the oscillation
prediction, a = 0: no conversion), d the day–night (regeneration) amplitude, b a linear slope
in MeV⁻¹ about the pivot E₀; a sterile fraction f_s of the flux does not scatter and the rest,
1 − P'_e − f_s, scatters as ν_μ/ν_τ. This is the parametrisation of the issue (an overall P_ee
scale, an energy slope, a day–night amplitude and a sterile fraction; common practice, no
source). Per zenith group g (all, or day and night) with exposure W_g = Σ_{z∈g} E_z, the
counts are linear in the parameters:

    N_g = n_e Φ_s φ_s [M0 + a M1 + d M2 + b M3 + (1 − f_s) M4],

    M0 = Σ_E w W_g Δσ,             M1 = −Σ_E w W_g (1 − P_d) Δσ,
    M2 = Σ_E w (P̄_g − W_g P_d) Δσ, M3 = Σ_E w W_g (E − E₀) Δσ,   M4 = Σ_E w W_g σ_x,

with P̄_g = Σ_{z∈g} E_z P_e(E, z), σ_x = r σ_μ + (1 − r) σ_τ (r = P̄_μ,g/(P̄_μ,g + P̄_τ,g),
fixed) and Δσ = σ_e − σ_x, each σ the cross section into the bin. At the nominal point
(a = d = 1, b = f_s = 0) the sum is exactly the rate table of :mod:`generator.expected`.

Bins of reconstructed energy and direction
------------------------------------------
σ_α(E; j, k) = ∫ dσ_α/dT(E, T) P(j | T) A_k(E, T) dT on the Gauss–Legendre nodes of
:func:`generator.xsec.quadrature_nodes`; P(j | T) is the response's deterministic
``energy_matrix`` (trigger and analysis threshold included), A_k the probability that the
reconstructed direction falls in cos θ_sun bin k: the electron direction is at the two-body
angle cos θ_e(E, T) (:func:`generator.kinematics.cos_theta_electron`) from the neutrino and
the response smears it with a von Mises–Fisher law of concentration κ(T); the density of
cos ψ between the smeared direction and the neutrino is

    f(x) = κ / (2 sinh κ) · exp(κ x cos θ_e) · I₀(κ √(1 − x²) sin θ_e)

(the azimuthal average of the vMF density, Mardia & Jupp, *Directional Statistics*, Wiley
2000, §9.3.2; from memory), tabulated once on a (cos θ_e, ln κ) grid. κ depends on the
Poisson Cherenkov photoelectron count, which also moves the reconstructed energy: the
angular law in each energy bin is a three-point Gauss–Hermite mixture over that count
(:func:`_mixture_weights`; an approximation: normal law of the count, trigger weights
inside a bin neglected, the same conditional law for the scale and resolution variants), and
directions are missing when n_c = 0, with probability e^{−λ_c} P(j | n_c = 0)/P(j) in energy
bin j (those events are left out of every cos θ_sun bin, as the file templates leave out
events with NaN ``reco_cos_sun``; with a single cos θ_sun bin they are kept). Without a
response the bins are of true T and true cos θ_sun, exact differences of σ(E; T > cut) with
the E-dependent cuts T(cos θ) = 2m r/(1 − r), r = cos²θ/(1 + m/E)² (the inverse of the
two-body angle).

Nuisance templates: the energy scale moves reconstructed (or true) window edges to
edges/(1 ± σ_s); the resolution builds the response with every width scaled by (1 ± σ_r) (the
Poisson mean and subtraction of the dark noise, the extra stochastic and the constant term
scaled so that the total variance is (1 ± σ_r)² times the nominal; the − side is left out when
the photostatistics floor forbids it).

Backgrounds (:func:`generator.backgrounds.expected.window_counts`: deposited energy T + γ
without a response, reconstructed energy with it) are isotropic (flat in cos θ_sun) and
uniform in live time (night fraction = the live-time fraction with the Sun below the horizon).
"""

from __future__ import annotations

import copy
import dataclasses
import functools
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .backgrounds.expected import window_counts as background_window_counts
from .constants import ELECTRON_MASS
from .errors import ConfigError
from .expected import QUAD_PANELS, ZENITH_CHUNK
from .kinematics import cos_theta_electron, t_max
from .xsec import dsigma_dt_flavours, quadrature_nodes

__all__ = ["Binning", "Templates", "build_templates", "file_templates", "N_MOMENTS",
           "VARIANTS", "vmf_ring_table"]

#: Signal moments M0 … M4 (see the module docstring).
N_MOMENTS = 5
#: Template variants: nominal, energy scale ±, resolution ±.
VARIANTS = ("nominal", "scale_up", "scale_down", "res_up", "res_down")
_KAPPA_GRID = np.exp(np.linspace(math.log(5e-2), math.log(1e3), 241))
_CE_GRID = np.linspace(0.0, 1.0, 201)


@dataclass(frozen=True)
class Binning:
    """Analysis bins: energy edges (MeV), cos θ_sun edges, zenith groups, reco or true."""

    energy_edges: np.ndarray
    cos_edges: np.ndarray
    day_night: bool
    reco: bool

    @property
    def groups(self) -> tuple[str, ...]:
        """Zenith groups: ("all",) or ("day", "night")."""
        return ("day", "night") if self.day_night else ("all",)

    @property
    def shape(self) -> tuple[int, int, int]:
        """(groups, energy bins, cos θ_sun bins)."""
        return (len(self.groups), self.energy_edges.size - 1, self.cos_edges.size - 1)


@dataclass
class Templates:
    """Expected counts for the configured exposure (events).

    ``signal`` has shape (n_sources, N_MOMENTS, n_variants, *binning.shape), ``background``
    (n_isotopes, n_variants, *binning.shape); variants absent for a configuration are NaN.
    """

    binning: Binning
    sources: list[str]
    codes: list[int]
    signal: np.ndarray
    bkg_names: list[str]
    bkg_codes: list[int]
    background: np.ndarray
    live_days: float
    scale_sigma: float
    res_sigma: float
    mode: str = "tables"
    meta: dict[str, Any] = field(default_factory=dict)
    #: nominal counts split by the arriving flavour that scatters, (n_sources, 2, *bins):
    #: [ν_e-scattering, ν_μ/ν_τ-scattering]
    flavour_split: np.ndarray | None = None

    def nominal_signal(self) -> np.ndarray:
        """Signal counts per source at the nominal parameters, shape (n_sources, *bins)."""
        return self.signal[:, [0, 1, 2, 4], 0].sum(axis=1)


# ---------------------------------------------------------------------- angular kernel
@functools.lru_cache(maxsize=8)
def vmf_ring_table(cos_edges: tuple[float, ...]) -> np.ndarray:
    """P(cos ψ in bin k | cos θ_e, κ) on the (cos θ_e, κ) grid, shape (n_ce, n_κ, n_bins).

    Gauss–Legendre integration of f(x) (module docstring) with 32 nodes per bin; each row is
    normalised to its numerical total.
    """
    from scipy.special import i0e

    edges = np.asarray(cos_edges)
    gx, gw = np.polynomial.legendre.leggauss(32)
    half = 0.5 * np.diff(edges)[:, None]
    x = (0.5 * (edges[1:] + edges[:-1])[:, None] + half * gx[None, :]).ravel()
    wx = (half * gw[None, :]).ravel()
    sx = np.sqrt(np.maximum(1.0 - x * x, 0.0))
    ce = _CE_GRID[:, None, None]
    se = np.sqrt(np.maximum(1.0 - ce * ce, 0.0))
    k = _KAPPA_GRID[None, :, None]
    f = np.exp(k * (x * ce + sx * se - 1.0)) * i0e(k * sx * se) * wx
    p = f.reshape(f.shape[:2] + (edges.size - 1, gx.size)).sum(axis=-1)
    return p / p.sum(axis=-1, keepdims=True)


def _angular(table: np.ndarray, ce: np.ndarray, kappa: np.ndarray) -> np.ndarray:
    """Interpolation of :func:`vmf_ring_table` at (cos θ_e, κ); shape (..., n_bins).

    Bilinear in (cos θ_e, ln κ) of the logarithm of the bin probabilities (the tails fall
    exponentially with κ, so interpolating them linearly would overestimate them), then
    renormalised to sum 1.
    """
    lt = _log_table(table)
    u = np.clip(ce, 0.0, 1.0) * (_CE_GRID.size - 1)
    i = np.minimum(u.astype(int), _CE_GRID.size - 2)
    fu = (u - i)[..., None]
    lk = np.log(np.clip(kappa, _KAPPA_GRID[0], _KAPPA_GRID[-1]))
    v = (lk - math.log(_KAPPA_GRID[0])) / (math.log(_KAPPA_GRID[1]) - math.log(_KAPPA_GRID[0]))
    j = np.minimum(v.astype(int), _KAPPA_GRID.size - 2)
    fv = (v - j)[..., None]
    out = np.exp((1 - fu) * (1 - fv) * lt[i, j] + fu * (1 - fv) * lt[i + 1, j]
                 + (1 - fu) * fv * lt[i, j + 1] + fu * fv * lt[i + 1, j + 1])
    return out / out.sum(axis=-1, keepdims=True)


_LOG_TABLES: dict[int, np.ndarray] = {}


def _log_table(table: np.ndarray) -> np.ndarray:
    key = id(table)
    if key not in _LOG_TABLES:
        _LOG_TABLES.clear()
        _LOG_TABLES[key] = np.log(np.maximum(table, 1e-300))
    return _LOG_TABLES[key]


#: Gauss–Hermite nodes and weights (probabilists', 3 points) for the photoelectron average.
_GH_Z = np.array([-math.sqrt(3.0), 0.0, math.sqrt(3.0)])
_GH_W = np.array([1.0 / 6.0, 2.0 / 3.0, 1.0 / 6.0])


def _kappa(model: Any, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Concentrations κ(T) at three photoelectron counts and P(no direction | T).

    The Cherenkov count n_c of the direction term is Poisson; κ is evaluated at the three-point
    Gauss–Hermite nodes n_c = λ + z √λ (normal approximation of the Poisson law, exact for the
    mean and variance) and the angular probabilities are averaged with the weights
    :data:`_GH_W`. Returns κ with shape (3, n) and P(n_c = 0).
    """
    s = model.scalars
    mu_c, mu_s = model.mean_light(t)
    other = mu_s + s["dark"]
    lam = mu_c if model.split_components else mu_c + other
    rec2 = math.radians(model.params["direction_resolution_deg"]) ** 2
    mcs = model.tables["mcs_var"](t)
    nc = np.maximum(lam[None, :] + _GH_Z[:, None] * np.sqrt(lam)[None, :], 1.0)
    rec = rec2 * s["pe_ref_c"] / nc
    if model.split_components:
        rec = rec * (nc + other[None, :]) / nc
    kappa = 1.0 / (mcs[None, :] + rec)
    p_none = np.where(mu_c > 0.0, np.exp(-lam), 1.0)
    return kappa, p_none


# ---------------------------------------------------------------------- response variants
def _res_variant(model: Any, factor: float) -> Any | None:
    """A copy of the response with every energy width scaled by ``factor`` (None if impossible).

    σ_g² = (g_t + d/y)/y + a_x² g_t + b² g_t²: d → k² d, a_x² → k²(1/y + a_x²) − 1/y,
    b² → k² b² multiply the total by k².
    """
    s = model.scalars
    k2 = factor * factor
    y = s["yield"]
    ax = k2 * (1.0 / y + s["a2_extra"]) - 1.0 / y
    if ax < 0.0:
        return None
    m = copy.copy(model)
    m.scalars = dict(s, a2_extra=ax, b2=k2 * s["b2"], dark=k2 * s["dark"])
    return m


# ---------------------------------------------------------------------- signal
def _night_sums(flavour: Any, region: str, e: np.ndarray, centres: np.ndarray,
                wz: np.ndarray, night: bool) -> np.ndarray:
    """Σ_{z in group} E_z P_α(E, c_z), shape (n, 3)."""
    sel = np.flatnonzero((wz > 0.0) & ((centres < 0.0) if night else (centres >= 0.0)))
    out = np.zeros((e.size, 3))
    if not night:
        if sel.size:
            out += flavour.probabilities(region, e, np.full(e.size, 0.5)) * wz[sel].sum()
        return out
    for a in range(0, sel.size, ZENITH_CHUNK):
        zb = sel[a:a + ZENITH_CHUNK]
        p = flavour.probabilities(region, np.tile(e, zb.size), np.repeat(centres[zb], e.size))
        out += np.einsum("zia,z->ia", p.reshape(zb.size, e.size, 3), wz[zb])
    return out


def _moment_coefficients(e: np.ndarray, p_day: np.ndarray, sums: list[np.ndarray],
                         w_groups: list[float], pivot: float) -> np.ndarray:
    """Coefficients c[n, moment, group, flavour] of σ_e, σ_μ, σ_τ in the moments."""
    out = np.zeros((e.size, N_MOMENTS, len(sums), 3))
    for g, (pbar, wg) in enumerate(zip(sums, w_groups, strict=True)):
        mt = pbar[:, 1] + pbar[:, 2]
        r = np.where(mt > 0.0, pbar[:, 1] / np.where(mt > 0.0, mt, 1.0), 0.5)
        pd = p_day[:, 0]
        delta = [wg * np.ones_like(e), -wg * (1.0 - pd), pbar[:, 0] - wg * pd,
                 wg * (e - pivot)]
        for m, c in enumerate(delta):
            out[:, m, g, 0] = c
            out[:, m, g, 1] = -c * r
            out[:, m, g, 2] = -c * (1.0 - r)
        out[:, 4, g, 1] = wg * r
        out[:, 4, g, 2] = wg * (1.0 - r)
    return out


def _t_of_cos(e: np.ndarray, c: float) -> np.ndarray:
    """Recoil T (MeV) at which the two-body angle is cos θ = c (0 below c ≤ 0, T_max at 1)."""
    if c <= 0.0:
        return np.zeros_like(e)
    if c >= 1.0:
        return t_max(e)
    r = c * c / (1.0 + ELECTRON_MASS / e) ** 2
    return np.minimum(2.0 * ELECTRON_MASS * r / (1.0 - r), t_max(e))


def _sigma_above(xsec: Any, e: np.ndarray, cut: np.ndarray) -> np.ndarray:
    """σ_α(E; T > cut(E)) for (e, μ, τ), shape (n, 3), cm².

    One 48-node panel of the smoothed rule of :func:`generator.xsec.quadrature_nodes`
    (relative accuracy ~1e-6).
    """
    out = np.zeros((e.size, 3))
    ok = np.flatnonzero(t_max(e) > cut)
    if ok.size:
        nodes, wts = quadrature_nodes(e[ok], cut[ok], 1)
        vals = dsigma_dt_flavours(e[ok, None], nodes, (12, 14, 16), xsec)
        out[ok] = np.sum(vals * wts[None], axis=-1).T
    return out


def _true_cells(xsec: Any, e: np.ndarray, t_th: float, edge_sets: list[np.ndarray],
                cos_edges: np.ndarray) -> np.ndarray:
    """σ_α(E; T window j ∩ angle bin k) for true bins, shape (n, V, J, K, 3).

    Uses F(max(a, T_k)) = min(F(a), F(T_k)) and F(min(b, T_k+1)) = max(F(b), F(T_k+1)) for the
    decreasing F(x) = σ(E; T > x).
    """
    at_th = _sigma_above(xsec, e, np.full(e.size, t_th))
    fc = np.stack([_sigma_above(xsec, e, np.maximum(_t_of_cos(e, float(c)), t_th))
                   if c > 0.0 else at_th for c in cos_edges], axis=1)  # (n, K+1, 3)
    union = np.unique(np.maximum(np.concatenate(edge_sets), t_th))
    fu = {float(x): (_sigma_above(xsec, e, np.full(e.size, float(x))) if np.isfinite(x)
                     else np.zeros((e.size, 3))) for x in union}
    out = []
    for edges in edge_sets:
        fe = np.stack([fu[max(float(x), t_th)] for x in edges], axis=1)  # (n, J+1, 3)
        lo = np.minimum(fe[:, :-1, None], fc[:, None, :-1])
        hi = np.maximum(fe[:, 1:, None], fc[:, None, 1:])
        out.append(np.maximum(lo - hi, 0.0))
    return np.stack(out, axis=1)


def _mixture_weights(model: Any, t: np.ndarray, edges: np.ndarray) -> np.ndarray:
    """Weights W_i(j | T) of the Cherenkov-count nodes and P(direction | j, T), (n, 4, J).

    The Cherenkov count n_c sets κ and shifts the light-equivalent energy by (n_c − λ_c)/y.
    With n_c at the three Gauss–Hermite nodes λ_c + z_i √λ_c (normal approximation), the
    energy given n_c is Gaussian with the remaining variance (the other light's Poisson
    variance and the extra smearing of the response model), so the angular law in energy bin
    j is Σ_i W_i(j) A_k(κ_i) with W_i(j) = w_i P_i(j) / Σ_i w_i P_i(j) (trigger weights
    inside the bin neglected): selecting an energy bin selects the direction quality too.
    """
    from scipy.special import ndtr

    sc = model.scalars
    y = sc["yield"]
    mu_c, mu_s = model.mean_light(t)
    lam_all = mu_c + mu_s + sc["dark"]
    lam_c = mu_c if model.split_components else lam_all
    g_t = np.maximum((mu_c + mu_s) / y, 0.0)
    res = np.sqrt(np.maximum(lam_all - lam_c, 0.0) / y**2 + sc["a2_extra"] * g_t
                  + sc["b2"] * g_t**2)
    res = np.maximum(res, 1e-3)
    g_edges = model.light_equivalent(edges)

    def prob(mean: np.ndarray) -> np.ndarray:
        return np.diff(ndtr((g_edges[None, :] - mean[:, None]) / res[:, None]), axis=1)

    p = np.stack([wi * prob(g_t + z * np.sqrt(lam_c) / y)
                  for z, wi in zip(_GH_Z, _GH_W, strict=True)], axis=1)    # (n, 3, J)
    den = p.sum(axis=1)
    ok = den > 1e-300
    w = np.where(ok[:, None, :], p / np.where(ok, den, 1.0)[:, None, :], _GH_W[None, :, None])
    # no direction when n_c = 0 (probability e^{−λ_c}); such events carry less light, so the
    # share without direction in bin j is e^{−λ_c} P(j | n_c = 0) / P(j)
    g_0 = mu_s / y if model.split_components else np.full(t.size, -sc["dark"] / y)
    none = np.where(mu_c > 0.0, np.exp(-lam_c), 1.0)[:, None] * prob(g_0)
    direction = np.clip(1.0 - none / np.where(ok, den, 1.0), 0.0, 1.0)
    direction = np.where(ok, direction, np.where(mu_c > 0.0, 1.0 - np.exp(-lam_c), 0.0)[:, None])
    return np.concatenate([w, direction[:, None, :]], axis=1)           # (n, 4, J)


def _reco_cells(xsec: Any, e: np.ndarray, t_th: float, t_grid: np.ndarray,
                matrix: np.ndarray, model: Any, table: np.ndarray | None,
                n_cos: int, edges: np.ndarray, exact: Any = None) -> np.ndarray:
    """σ_α(E; reco bin j, cos bin k) for the stacked matrix columns, shape (n, VJ, K, 3).

    ``matrix`` holds the variants' response matrices on ``t_grid`` followed (with a direction
    ``table``) by the mixture of :func:`_mixture_weights`, interpolated linearly at the T
    nodes; ``exact(T)`` evaluates the same columns at the nodes instead. Every variant uses
    the nominal conditional angular law.
    """
    n_j = edges.size - 1
    n_mix = (_GH_W.size + 1) * n_j if table is not None else 0
    n_v = (matrix.shape[1] - n_mix) // n_j
    out = np.zeros((e.size, n_v, n_j, n_cos, 3))
    n_m = n_v * n_j
    for a in range(0, e.size, 256):
        ee = e[a:a + 256]
        nodes, wts = quadrature_nodes(ee, t_th, QUAD_PANELS)
        ds = dsigma_dt_flavours(ee[:, None], nodes, (12, 14, 16), xsec) * wts[None]
        flat = nodes.ravel()
        # linear interpolation on the (non-uniform) grid, as numpy.interp, clamped at the ends
        if exact is not None:
            mm = exact(flat)
        else:
            i0 = np.clip(np.searchsorted(t_grid, flat, side="right") - 1, 0, t_grid.size - 2)
            fr = np.clip((flat - t_grid[i0]) / (t_grid[i0 + 1] - t_grid[i0]), 0.0,
                         1.0)[:, None]
            mm = (1.0 - fr) * matrix[i0] + fr * matrix[i0 + 1]
        m = mm[:, :n_m].reshape(nodes.shape + (n_v, n_j))
        if table is not None:
            kappa, _ = _kappa(model, flat)
            ce = cos_theta_electron(np.repeat(ee, nodes.shape[1]), flat)
            ang = np.stack([_angular(table, ce, kappa[i]) for i in range(_GH_W.size)],
                           axis=1)                                   # (N, 3, K)
            w = mm[:, n_m:].reshape(flat.size, _GH_W.size + 1, n_j)
            ang = np.einsum("nij,nik->njk", w[:, :-1], ang) * w[:, -1, :, None]
            ang = ang.reshape(nodes.shape + (n_j, n_cos))
        else:
            ang = np.ones(nodes.shape + (n_j, 1))
        for f in range(3):
            x = ds[f][:, :, None, None] * ang                       # (n, g, J, K)
            out[a:a + 256, ..., f] = np.einsum("ngvj,ngjk->nvjk", m, x, optimize=True)
    return out.reshape(e.size, n_m, n_cos, 3)


def _edge_sets(edges: np.ndarray, sig_s: float) -> list[np.ndarray]:
    return [edges, edges / (1.0 + sig_s), edges / (1.0 - sig_s)]


#: Each analysis bin is split into this many equal parts for the response matrices (the
#: trigger turn-on inside a bin is integrated on 8 sub-bins of each part by energy_matrix:
#: a single wide bin at the turn-on was up to 4 % high, e.g. ¹⁴C in the scintillator demo).
REFINE_BINS = 4


def _refine(edges: np.ndarray, k: int) -> np.ndarray:
    """The edges with k − 1 equally spaced points inserted in every bin."""
    f = np.arange(k) / k
    inner = (edges[:-1, None] + np.diff(edges)[:, None] * f[None, :]).ravel()
    return np.append(inner, edges[-1])


def union_matrices(matrix_fn: Any, edge_sets: list[np.ndarray], refine: int = REFINE_BINS
                   ) -> list[np.ndarray]:
    """Response matrices for several edge sets from one call on the union of their edges.

    ``matrix_fn(edges) -> (n, m)``; each set's bin is the sum of the union's bins inside it
    (every bin refined into ``refine`` parts first).
    """
    union = np.unique(np.concatenate([_refine(e, refine) for e in edge_sets]))
    full = matrix_fn(union)
    cum = np.concatenate([np.zeros((full.shape[0], 1)), np.cumsum(full, axis=1)], axis=1)
    out = []
    for e in edge_sets:
        pos = np.searchsorted(union, e)
        out.append(cum[:, pos[1:]] - cum[:, pos[:-1]])
    return out


def build_templates(plan: Any, binning: Binning, sens: Any) -> Templates:
    """Deterministic templates of a plan (module docstring).

    Parameters
    ----------
    plan : RunPlan
    binning : Binning
    sens : SensitivityConfig
        Uses ``slope_pivot_mev``, ``energy_scale_sigma`` and ``energy_resolution_sigma``.
    """
    from .constants import SECONDS_PER_DAY

    cfg = plan.config
    t_th = cfg.interaction.threshold_mev
    edges = binning.energy_edges
    sig_s, sig_r = sens.energy_scale_sigma, sens.energy_resolution_sigma
    nv = len(VARIANTS)
    resp = plan.response
    table = None
    if binning.reco:
        if resp is None:
            raise ConfigError("sensitivity: reconstructed bins need [response]")
        if binning.cos_edges.size > 2 and not resp.directional:
            raise ConfigError("sensitivity.cos_sun_bins: the response has no direction "
                              "reconstruction; use 1")
        t_grid = resp.resolution_grid(t_th, float(plan.recoil.e_max))
        if resp.directional and binning.cos_edges.size > 2:
            # with one cos θ_sun bin events without a direction count too (as in the files)
            table = vmf_ring_table(tuple(binning.cos_edges.tolist()))
        res_models = [_res_variant(resp, 1.0 + sig_r), _res_variant(resp, 1.0 - sig_r)]

        def stacked(t: np.ndarray) -> np.ndarray:
            """Every variant's response matrix (and the direction mixture) at T, (n, ·)."""
            # nominal edges refined (exactly generator.rates on the refined edges, summed);
            # the shifted pair from one call on their refined union
            mats = union_matrices(lambda x: resp.energy_matrix(t, x, 11), [edges])
            mats += union_matrices(lambda x: resp.energy_matrix(t, x, 11),
                                   _edge_sets(edges, sig_s)[1:])
            mats += [union_matrices(lambda x, r=r: r.energy_matrix(t, x, 11), [edges])[0]
                     if r is not None else np.full_like(mats[0], np.nan) for r in res_models]
            if table is not None:
                mats.append(_mixture_weights(resp, t, edges).reshape(t.size, -1))
            return np.concatenate(mats, axis=1)

        matrix = stacked(t_grid)
    centres = 0.5 * (plan.zenith_edges[1:] + plan.zenith_edges[:-1])
    wz = plan.zenith_weights
    gshape = binning.shape
    sig_out = np.zeros((len(plan.sources), N_MOMENTS, nv) + gshape)
    split = np.zeros((len(plan.sources), 2) + gshape)
    for s, sp in enumerate(plan.sources):
        keep = sp.quad_weights > 0.0
        e, w = sp.quad_energy[keep], sp.quad_weights[keep]
        if sp.expected_events <= 0.0 or e.size == 0:
            continue
        region = sp.production_region
        day = _night_sums(plan.flavour, region, e, centres, wz, False)
        night = _night_sums(plan.flavour, region, e, centres, wz, True)
        w_day = float(wz[(wz > 0) & (centres >= 0)].sum())
        w_night = float(wz[(wz > 0) & (centres < 0)].sum())
        p_day = plan.flavour.probabilities(region, e, np.full(e.size, 0.5))
        if binning.day_night:
            sums, wg = [day, night], [w_day, w_night]
        else:
            sums, wg = [day + night], [w_day + w_night]
        coef = _moment_coefficients(e, p_day, sums, wg, sens.slope_pivot_mev)
        coef *= (plan.n_electrons * sp.flux * w)[:, None, None, None]
        if binning.reco:
            # line energies evaluate the matrices at every T node (their recoil spectrum ends
            # sharply at T_max; as generator.rates does)
            lines = np.isin(e, np.array([en for en, _ in sp.lines], dtype=np.float64))
            cells = np.zeros((e.size, nv * gshape[1], gshape[2], 3))
            for sel, exact in ((~lines, None), (lines, stacked)):
                if sel.any():
                    cells[sel] = _reco_cells(plan.xsec, e[sel], t_th, t_grid, matrix, resp,
                                             table, gshape[2], edges, exact)
            cells = cells.reshape(e.size, nv, gshape[1], gshape[2], 3)
        else:
            cells = _true_cells(plan.xsec, e, t_th, _edge_sets(edges, sig_s),
                                binning.cos_edges)
            cells = np.concatenate([cells, np.full((e.size, 2) + cells.shape[2:], np.nan)],
                                   axis=1)
        sig_out[s] = np.einsum("nmga,nvjka->mvgjk", coef, cells)
        pg = np.stack(sums, axis=1) * (plan.n_electrons * sp.flux * w)[:, None, None]
        split[s, 0] = np.einsum("ng,njk->gjk", pg[:, :, 0], cells[:, 0, :, :, 0])
        split[s, 1] = (np.einsum("ng,njk->gjk", pg[:, :, 1], cells[:, 0, :, :, 1])
                       + np.einsum("ng,njk->gjk", pg[:, :, 2], cells[:, 0, :, :, 2]))
    bg_names, bg_codes, bg = _background_templates(plan, binning, sig_s, sig_r)
    return Templates(binning, [sp.name for sp in plan.sources], [sp.code for sp in plan.sources],
                     sig_out, bg_names, bg_codes, bg,
                     plan.exposure.live_seconds / SECONDS_PER_DAY, sig_s, sig_r,
                     flavour_split=split)


def night_live_fraction(plan: Any) -> float:
    """Fraction of the live time with the Sun below the horizon (unweighted by 1/r²)."""
    from .exposure import _iter_split

    ex = plan.exposure
    total = night = 0.0
    for starts, widths in _iter_split(ex.intervals, ex.table.step_s, 1 << 20):
        _, cz, _ = ex.table.lookup(starts + 0.5 * widths)
        total += float(widths.sum())
        night += float(widths[cz < 0.0].sum())
    return night / total if total > 0 else 0.0


def _background_templates(plan: Any, binning: Binning, sig_s: float, sig_r: float
                          ) -> tuple[list[str], list[int], np.ndarray]:
    bgp = plan.backgrounds
    nv = len(VARIANTS)
    if bgp is None:
        return [], [], np.zeros((0, nv) + binning.shape)
    edges = binning.energy_edges
    rows = union_matrices(lambda x: background_window_counts(plan, x, binning.reco), [edges])
    rows += union_matrices(lambda x: background_window_counts(plan, x, binning.reco),
                           _edge_sets(edges, sig_s)[1:])
    n_iso = rows[0].shape[0]
    for f in (1.0 + sig_r, 1.0 - sig_r):
        r = _res_variant(plan.response, f) if binning.reco else None
        if r is None:
            rows.append(np.full_like(rows[0], np.nan))
        else:
            alt = dataclasses.replace(plan, response=r)
            rows.append(union_matrices(lambda x, a=alt: background_window_counts(a, x, True),
                                       [edges])[0])
    e_counts = np.stack(rows, axis=1)                                # (iso, V, J)
    cos_frac = np.diff(binning.cos_edges) / 2.0
    if binning.day_night:
        fn = night_live_fraction(plan)
        gfrac = np.array([1.0 - fn, fn])
    else:
        gfrac = np.ones(1)
    out = (e_counts[:, :, None, :, None] * gfrac[None, None, :, None, None]
           * cos_frac[None, None, None, None, :])
    assert out.shape == (n_iso, nv) + binning.shape
    return ([p.iso.name for p in bgp.isotopes], [p.iso.code for p in bgp.isotopes], out)


# ---------------------------------------------------------------------- file templates
def file_templates(path: str, plan: Any, binning: Binning, sens: Any,
                   tables: Templates | None = None, variance: bool = False) -> Templates:
    """Templates histogrammed from a generated event file (weights column).

    Every event contributes its weight (expected events per generated event) to the bin of
    (``is_night``, ``reco_energy``, ``reco_cos_sun``) — true ``e_kinetic`` and ``cos_sun``
    when the response is off — if it is ``triggered``; events without a reconstructed direction
    (NaN) are left out when cos θ_sun is binned. Signal events are split into the moments by
    deterministic per-event factors (c_α / P_α(E, cos θ_z) of the flavour model, see
    :func:`_moment_coefficients`); backgrounds by ``origin``. Energy-scale variants rescale
    the energy (E → (1 ± σ_s) E); resolution variants widen the residual around the calibrated
    energy of the deposit's mean light (E → E_c + (1 ± σ_r)(E − E_c)). The counts are scaled
    from the file's exposure to the
    plan's (same configuration). With ``variance`` the sums of squared weights of the nominal
    variant are kept (``var_signal``, ``var_nominal``, ``var_background``).
    """
    from .io import EventFile

    reco = binning.reco
    fields = ["weight", "is_night", "origin", "nu_pdg", "nu_energy", "sun_cos_zenith",
              "e_kinetic", "cos_sun"]
    if plan.backgrounds is not None:
        fields += ["gamma_energy"] + (["particle"] if reco else [])
    if reco:
        fields += ["reco_energy", "reco_cos_sun", "triggered"]
    names = [sp.name for sp in plan.sources]
    codes = [sp.code for sp in plan.sources]
    bgp = plan.backgrounds
    bg_codes = [p.iso.code for p in bgp.isotopes] if bgp is not None else []
    bg_names = [p.iso.name for p in bgp.isotopes] if bgp is not None else []
    nv = len(VARIANTS)
    sig = np.zeros((len(codes), N_MOMENTS, nv) + binning.shape)
    bkg = np.zeros((len(bg_codes), nv) + binning.shape)
    split = np.zeros((len(codes), 2) + binning.shape)
    var = {"signal": np.zeros((len(codes), N_MOMENTS) + binning.shape),
           "nominal": np.zeros((len(codes),) + binning.shape),
           "background": np.zeros((len(bg_codes),) + binning.shape)} if variance else None
    sig_s, sig_r = sens.energy_scale_sigma, sens.energy_resolution_sigma
    try:
        ev_file = EventFile(path)
    except OSError as exc:
        raise ConfigError(f"sensitivity.template_file: {path!r} cannot be read ({exc})"
                          ) from None
    with ev_file as ev:
        missing = [f for f in fields if f not in ev.fields]
        if missing:
            raise ConfigError(f"sensitivity.template_file: {path!r} lacks the field(s) "
                              f"{missing}; generate it with the same configuration"
                              + (" and [response] on" if reco else ""))
        _check_same_setup(ev, plan, path)
        live_file = float(ev.attrs.get("live_seconds", plan.exposure.live_seconds))
        for chunk in ev.iter_chunks(1 << 20, fields):
            _fill_chunk(chunk, plan, binning, sens, codes, bg_codes, sig, bkg, reco,
                        sig_s, sig_r, var, split)
    factor = plan.exposure.live_seconds / live_file if live_file > 0 else 1.0
    sig *= factor
    bkg *= factor
    split *= factor
    if not reco:
        sig[:, :, 3:] = np.nan
        bkg[:, 3:] = np.nan
    if tables is not None:                  # variants the model cannot build stay absent
        sig[np.isnan(tables.signal)] = np.nan
        bkg[np.isnan(tables.background)] = np.nan
    from .constants import SECONDS_PER_DAY

    out = Templates(binning, names, codes, sig, bg_names, bg_codes, bkg,
                    plan.exposure.live_seconds / SECONDS_PER_DAY, sig_s, sig_r, "file",
                    {"template_file": path}, split)
    if var is not None:
        out.var_signal = var["signal"] * factor**2
        out.var_nominal = var["nominal"] * factor**2
        out.var_background = var["background"] * factor**2
    return out


def _check_same_setup(ev: Any, plan: Any, path: str) -> None:
    """Refuse an event file of another detector, source list or background list."""
    import tomllib

    try:
        rec = tomllib.loads(str(ev.attrs["config_toml"]))
    except (KeyError, tomllib.TOMLDecodeError):
        raise ConfigError(f"sensitivity.template_file: {path!r} has no readable recorded "
                          "configuration") from None
    cfg = plan.config
    name = rec.get("detector", {}).get("name")
    if name != cfg.detector.name:
        raise ConfigError(f"sensitivity.template_file: {path!r} was generated for detector "
                          f"{name!r}, not {cfg.detector.name!r}; use a file of this "
                          "configuration")
    have = set(ev.origin_names.values())
    want = {sp.name for sp in plan.sources}
    if plan.backgrounds is not None:
        want |= {p.iso.name for p in plan.backgrounds.isotopes}
    if not want <= have:
        raise ConfigError(f"sensitivity.template_file: {path!r} has no events of "
                          f"{sorted(want - have)}; use a file of this configuration")


def _fill_chunk(ch: dict, plan: Any, binning: Binning, sens: Any, codes: list[int],
                bg_codes: list[int], sig: np.ndarray, bkg: np.ndarray, reco: bool,
                sig_s: float, sig_r: float, var: dict | None = None,
                split: np.ndarray | None = None) -> None:
    w = ch["weight"].astype(np.float64)
    if reco:
        keep = ch["triggered"].astype(bool)
        energy = ch["reco_energy"].astype(np.float64)
        cos = ch["reco_cos_sun"].astype(np.float64)
    else:
        keep = np.ones(w.size, bool)
        energy = ch["e_kinetic"].astype(np.float64)
        cos = ch["cos_sun"].astype(np.float64)
    if binning.cos_edges.size > 2:
        keep &= np.isfinite(cos)
    else:
        cos = np.zeros_like(energy)
    t_true = ch["e_kinetic"].astype(np.float64)
    origin = ch["origin"].astype(int)
    if not reco and "gamma_energy" in ch:
        # backgrounds in true energy: the deposit T + γ, as generator.backgrounds.expected
        g = np.nan_to_num(ch["gamma_energy"].astype(np.float64))
        energy = np.where(origin >= min(bg_codes, default=1 << 30), energy + g, energy)
    # resolution variants widen the residual about the energy of the mean light of the deposit
    centre = t_true
    if reco:
        resp = plan.response
        mu_c, mu_s = resp.mean_light(t_true, ch.get("particle", 11),
                                     np.nan_to_num(ch.get("gamma_energy", 0.0)))
        centre = resp.calibrate((mu_c + mu_s) / resp.scalars["yield"])
    energies = [energy, energy * (1.0 + sig_s), energy * (1.0 - sig_s),
                centre + (1.0 + sig_r) * (energy - centre),
                centre + (1.0 - sig_r) * (energy - centre)]
    group = ch["is_night"].astype(int) if binning.day_night else np.zeros(w.size, int)
    ce = binning.cos_edges
    kc = np.clip(np.searchsorted(ce, cos, side="right") - 1, 0, ce.size - 2)
    shape = binning.shape
    nbin = int(np.prod(shape))

    def hist(sel: np.ndarray, weights: np.ndarray, n_var: int = len(energies)) -> np.ndarray:
        """Histograms of the selected events (index array) in the first n_var variants."""
        out = np.zeros((n_var,) + shape)
        for v, en in enumerate(energies[:n_var]):
            j = np.searchsorted(binning.energy_edges, en[sel], side="right") - 1
            ok = (j >= 0) & (j < shape[1])
            flat = (group[sel] * shape[1] + j) * shape[2] + kc[sel]
            out[v] = np.bincount(flat[ok], weights=weights[ok], minlength=nbin).reshape(shape)
        return out

    for i, code in enumerate(bg_codes):
        sel = np.flatnonzero(keep & (origin == code))
        if sel.size:
            bkg[i] += hist(sel, w[sel])
            if var is not None:
                var["background"][i] += hist(sel, w[sel] ** 2, 1)[0]
    centres = 0.5 * (plan.zenith_edges[1:] + plan.zenith_edges[:-1])
    wz = plan.zenith_weights
    for s, code in enumerate(codes):
        sel = np.flatnonzero(keep & (origin == code))
        if not sel.size:
            continue
        region = plan.sources[s].production_region
        e = ch["nu_energy"][sel].astype(np.float64)
        cz = ch["sun_cos_zenith"][sel].astype(np.float64)
        p = plan.flavour.probabilities(region, e, cz)
        pd = plan.flavour.probabilities(region, e, np.full(e.size, 0.5))[:, 0]
        # the fixed μ/τ split r of the group, from the group-averaged probabilities
        pbar = _group_pbar(plan, region, e, centres, wz, binning.day_night, group[sel])
        mt = pbar[:, 1] + pbar[:, 2]
        r = np.where(mt > 0.0, pbar[:, 1] / np.where(mt > 0.0, mt, 1.0), 0.5)
        flav = ch["nu_pdg"][sel].astype(int)
        fidx = np.select([flav == 12, flav == 14, flav == 16], [0, 1, 2], -1)
        if split is not None:
            split[s, 0] += hist(sel, np.where(fidx == 0, w[sel], 0.0), 1)[0]
            split[s, 1] += hist(sel, np.where(fidx > 0, w[sel], 0.0), 1)[0]
        p_ev = np.take_along_axis(p, np.maximum(fidx, 0)[:, None], axis=1)[:, 0]
        # an event of flavour α stands for w P_α σ_α; the moment needs κ_α σ_α, so it
        # carries w κ_α / P_α with the per-zenith coefficients κ of the module docstring
        base = np.where((fidx >= 0) & (p_ev > 0.0), w[sel] / np.where(p_ev > 0, p_ev, 1.0),
                        0.0)
        share = np.select([fidx == 0, fidx == 1, fidx == 2], [np.ones_like(e), -r, -(1.0 - r)],
                          0.0)
        share4 = np.select([fidx == 1, fidx == 2], [r, 1.0 - r], 0.0)
        ws = [base * c * share for c in (np.ones_like(e), -(1.0 - pd), p[:, 0] - pd,
                                         e - sens.slope_pivot_mev)] + [base * share4]
        for m, wm in enumerate(ws):
            sig[s, m] += hist(sel, wm)
            if var is not None:
                var["signal"][s, m] += hist(sel, wm**2, 1)[0]
        if var is not None:
            nominal = ws[0] + ws[1] + ws[2] + ws[4]
            var["nominal"][s] += hist(sel, nominal**2, 1)[0]


def _group_pbar(plan: Any, region: str, e: np.ndarray, centres: np.ndarray, wz: np.ndarray,
                day_night: bool, g: np.ndarray) -> np.ndarray:
    """Group-averaged probabilities at the events' energies (interpolated from a grid)."""
    grid = np.linspace(max(float(e.min()), 1e-3), float(e.max()) + 1e-9, 256)
    day = _night_sums(plan.flavour, region, grid, centres, wz, False)
    night = _night_sums(plan.flavour, region, grid, centres, wz, True)
    tabs = [day, night] if day_night else [day + night]
    out = np.zeros((e.size, 3))
    for gi, tab in enumerate(tabs):
        sel = g == gi
        for a in range(3):
            out[sel, a] = np.interp(e[sel], grid, tab[:, a])
    return out
