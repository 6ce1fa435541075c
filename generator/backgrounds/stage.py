"""The background stage: expected counts per isotope and the events of each chunk.

Background events of chunk k are drawn from their own stream, ``SeedSequence(seed,
spawn_key=(k, 2))``; which events of the chunk are backgrounds is decided by the one combined
origin table of the truth stream (:func:`combined_cdf`), so a run without backgrounds is bit for
bit the run of before.

Per background event: time uniform in live time (one uniform), isotropic direction (two
uniforms), then per isotope in the configured order the branch and kinetic energy
(:class:`~generator.backgrounds.betashape.BranchSampler`) and the vertex (uniform in the
fiducial volume, or accepted with probability exp(−(d − d_min)/λ) where d is the depth below the
vessel wall: exponential attenuation of external γ-like backgrounds, Beer–Lambert law).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..geometry import FiducialVolume, Vessel, make_vessel
from .betashape import BranchSampler
from .config import BackgroundsConfig, IsotopeConfig
from .decay import Isotope, bq_per_kg

__all__ = ["IsotopePlan", "BackgroundPlan", "build_backgrounds", "combined_cdf",
           "background_seed", "BACKGROUND_SPAWN_SUFFIX", "expected_events"]

#: Child-stream suffix of the backgrounds: chunk k uses spawn_key (k, 2).
BACKGROUND_SPAWN_SUFFIX = 2


def background_seed(entropy: int, k: int) -> np.random.SeedSequence:
    """Seed sequence of the background stream of chunk ``k``."""
    return np.random.SeedSequence(entropy, spawn_key=(k, BACKGROUND_SPAWN_SUFFIX))


def expected_events(iso: Isotope, rate: float, unit: str, mass_kg: float,
                    live_seconds: float) -> float:
    """Expected generated decays: R [Bq/kg] × mass [kg] × live time [s] × visible fraction."""
    return bq_per_kg(iso, rate, unit) * mass_kg * live_seconds * iso.visible_fraction


@dataclass
class IsotopePlan:
    """One configured isotope: its data, rate, expected count and samplers."""

    iso: Isotope
    cfg: IsotopeConfig
    bq_per_kg: float
    expected_events: float
    sampler: BranchSampler = field(repr=False)
    vessel: Vessel | None = None
    d_min_mm: float = 0.0


@dataclass
class BackgroundPlan:
    """The background isotopes of a run (built once)."""

    isotopes: list[IsotopePlan]
    mass_kg: float
    live_seconds: float
    intervals: np.ndarray = field(repr=False)

    @property
    def expected(self) -> np.ndarray:
        """Expected events per isotope, shape (n_isotopes,)."""
        return np.array([p.expected_events for p in self.isotopes])

    def sample_times(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Times uniform in live time (UTC s), one uniform each."""
        iv = self.intervals
        lengths = iv[:, 1] - iv[:, 0]
        cum = np.concatenate(([0.0], np.cumsum(lengths)))
        x = rng.random(n) * cum[-1]
        j = np.clip(np.searchsorted(cum, x, side="right") - 1, 0, len(lengths) - 1)
        return iv[j, 0] + np.minimum(x - cum[j], lengths[j])

    def fill(self, out: dict[str, np.ndarray], idx: np.ndarray, which: np.ndarray,
             rng: np.random.Generator, fiducial: FiducialVolume, sun: Any,
             weight: float) -> None:
        """Write the background events ``idx`` (isotope index ``which``) into chunk ``out``.

        Parameters
        ----------
        out : dict of str to ndarray
            The chunk being filled (fields of :data:`generator.io.schema.EVENT_FIELDS`).
        idx, which : ndarray of int
            Event positions in the chunk and their isotope indices.
        rng : numpy.random.Generator
            The chunk's background stream.
        fiducial : FiducialVolume
            Uniform vertices.
        sun : callable
            ``sun(t) -> (sun_to_detector_dir (n, 3), cos_zenith (n,), ...)``.
        weight : float
            Expected events per generated event.
        """
        n = idx.size
        if n == 0:
            return
        t = self.sample_times(rng, n)
        u = rng.random((n, 2))
        cos_t = 2.0 * u[:, 0] - 1.0
        sin_t = np.sqrt(np.maximum(0.0, 1.0 - cos_t * cos_t))
        phi = 2.0 * np.pi * u[:, 1]
        e_dir = np.column_stack([sin_t * np.cos(phi), sin_t * np.sin(phi), cos_t])
        t_kin = np.empty(n)
        gamma = np.empty(n)
        particle = np.empty(n, dtype=np.int32)
        vertex = np.empty((n, 3))
        codes = np.empty(n, dtype=np.int16)
        for j, p in enumerate(self.isotopes):
            sel = np.flatnonzero(which == j)
            if not sel.size:
                continue
            tk, g, k = p.sampler.sample(rng, sel.size)
            t_kin[sel], gamma[sel] = tk, g
            bp = p.iso.branch_particles
            particle[sel] = np.asarray(bp, np.int32)[k] if bp else p.iso.particle
            vertex[sel] = self._vertices(p, rng, sel.size, fiducial)
            codes[sel] = p.iso.code
        d, cz, *_ = sun(t)
        out["time_utc"][idx] = t
        out["origin"][idx] = codes
        out["nu_pdg"][idx] = 0
        out["nu_energy"][idx] = np.nan
        out["nu_dir"][idx] = np.nan
        out["e_kinetic"][idx] = t_kin
        out["e_dir"][idx] = e_dir
        out["vertex"][idx] = vertex
        out["cos_sun"][idx] = np.einsum("ij,ij->i", e_dir, d)
        out["sun_cos_zenith"][idx] = cz
        out["is_night"][idx] = cz < 0.0
        out["weight"][idx] = weight
        out["particle"][idx] = particle
        out["gamma_energy"][idx] = gamma

    @staticmethod
    def _vertices(p: IsotopePlan, rng: np.random.Generator, n: int,
                  fiducial: FiducialVolume) -> np.ndarray:
        if p.vessel is None:
            return fiducial.sample(rng, n)
        lam = p.cfg.attenuation_length_m * 1000.0
        out = np.empty((n, 3))
        filled = 0
        while filled < n:
            m = max(2 * (n - filled), 64)
            xyz = fiducial.sample(rng, m)
            keep = rng.random(m) < np.exp(-(p.vessel.depth(xyz) - p.d_min_mm) / lam)
            good = xyz[keep][: n - filled]
            out[filled:filled + good.shape[0]] = good
            filled += good.shape[0]
        return out

    def write_tables(self, sink: Any) -> None:
        """Store the ``/backgrounds`` table (one row per isotope)."""
        ps = self.isotopes
        sink.write_table("backgrounds/name", np.array([p.iso.name for p in ps], dtype=object),
                         "", "background isotope names (UTF-8)")
        sink.write_table("backgrounds/code", np.array([p.iso.code for p in ps], np.int16), "",
                         "origin code of each isotope")
        sink.write_table("backgrounds/expected_events", self.expected, "events",
                         "expected generated decays for the configured exposure and mass: "
                         "rate x mass x live time x visible_fraction")
        sink.write_table("backgrounds/rate", np.array([p.cfg.rate for p in ps]), "see rate_unit",
                         "configured rate parameter")
        sink.write_table("backgrounds/rate_unit", np.array([p.cfg.unit for p in ps],
                                                           dtype=object), "",
                         "unit of the rate parameter (Bq/kg, cpd/100t, g/g of the chain parent)")
        sink.write_table("backgrounds/activity", np.array([p.bq_per_kg for p in ps]), "Bq/kg",
                         "decay rate per kg of target")
        sink.write_table("backgrounds/half_life", np.array([p.iso.half_life_s for p in ps]),
                         "s", "half-life (evaluated decay data)")
        sink.write_table("backgrounds/visible_fraction",
                         np.array([p.iso.visible_fraction for p in ps]), "",
                         "fraction of decays generated (branches with a detectable emission)")
        sink.set_attrs({"target_mass_kg": self.mass_kg,
                        "sources": "; ".join(f"{p.iso.name}: {p.iso.source}" for p in ps),
                        "vertex": "; ".join(f"{p.iso.name}: {p.cfg.vertex}" for p in ps)},
                       group="backgrounds")


def build_backgrounds(cfg: Any, fid: FiducialVolume, density_g_cm3: float,
                      live_seconds: float, intervals: np.ndarray) -> BackgroundPlan | None:
    """The background plan of a configuration (None when off or with no isotope)."""
    bg: BackgroundsConfig | None = getattr(cfg, "backgrounds", None)
    if bg is None or not bg.enabled or not bg.isotopes:
        return None
    from . import ISOTOPES

    det = cfg.detector
    mass_kg = det.target_mass_t * 1000.0 if det.target_mass_t is not None else \
        fid.volume_cm3 * density_g_cm3 / 1000.0
    plans = []
    for ic in bg.isotopes:
        iso = ISOTOPES[ic.name]
        vessel = None
        d_min = 0.0
        if ic.vertex != "uniform":
            vessel = make_vessel(fid, getattr(bg, f"{ic.vertex}_radius_m"),
                                 getattr(bg, f"{ic.vertex}_half_height_m"),
                                 f"backgrounds.{ic.vertex}")
            d_min = max(vessel.min_depth(fid), 0.0)
        sampler = BranchSampler(iso.branches, iso.z_daughter, iso.a, iso.positron)
        plans.append(IsotopePlan(iso, ic, bq_per_kg(iso, ic.rate, ic.unit),
                                 expected_events(iso, ic.rate, ic.unit, mass_kg, live_seconds),
                                 sampler, vessel, d_min))
    return BackgroundPlan(plans, mass_kg, live_seconds, np.asarray(intervals))


def combined_cdf(signal_expected: np.ndarray, bg: BackgroundPlan | None) -> np.ndarray:
    """Cumulative origin table over (signal sources, background isotopes), last entry 1."""
    expected = signal_expected if bg is None else np.concatenate([signal_expected,
                                                                  bg.expected])
    cdf = np.cumsum(expected) / float(expected.sum())
    cdf[-1] = 1.0
    return cdf
