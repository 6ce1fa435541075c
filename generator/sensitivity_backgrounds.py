"""Deterministic background spectra in energy windows (stand-in for the sensitivity tool).

:func:`window_counts` has the signature of ``generator.backgrounds.expected.window_counts``;
:func:`background_window_counts` uses that module when it exists and this one otherwise.

Per isotope the expected count N (rate × mass × live time × visible fraction,
:func:`generator.backgrounds.stage.expected_events`) is split over the configured branches in
proportion to their intensities (renormalised, as :class:`~generator.backgrounds.betashape.
BranchSampler` draws them). A β branch's kinetic-energy density is the tabulated spectrum of
:func:`~generator.backgrounds.betashape.branch_spectrum` (integrated with the trapezoidal rule);
a line branch is a single deposit. Windows of true energy count the kinetic energy T (the
``e_kinetic`` field); reconstructed windows fold the deposit (T plus the branch's γ energy,
electron-equivalent; α quenched) with the response's ``energy_matrix`` — the same light model
the event sampler uses, trigger and analysis threshold included.
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["window_counts", "background_window_counts"]

#: True-energy points at which the response matrix of a β branch is evaluated.
MATRIX_POINTS = 48
PDG_ALPHA = 1000020040


def background_window_counts(plan: Any, edges: np.ndarray, reco: bool) -> np.ndarray:
    """Expected background events per isotope and window, shape (n_isotopes, n_windows)."""
    try:
        from .backgrounds.expected import window_counts as lead
    except ImportError:
        lead = window_counts
    return np.asarray(lead(plan, np.asarray(edges, np.float64), reco), dtype=np.float64)


def _branch_rows(b: Any, iso: Any) -> tuple[np.ndarray, np.ndarray]:
    """Kinetic-energy nodes (MeV) and weights (sum 1) of one branch."""
    from .backgrounds.betashape import branch_spectrum

    if b.shape == "line":
        return np.array([b.endpoint_mev]), np.array([1.0])
    t, d = branch_spectrum(b, iso.z_daughter, iso.a, iso.positron)
    w = np.zeros(t.size)
    dx = np.diff(t)
    w[:-1] += 0.5 * dx
    w[1:] += 0.5 * dx
    w *= d
    return t, w / w.sum()


def window_counts(plan: Any, edges: np.ndarray, reco: bool) -> np.ndarray:
    """Expected events of every background isotope in energy windows over the exposure.

    Parameters
    ----------
    plan : RunPlan
        With ``plan.backgrounds`` (None gives an empty (0, n) array).
    edges : ndarray, shape (n + 1,)
        Window edges, MeV (true kinetic energy, or reconstructed energy when ``reco``).
    reco : bool
        Fold with ``plan.response.energy_matrix`` (triggered events above the analysis
        threshold).

    Returns
    -------
    ndarray, shape (n_isotopes, n)
    """
    edges = np.asarray(edges, dtype=np.float64)
    bg = plan.backgrounds
    if bg is None:
        return np.zeros((0, edges.size - 1))
    out = np.zeros((len(bg.isotopes), edges.size - 1))
    for i, p in enumerate(bg.isotopes):
        iso = p.iso
        prob = p.sampler.probability
        for k, b in enumerate(p.sampler.branches):
            t, w = _branch_rows(b, iso)
            part = iso.branch_particles[k] if iso.branch_particles else iso.particle
            if not reco:
                j = np.searchsorted(edges, t, side="right") - 1
                ok = (j >= 0) & (j < edges.size - 1)
                row = np.bincount(j[ok], weights=w[ok], minlength=edges.size - 1)
            else:
                code = PDG_ALPHA if part == PDG_ALPHA else 11
                if t.size > MATRIX_POINTS:
                    tt = np.linspace(t[0], t[-1], MATRIX_POINTS)
                    m = plan.response.energy_matrix(tt, edges, code, gamma_energy=b.gamma_mev)
                    m = np.stack([np.interp(t, tt, m[:, c]) for c in range(m.shape[1])],
                                 axis=1)
                else:
                    m = plan.response.energy_matrix(t, edges, code, gamma_energy=b.gamma_mev)
                row = w @ m
            out[i] += p.expected_events * prob[k] * row
    return out
