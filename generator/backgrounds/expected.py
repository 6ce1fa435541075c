"""Deterministic background counts in windows of deposited or reconstructed energy.

For isotope i with expected generated decays N_i (rate × mass × live time × visible fraction,
:func:`generator.backgrounds.stage.expected_events`) the expected count in window j is

    N_ij = N_i Σ_k p_k ∫ f_k(T) M_j(T; particle_k, γ_k) dT,

with p_k the (renormalised) branch probabilities, f_k the branch's kinetic-energy density (the
β spectrum with the Fermi function and shape factor of :mod:`.betashape`, or a line), and M_j
either the indicator of the window on the deposited energy T + γ_k (``reco=False``) or the
detector response's probability of a triggered event reconstructed in window j
(:meth:`generator.response.model.ResponseModel.energy_matrix`, the same light model the
generator samples). The integral over T uses the sampler's own piecewise-linear density on
its grid (the density the generator draws from, :class:`generator.spectra.sampling.
InverseCDFSampler`), refined ``REFINE`` times, with the trapezoidal rule; the response matrix
is evaluated on nodes spaced by a fraction of the resolution
(:meth:`~generator.response.model.ResponseModel.resolution_grid`) and interpolated linearly.

Background events are isotropic, so their cos θ_sun density is uniform on [−1, 1]
(sensitivity templates use this directly).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .decay import PDG_ALPHA

__all__ = ["window_counts", "branch_window_fractions", "REFINE"]

#: Sub-intervals per grid interval of a β branch in the window integrals.
REFINE = 4


def _edges(edges: Any, reco: bool = False) -> np.ndarray:
    from ..rates import check_edges

    if reco:
        return check_edges(edges, "reco_edges", 0.0)
    return check_edges(edges, "edges", 0.0, None, True)


def branch_window_fractions(sampler: Any, particle: np.ndarray | int, edges: Any,
                            response: Any = None) -> np.ndarray:
    """Probability per window for one isotope's decay, summed over its branches.

    Parameters
    ----------
    sampler : BranchSampler
        The isotope's branch sampler (:class:`generator.backgrounds.betashape.BranchSampler`).
    particle : int or sequence of int
        PDG code of the primary, per branch or one for all.
    edges : array_like, shape (m + 1,)
        Increasing window edges, MeV (deposited energy T + γ for ``response=None``,
        reconstructed energy otherwise).
    response : ResponseModel, optional
        Fold with its triggered reconstructed-energy matrix.

    Returns
    -------
    ndarray, shape (m,)
        Dimensionless fractions (≤ 1; the remainder falls outside the windows or fails the
        trigger).
    """
    e = _edges(edges, response is not None)
    parts = np.broadcast_to(np.asarray(particle), (len(sampler.branches),))
    out = np.zeros(e.size - 1)
    for p_k, s, b, pdg in zip(sampler.probability, sampler.samplers, sampler.branches, parts,
                              strict=True):
        if p_k <= 0.0:
            continue
        if s is None:
            t = np.array([b.endpoint_mev])
            w = np.ones(1)
        else:
            x, d = s.x, s.density
            u = np.linspace(0.0, 1.0, REFINE + 1)[:-1]
            t = np.concatenate([(x[:-1, None] + np.diff(x)[:, None] * u[None]).ravel(),
                                x[-1:]])
            dens = np.interp(t, x, d)
            w = np.zeros(t.size)
            dt = np.diff(t)
            w[:-1] += 0.5 * dt * dens[:-1]
            w[1:] += 0.5 * dt * dens[1:]
            w /= w.sum()
        g = float(b.gamma_mev)
        if response is None:
            dep = t + g
            j = np.searchsorted(e, dep, side="right") - 1
            ok = (j >= 0) & (j < e.size - 1)
            out += p_k * np.bincount(j[ok], weights=w[ok], minlength=e.size - 1)
            continue
        # light as the generator computes it (ResponseModel.mean_light): α quenching for α
        # primaries, the electron tables for e∓ and for the kinetic part of a γ branch (0),
        # plus the accompanying γ deposit as one electron of that energy
        kind = int(pdg) if int(pdg) == PDG_ALPHA else 11
        nodes = response.resolution_grid(float(t[0]), float(t[-1]), particle=kind,
                                         gamma_energy=g) if t.size > 1 else t
        if nodes.size >= t.size:
            nodes = t
        m = response.energy_matrix(nodes, e, kind, gamma_energy=g)
        if nodes is not t:
            m = np.stack([np.interp(t, nodes, m[:, k]) for k in range(m.shape[1])], axis=1)
        out += p_k * (w @ m)
    return np.maximum(out, 0.0)   # round-off of the response's CDF differences


def window_counts(plan: Any, edges: Any, reco: bool = False) -> np.ndarray:
    """Expected background events per isotope and window over the exposure.

    Parameters
    ----------
    plan : RunPlan
        A plan with ``[backgrounds]`` on (``plan.backgrounds``); an empty array otherwise.
    edges : array_like, shape (m + 1,)
        Increasing window edges, MeV; deposited energy (kinetic + accompanying γ,
        electron-equivalent, unquenched) when ``reco`` is False, reconstructed energy of
        triggered events above the analysis threshold when True.
    reco : bool
        Fold with the detector response (needs ``[response]``).

    Returns
    -------
    ndarray, shape (n_isotopes, m)
        Events.

    Raises
    ------
    ConfigError
        ``reco=True`` without a detector response, or bad edges.
    """
    from ..errors import ConfigError

    e = _edges(edges, reco)
    bg = getattr(plan, "backgrounds", None)
    if bg is None:
        return np.zeros((0, e.size - 1))
    resp = None
    if reco:
        resp = plan.response
        if resp is None:
            raise ConfigError("reco_edges: windows of reconstructed energy need the detector "
                              "response; set [response] enabled = true")
    rows = []
    for p in bg.isotopes:
        parts = p.iso.branch_particles or p.iso.particle
        rows.append(p.expected_events * branch_window_fractions(p.sampler, parts, e, resp))
    return np.array(rows).reshape(len(rows), e.size - 1)
