"""Deterministic expected counts: the one code path shared by the generator and the tools.

For source s the expected number of recoils in a window W of the recoil (or reconstructed)
energy, arriving flavour α and solar cos-zenith bin z is

    N_{s,z,α}(W) = N_e Φ_s E_z ∫ dE f_s(E) P_α(s, E, c_z) σ_α(E; W),

with E_z the live time weighted by (1 AU / r)² spent in zenith bin z
(:meth:`generator.exposure.Exposure.zenith_exposure`), c_z its centre, f_s the normalised
spectrum, P_α the flavour probabilities (:class:`generator.oscillation.FlavourModel`) and
σ_α(E; W) = ∫_W dσ_α/dT dT (or ∫ dσ_α/dT(E, T) P(W | T) dT for a reconstructed window).
This is the density the generator samples (module docstring of :mod:`generator.pipeline`,
after Bahcall, *Neutrino Astrophysics*, Cambridge University Press 1989, ch. 8 — the
event-rate integral of ν–e scattering). :func:`generator.pipeline.build_plan` calls
:func:`zenith_flavour_table` with the one column σ_α(E; T > T_th) to normalise the run; the
rates, sensitivity and reweighting tools call it with other columns on the same quadrature.

The E integral is the trapezoidal rule on the spectrum's tabulation grid (started exactly at
the kinematic threshold E_min(T_th)) plus a sum over lines with their branching ratios
(:func:`quadrature_weights`).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .kinematics import t_max
from .xsec import dsigma_dt_flavours, quadrature_nodes

__all__ = ["quadrature_weights", "zenith_flavour_table", "window_sigma",
           "reco_window_sigma", "ZENITH_CHUNK"]

#: Gauss–Legendre panels of σ(E; T > T_th) (see :func:`window_sigma`).
QUAD_PANELS = 2
#: Panels of the window cross sections of the rate tools: one panel of 48 nodes agrees with
#: two to ≤ 1e-9 (true-energy windows) and ≤ 1e-5 (reconstructed windows) relative, at half
#: the cost of the radiative formulas.
WINDOW_PANELS = 1
#: Zenith bins evaluated per block of :func:`zenith_flavour_table` (memory bound).
ZENITH_CHUNK = 25


def quadrature_weights(e_grid: np.ndarray, pdf: np.ndarray, line_branching: np.ndarray,
                       continuous: bool) -> np.ndarray:
    """Weights w_i with Σ_i w_i g(E_i) ≈ ∫ f(E) g(E) dE (trapezoid on the grid, then lines).

    Parameters
    ----------
    e_grid : ndarray, shape (n,)
        Increasing grid of the continuous part, MeV.
    pdf : ndarray, shape (n,)
        Normalised spectrum density on the grid, MeV⁻¹.
    line_branching : ndarray, shape (m,)
        Branching ratio of each line (dimensionless).
    continuous : bool
        False when the spectrum has no continuous part (the grid weights are then zero).

    Returns
    -------
    ndarray, shape (n + m,)
        Weights (dimensionless) for the nodes ``concatenate([e_grid, line_energies])``.
    """
    w = np.zeros(e_grid.size)
    if continuous and e_grid.size > 1:
        dx = np.diff(e_grid)
        w[:-1] += 0.5 * dx
        w[1:] += 0.5 * dx
        w *= pdf
    return np.concatenate([w, np.asarray(line_branching, dtype=np.float64)])


def zenith_flavour_table(flavour: Any, region: str, energy: np.ndarray, weights: np.ndarray,
                         sigma: np.ndarray, centres: np.ndarray, wz: np.ndarray) -> np.ndarray:
    """E_z Σ_i w_i P_α(E_i, c_z) σ_{α,k}(E_i) for every zenith bin z, column k and flavour α.

    Parameters
    ----------
    flavour : FlavourModel
        Flavour probabilities at the detector.
    region : str
        Production region (source name) known to ``flavour``.
    energy, weights : ndarray, shape (n,)
        Quadrature nodes (MeV) and weights (:func:`quadrature_weights`).
    sigma : ndarray, shape (n, k, 3)
        Cross-section columns in cm² per node and flavour (e, μ, τ order; zero columns for
        flavours that are not produced).
    centres, wz : ndarray, shape (m,)
        Zenith-bin centres (cos θ_z) and flux-weighted live time per bin (s).

    Returns
    -------
    ndarray, shape (m, k, 3)
        cm² s per unit flux (multiply by N_e Φ for events).
    """
    energy = np.asarray(energy, dtype=np.float64)
    ws = np.asarray(sigma, dtype=np.float64) * np.asarray(weights)[:, None, None]
    out = np.zeros((centres.size,) + ws.shape[1:])
    wz = np.asarray(wz, dtype=np.float64)
    n = energy.size
    # by day (cos θ_z ≥ 0) the probabilities do not depend on the zenith angle
    day = np.flatnonzero((wz > 0.0) & (centres >= 0.0))
    if day.size:
        p = flavour.probabilities(region, energy, np.full(n, 0.5))
        out[day] = np.einsum("ia,ika->ka", p, ws)[None] * wz[day, None, None]
    live = np.flatnonzero((wz > 0.0) & (centres < 0.0))
    for a in range(0, live.size, ZENITH_CHUNK):
        zb = live[a:a + ZENITH_CHUNK]
        cz = np.repeat(centres[zb], n)
        p = flavour.probabilities(region, np.tile(energy, zb.size), cz).reshape(zb.size, n, 3)
        out[zb] = np.einsum("zia,ika->zka", p, ws) * wz[zb, None, None]
    return out


def _sigma_above(model: Any, energy: np.ndarray, codes: tuple[int, ...], cut: float
                 ) -> np.ndarray:
    """σ(E; T > cut) per flavour, shape (len(codes), n), cm² (:data:`WINDOW_PANELS` panels)."""
    out = np.zeros((len(codes), energy.size))
    ok = np.flatnonzero(t_max(energy) > cut)
    for a in range(0, ok.size, 2048):
        idx = ok[a:a + 2048]
        nodes, wts = quadrature_nodes(energy[idx], cut, WINDOW_PANELS)
        vals = dsigma_dt_flavours(energy[idx, None], nodes, codes, model)
        out[:, idx] = np.sum(vals * wts[None], axis=-1)
    return out


def window_sigma(model: Any, energy: np.ndarray, pdgs: tuple[int, ...], t_threshold: float,
                 edges: np.ndarray) -> np.ndarray:
    """σ_α(E; T in [a_j, a_{j+1}) and T ≥ T_th) for windows of true recoil energy (cm²).

    Differences of σ(E; T > a) = ∫_a^{T_max} dσ/dT dT, evaluated with the smoothed
    Gauss–Legendre rule of :func:`generator.xsec.quadrature_nodes` (:data:`WINDOW_PANELS`
    panel, relative accuracy ~1e-9 against the 6-panel rule).

    Parameters
    ----------
    model : XsecModel
        Interaction settings.
    energy : ndarray, shape (n,)
        Neutrino energies, MeV.
    pdgs : tuple of int
        Produced flavours; columns of absent flavours stay zero.
    t_threshold : float
        Generation threshold, MeV (windows are clipped to T ≥ T_th).
    edges : ndarray, shape (k + 1,)
        Increasing window edges in MeV (``inf`` allowed as the last edge).

    Returns
    -------
    ndarray, shape (n, k, 3)
    """
    energy = np.asarray(energy, dtype=np.float64)
    cuts = np.maximum(np.asarray(edges, dtype=np.float64), t_threshold)
    codes = tuple(p for p in (12, 14, 16) if p in pdgs)
    cols = [j for j, p in enumerate((12, 14, 16)) if p in pdgs]
    above = np.stack([_sigma_above(model, energy, codes, float(c)) if np.isfinite(c)
                      else np.zeros((len(codes), energy.size)) for c in cuts], axis=-1)
    out = np.zeros((energy.size, cuts.size - 1, 3))
    out[:, :, cols] = np.moveaxis(above[..., :-1] - above[..., 1:], 0, -1)
    return np.maximum(out, 0.0)


def reco_window_sigma(model: Any, energy: np.ndarray, pdgs: tuple[int, ...],
                      t_threshold: float, t_grid: np.ndarray, matrix: np.ndarray,
                      exact: Any = None) -> np.ndarray:
    """∫_{T_th}^{T_max(E)} dσ_α/dT(E, T) P(bin j | T) dT for reconstructed-energy bins (cm²).

    The probability matrix (tabulated on ``t_grid``, smooth in T) is interpolated linearly at
    the Gauss–Legendre nodes of :func:`generator.xsec.quadrature_nodes`. For a few energies
    (the lines of a source) pass ``exact``, a function T → P(bin | T) of shape (n, k), to
    evaluate it at every node instead: a line's recoil spectrum ends sharply at T_max, and the
    reconstructed spectrum above that edge is a resolution tail, convex in T, which linear
    interpolation between nodes overestimates (by ≈ (h x/σ)²/8 at x σ, see
    :meth:`generator.response.model.ResponseModel.resolution_grid`).

    Parameters
    ----------
    model : XsecModel
        Interaction settings.
    energy : ndarray, shape (n,)
        Neutrino energies, MeV.
    pdgs : tuple of int
        Produced flavours.
    t_threshold : float
        Generation threshold, MeV.
    t_grid : ndarray, shape (g,)
        True kinetic energies (MeV) at which ``matrix`` is tabulated.
    matrix : ndarray, shape (g, k)
        P(reconstructed bin j, triggered | T) (detector response ``energy_matrix``).

    Returns
    -------
    ndarray, shape (n, k, 3)
    """
    out = np.zeros((energy.size, matrix.shape[1], 3))
    cols = [j for j, p in enumerate((12, 14, 16)) if p in pdgs]
    codes = tuple(p for p in (12, 14, 16) if p in pdgs)
    for a in range(0, energy.size, 256):
        e = energy[a:a + 256]
        nodes, wts = quadrature_nodes(e, t_threshold, WINDOW_PANELS)
        ds = dsigma_dt_flavours(e[:, None], nodes, codes, model) * wts[None]
        flat = nodes.ravel()
        if exact is not None:
            m = np.asarray(exact(flat)).reshape(nodes.shape + (matrix.shape[1],))
        else:
            m = np.stack([np.interp(flat, t_grid, matrix[:, k])
                          for k in range(matrix.shape[1])],
                         axis=1).reshape(nodes.shape + (matrix.shape[1],))
        for c, j in enumerate(cols):
            out[a:a + 256, :, j] = np.einsum("ig,igk->ik", ds[c], m)
    return out
