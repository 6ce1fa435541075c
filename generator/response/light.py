"""Light emitted by a stopping electron: Cherenkov photons and Birks-quenched scintillation.

* Cherenkov threshold β > 1/n (Frank & Tamm, Dokl. Akad. Nauk SSSR 14, 109 (1937); PDG Review
  of Particle Physics, "Passage of particles through matter", Cherenkov section):
  T_th = m_e c² (1/√(1 − 1/n²) − 1).
* Frank–Tamm yield per unit path in a wavelength window [λ₁, λ₂] for unit charge and a
  constant index: dN/dx = 2πα (1/λ₁ − 1/λ₂) (1 − 1/(β²n²)) (same PDG section), integrated
  along the continuous-slowing-down track, dx = dE/(ρ S_tot(E)).
* Birks' law (Birks, Proc. Phys. Soc. A 64, 874 (1951)): dL/dE = 1/(1 + kB dE/dx), so the
  quenched (electron-equivalent) visible energy of a stopping electron is
  E_vis(T) = ∫₀^T dE / (1 + kB ρ S_col(E)), with the collision stopping power of
  :mod:`generator.response.stopping`.
* α particles: constant quenching factor, E_vis = T_α / Q_α (the documented α model of the
  response; Q_α per medium, see :data:`generator.media.MEDIA`).

Energies in MeV, lengths in cm, photon counts per electron.
"""

from __future__ import annotations

import math

import numpy as np

from ..constants import ALPHA, ELECTRON_MASS
from ..media import Medium
from .stopping import RANGE_T_MIN, collision_stopping_power, total_stopping_power

__all__ = ["cherenkov_threshold", "cherenkov_photons", "birks_visible_energy",
           "frank_tamm_per_cm", "LAMBDA_MIN_NM", "LAMBDA_MAX_NM", "cumulative_log_integral"]

#: Wavelength window of the Cherenkov photon count (nm): the sensitive range of bialkali
#: photocathodes (common practice, no source).
LAMBDA_MIN_NM = 300.0
LAMBDA_MAX_NM = 600.0


def cherenkov_threshold(n: float) -> float:
    """Kinetic energy (MeV) above which an electron emits Cherenkov light in index ``n``."""
    if n <= 1.0:
        return math.inf
    return ELECTRON_MASS * (1.0 / math.sqrt(1.0 - 1.0 / n**2) - 1.0)


def frank_tamm_per_cm(t_mev: np.ndarray, n: float) -> np.ndarray:
    """Cherenkov photons per cm in [300, 600] nm for an electron of kinetic energy T (MeV)."""
    gamma = np.asarray(t_mev, dtype=np.float64) / ELECTRON_MASS + 1.0
    beta2 = 1.0 - 1.0 / gamma**2
    window = 1.0 / (LAMBDA_MIN_NM * 1e-7) - 1.0 / (LAMBDA_MAX_NM * 1e-7)      # cm⁻¹
    return 2.0 * math.pi * ALPHA * window * np.maximum(0.0, 1.0 - 1.0 / (beta2 * n * n))


def cumulative_log_integral(grid: np.ndarray, integrand: np.ndarray) -> np.ndarray:
    """∫_{grid[0]}^{grid[i]} f dT on a logarithmic grid (trapezoidal rule in ln T)."""
    y = integrand * grid
    return np.concatenate([[0.0], np.cumsum(0.5 * (y[1:] + y[:-1]) * np.diff(np.log(grid)))])


def energy_grid(t_max: float, n: int = 3000) -> np.ndarray:
    """Logarithmic kinetic-energy grid (MeV) from 1 keV to ``t_max`` for the light tables."""
    return np.geomspace(RANGE_T_MIN, max(t_max, 10 * RANGE_T_MIN), n)


def cherenkov_photons(t_mev: np.ndarray, medium: Medium, t_max: float = 30.0) -> np.ndarray:
    """Cherenkov photons (300–600 nm) emitted by an electron of kinetic energy T until it stops.

    N(T) = ∫_{T_th}^{T} (dN/dx)(E) / (ρ S_tot(E)) dE (Frank–Tamm along the CSDA track).
    """
    grid = energy_grid(max(t_max, float(np.max(t_mev))))
    dens = frank_tamm_per_cm(grid, medium.refractive_index)
    dens = dens / (medium.density_g_cm3 * total_stopping_power(grid, medium))
    cum = cumulative_log_integral(grid, dens)
    return np.interp(t_mev, grid, cum, left=0.0)


def birks_visible_energy(t_mev: np.ndarray, medium: Medium, kb_cm_per_mev: float | None = None,
                         t_max: float = 30.0) -> np.ndarray:
    """Birks-quenched visible energy E_vis(T) (MeV, electron-equivalent) of a stopping electron.

    E_vis = ∫₀^T dE / (1 + kB ρ S_col(E)); below 1 keV the stopping power is held at its 1 keV
    value (Bethe theory fails there; the contribution is < 1 keV).
    """
    kb = medium.birks_kb_cm_per_mev if kb_cm_per_mev is None else kb_cm_per_mev
    grid = energy_grid(max(t_max, float(np.max(t_mev))))
    dedx = medium.density_g_cm3 * collision_stopping_power(grid, medium)      # MeV/cm
    dens = 1.0 / (1.0 + kb * dedx)
    cum = cumulative_log_integral(grid, dens) + grid[0] * dens[0]
    t = np.asarray(t_mev, dtype=np.float64)
    low = t * dens[0]
    return np.where(t < grid[0], low, np.interp(t, grid, cum))
