"""Drawing one chunk of truth-level signal events from a :class:`~generator.pipeline.RunPlan`.

Chunk k draws from ``SeedSequence(entropy, spawn_key=(k,))`` only (:func:`chunk_seed`), so a
chunk is a pure function of (plan, seed, chunk index, chunk size); the sampling steps are
described in :mod:`generator.pipeline`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from . import kinematics
from .errors import SamplingError
from .io.schema import empty_chunk
from .recoil import RecoilSampler

if TYPE_CHECKING:
    from .pipeline import RunPlan, SourcePlan

__all__ = ["FLAVOUR_PDG", "chunk_seed", "generate_chunk", "sigma_matrix"]

#: PDG codes of the three neutrino flavours, in the column order of the probability tables.
FLAVOUR_PDG = np.array([12, 14, 16], dtype=np.int16)


def sigma_matrix(recoil: RecoilSampler, energy: np.ndarray, pdgs: tuple[int, ...]
                 ) -> np.ndarray:
    """σ_α(E) above threshold, shape (n, 3) in the e, μ, τ column order (cm²)."""
    if tuple(pdgs) == tuple(recoil.pdgs):
        return recoil.sigma_flavours(energy)
    out = np.zeros((energy.size, 3))
    for j, pdg in enumerate(pdgs):
        out[:, j] = recoil.sigma(energy, np.full(energy.size, pdg))
    return out


def chunk_seed(entropy: int, k: int) -> np.random.SeedSequence:
    """The seed sequence of chunk ``k`` of a run with root ``entropy``."""
    return np.random.SeedSequence(entropy, spawn_key=(k,))


def generate_chunk(plan: RunPlan, rng: np.random.Generator, n: int, weight: float,
                   bg_rng: np.random.Generator | None = None) -> dict[str, np.ndarray]:
    """Draw ``n`` truth-level events (a pure function of the plan and the random streams).

    ``bg_rng`` (the chunk's background stream) is required when the plan has backgrounds.

    Returns
    -------
    dict of str to ndarray
        One array per field of :data:`generator.io.schema.EVENT_FIELDS`.
    """
    out = empty_chunk(n)
    src = np.searchsorted(plan.source_cdf, rng.random(n), side="right")
    src = np.minimum(src, plan.source_cdf.size - 1)
    n_src = len(plan.sources)
    sig: Any = slice(None)
    if plan.backgrounds is not None:
        if bg_rng is None:
            raise ValueError("generate_chunk: a plan with backgrounds needs bg_rng")
        sig = np.flatnonzero(src < n_src)
        bkg = np.flatnonzero(src >= n_src)
        plan.backgrounds.fill(out, bkg, src[bkg] - n_src, bg_rng, plan.fiducial,
                              plan.exposure.sun, weight)
        src, n = src[sig], sig.size
    energy, times, flav, nu_dir, cosz = _draw_neutrinos(plan, rng, src, n)
    pdg_arr = np.array(plan.pdgs)
    pdg = FLAVOUR_PDG[flav] if len(plan.pdgs) == 3 else np.full(n, pdg_arr[0], np.int16)
    t_e = plan.recoil.sample(rng, energy, pdg)
    e_dir, _, _ = kinematics.scatter(rng, energy, t_e, nu_dir, final=False)
    out["time_utc"][sig] = times
    out["origin"][sig] = np.array([sp.code for sp in plan.sources], dtype=np.int16)[src]
    out["nu_pdg"][sig] = pdg
    out["nu_energy"][sig] = energy
    out["nu_dir"][sig] = nu_dir
    out["e_kinetic"][sig] = t_e
    out["e_dir"][sig] = e_dir
    out["vertex"][sig] = plan.fiducial.sample(rng, n)
    out["cos_sun"][sig] = np.einsum("ij,ij->i", e_dir, nu_dir)
    out["sun_cos_zenith"][sig] = cosz
    out["is_night"][sig] = cosz < 0.0
    out["weight"][sig] = weight
    out["particle"][sig] = 11
    out["gamma_energy"][sig] = 0.0
    return out


def _draw_neutrinos(plan: RunPlan, rng: np.random.Generator, src: np.ndarray, n: int
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(E, t, flavour index, ν direction, cos θ_z) of the ``n`` signal events of sources ``src``.

    Exact rejection sampling from the proposal f_s(E) B(E) (1 AU/r)² (see generator.pipeline);
    its candidate arrays are freed on return, before the recoil stage allocates its own.
    """
    energy = np.empty(n)
    times = np.empty(n)
    flav = np.empty(n, dtype=np.intp)
    nu_dir = np.empty((n, 3))
    cosz = np.empty(n)
    for s, sp in enumerate(plan.sources):
        pending = np.flatnonzero(src == s)
        while pending.size:
            # draw enough candidates for all pending events at the expected acceptance
            m = int(pending.size / max(sp.efficiency, 0.05) * 1.05) + 16
            e = sp.proposal.sample(rng, m)
            t = plan.exposure.sample_times(rng, m)
            d, cz, _ = plan.exposure.sun(t)
            acc = _acceptance(plan, sp, e, cz)
            if np.any(acc[2] > 1.0):       # impossible by construction (envelope.py)
                raise _acceptance_error(sp, e, acc[2])
            v = rng.random(m)
            choice = (v >= acc[0]).astype(np.intp)
            choice += v >= acc[1]
            choice += v >= acc[2]
            ok = np.flatnonzero(choice < len(plan.pdgs))[:pending.size]
            idx = pending[:ok.size]
            energy[idx] = e[ok]
            times[idx] = t[ok]
            flav[idx] = choice[ok]
            nu_dir[idx] = d[ok]
            cosz[idx] = cz[ok]
            pending = pending[ok.size:]
            del e, t, d, cz, acc, v, choice            # before the next batch
    return energy, times, flav, nu_dir, cosz


#: Candidates per block of :func:`_acceptance` (its temporaries stay in the CPU cache).
ACCEPTANCE_BLOCK = 16384


def _acceptance(plan: RunPlan, sp: SourcePlan, e: np.ndarray, cz: np.ndarray) -> np.ndarray:
    """Cumulative P_α σ_α / B over the flavours e, μ, τ of each candidate, shape (3, m).

    Row k is (Σ_{α ≤ k} P_α σ_α) / B(E): the flavour is the number of rows a uniform is at or
    above (none: rejected). Computed element by element, in cache-sized blocks.
    """
    out = np.empty((3, e.size))
    for lo in range(0, e.size, ACCEPTANCE_BLOCK):
        hi = min(lo + ACCEPTANCE_BLOCK, e.size)
        eb = e[lo:hi]
        w = plan.flavour.probabilities(sp.production_region, eb, cz[lo:hi])
        w *= sigma_matrix(plan.recoil, eb, plan.pdgs)
        env = sp.envelope(eb)
        c = w[:, 0].copy()
        np.divide(c, env, out=out[0, lo:hi])
        c += w[:, 1]
        np.divide(c, env, out=out[1, lo:hi])
        c += w[:, 2]
        np.divide(c, env, out=out[2, lo:hi])
    return out


def _acceptance_error(sp: SourcePlan, energy: np.ndarray, acc: np.ndarray) -> SamplingError:
    k = int(np.argmax(acc))
    return SamplingError(
        f"source {sp.name}: rejection envelope below the event density at E = "
        f"{energy[k]:.9g} MeV (acceptance {acc[k]:.9g} > 1); no event was kept from a biased "
        "draw. This is a bug of sunrecoil, please report it with the configuration")

