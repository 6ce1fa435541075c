"""Multiple Coulomb scattering along an electron track and exact sampling on the sphere.

Highland formula for the rms projected scattering angle after a thickness x of a material with
radiation length X₀ (Highland, Nucl. Instrum. Meth. 129, 497 (1975); Lynch & Dahl, Nucl.
Instrum. Meth. B 58, 6 (1991); as given in the PDG Review of Particle Physics, "Passage of
particles through matter", multiple-scattering section):

    θ₀ = (13.6 MeV / (βcp)) z √(x/X₀) [1 + 0.038 ln(x z² / (X₀ β²))].

Along a stopping track the momentum changes; we integrate it as
θ₀²(s) = (13.6 MeV)² A(s) [1 + 0.038 ln L(s)]² with A(s) = ∫₀^s ds'/(X₀ (βcp)²) and
L(s) = ∫₀^s ds'/(X₀ β²), which reduces exactly to Highland at fixed momentum (our construction;
the log term makes θ₀² non-additive, so it is evaluated on the accumulated integrals, not summed
step by step). The positions along the track come from the CSDA range.

The reconstructed direction of a Cherenkov event is the light-weighted mean direction of the
track. For a random walk of the direction with per-plane variance θ₀²(s), the per-plane
variance of the mean direction weighted by the Cherenkov emission density w(s) ∝ sin²θ_C is
σ² = ∫ (dθ₀²/ds) [W(>s)/W]² ds (independent increments; our construction).

Directions are drawn from the von Mises–Fisher distribution on the sphere, density
∝ exp(κ cos θ), with the exact inverse CDF cos θ = 1 + ln(u + (1 − u) e^{−2κ})/κ
(Fisher, Proc. R. Soc. A 217, 295 (1953); Wood, Commun. Stat. Simul. Comput. 23, 157 (1994)).
"""

from __future__ import annotations

import math

import numpy as np

from ..constants import ELECTRON_MASS
from ..media import ATOMIC_NUMBER, ATOMIC_WEIGHT, Medium, element_mass_fractions
from .light import frank_tamm_per_cm
from .stopping import csda_range

__all__ = ["highland_theta0", "radiation_length_g_cm2", "track_mcs_variance",
           "vmf_cos_cdf", "sample_vmf", "rotate_from_z", "HIGHLAND_E0_MEV"]

#: Highland scale energy, MeV (PDG "Passage of particles through matter").
HIGHLAND_E0_MEV = 13.6


def highland_theta0(p_mev: np.ndarray, beta: np.ndarray, x_over_x0: np.ndarray, z: float = 1.0
                    ) -> np.ndarray:
    """Rms projected multiple-scattering angle (rad), Highland formula (PDG review)."""
    p = np.asarray(p_mev, dtype=np.float64)
    b = np.asarray(beta, dtype=np.float64)
    x = np.asarray(x_over_x0, dtype=np.float64)
    return (HIGHLAND_E0_MEV / (b * p) * abs(z) * np.sqrt(x)
            * (1.0 + 0.038 * np.log(x * z * z / (b * b))))


def radiation_length_g_cm2(medium: Medium) -> float:
    """Radiation length X₀ (g/cm²) of a medium.

    Elements: Tsai's fit as given in the PDG review ("Passage of particles through matter",
    eq. for X₀), 1/X₀ = 4α r_e² N_A/A {Z²[L_rad − f(Z)] + Z L'_rad}; compounds:
    1/X₀ = Σ w_j/X_j. Liquid water gives 36.08 g/cm² (PDG atomic and nuclear properties,
    from memory).
    """
    from ..constants import ALPHA, AVOGADRO, CLASSICAL_ELECTRON_RADIUS_CM

    inv = 0.0
    for element, w in element_mass_fractions(medium.composition).items():
        z = ATOMIC_NUMBER[element]
        a = ATOMIC_WEIGHT[element]
        if z == 1:
            lrad, lprad = 5.31, 6.144
        elif z == 2:
            lrad, lprad = 4.79, 5.621
        elif z == 3:
            lrad, lprad = 4.74, 5.805
        elif z == 4:
            lrad, lprad = 4.71, 5.924
        else:
            lrad, lprad = math.log(184.15 * z ** (-1 / 3)), math.log(1194.0 * z ** (-2 / 3))
        az = ALPHA * z
        a2 = az * az
        fz = a2 * (1.0 / (1.0 + a2) + 0.20206 - 0.0369 * a2 + 0.0083 * a2**2
                   - 0.002 * a2**3)
        x0_inv = (4.0 * ALPHA * CLASSICAL_ELECTRON_RADIUS_CM**2 * AVOGADRO / a
                  * (z * z * (lrad - fz) + z * lprad))
        inv += w * x0_inv
    return 1.0 / inv


def track_mcs_variance(t_mev: np.ndarray, medium: Medium, n_steps: int = 400) -> np.ndarray:
    """Per-plane variance (rad²) of the Cherenkov-light-weighted mean track direction.

    Parameters
    ----------
    t_mev : ndarray
        Initial kinetic energies (MeV); each gets its own track integration.
    medium : Medium
        Medium (density, composition, refractive index).
    n_steps : int
        Path steps per track.

    Returns
    -------
    ndarray
        σ² per plane; ``inf`` below the Cherenkov threshold (no light, no direction).
    """
    t0 = np.atleast_1d(np.asarray(t_mev, dtype=np.float64))
    x0_cm = radiation_length_g_cm2(medium) / medium.density_g_cm3
    # residual-range table R(E) in cm, to map path length onto energy
    e_tab = np.geomspace(1e-3, max(float(t0.max()), 1e-2) * 1.001, 2000)
    r_tab = csda_range(e_tab, medium) / medium.density_g_cm3
    out = np.full(t0.shape, np.inf)
    u = (np.arange(n_steps + 1) / n_steps)[None, :]
    r0 = np.interp(t0, e_tab, r_tab)[:, None]
    s = u * r0                                                   # (n, steps+1) path, cm
    e = np.interp(r0 - s, r_tab, e_tab)                          # energy along the track
    gamma = e / ELECTRON_MASS + 1.0
    beta2 = 1.0 - 1.0 / gamma**2
    pbeta2 = (e * (e + 2.0 * ELECTRON_MASS) * beta2)             # (βcp)², MeV²
    ds = np.diff(s, axis=1)
    a_inc = 0.5 * (1.0 / pbeta2[:, 1:] + 1.0 / pbeta2[:, :-1]) * ds / x0_cm
    l_inc = 0.5 * (1.0 / beta2[:, 1:] + 1.0 / beta2[:, :-1]) * ds / x0_cm
    a_cum = np.cumsum(a_inc, axis=1)
    l_cum = np.cumsum(l_inc, axis=1)
    bracket = np.maximum(1.0 + 0.038 * np.log(np.maximum(l_cum, 1e-300)), 0.0)
    theta2 = HIGHLAND_E0_MEV**2 * a_cum * bracket**2
    theta2 = np.maximum.accumulate(np.concatenate([np.zeros((t0.size, 1)), theta2], axis=1),
                                   axis=1)
    w = frank_tamm_per_cm(e, medium.refractive_index)            # emission density per cm
    w_mid = 0.5 * (w[:, 1:] + w[:, :-1]) * ds
    total = w_mid.sum(axis=1)
    beyond = total[:, None] - np.cumsum(w_mid, axis=1)           # light emitted after step i
    frac = np.concatenate([np.ones((t0.size, 1)), beyond / np.maximum(total, 1e-300)[:, None]],
                          axis=1)
    f2 = 0.5 * (frac[:, 1:] ** 2 + frac[:, :-1] ** 2)
    var = np.sum(np.diff(theta2, axis=1) * f2, axis=1)
    ok = total > 0.0
    out[ok] = var[ok]
    return out.reshape(np.shape(t_mev)) if np.ndim(t_mev) else out[0]


def vmf_cos_cdf(cos_theta: np.ndarray, kappa: float) -> np.ndarray:
    """CDF of cos θ under the von Mises–Fisher density ∝ exp(κ cos θ) on the sphere.

    F(c) = (e^{κ(c − 1)} − e^{−2κ}) / (1 − e^{−2κ}) (Fisher 1953), evaluated with expm1 for
    small κ; κ = 0 is the isotropic (c + 1)/2.
    """
    c = np.asarray(cos_theta, dtype=np.float64)
    if kappa <= 0.0:
        return 0.5 * (c + 1.0)
    return np.exp(-kappa * (1.0 - c)) * np.expm1(-kappa * (c + 1.0)) / np.expm1(-2.0 * kappa)


def rotate_from_z(v: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Rotate vectors ``v`` (n, 3) given in a frame with ẑ along ``d`` (n, 3) into the lab frame.

    Uses the rotation taking ẑ to d about the axis ẑ × d; d = −ẑ is handled by a rotation of π
    about x̂. The result has the dtype of ``v``.
    """
    dx, dy, dz = (d[:, i].astype(v.dtype) for i in range(3))
    vx, vy, vz = v[:, 0], v[:, 1], v[:, 2]
    flip = dz < -0.999999
    k = 1.0 / np.where(flip, 1.0, 1.0 + dz)
    dxy = dx * dy * k
    out = np.empty_like(v)
    out[:, 0] = vx * (1.0 - dx * dx * k) - vy * dxy + vz * dx
    out[:, 1] = -vx * dxy + vy * (1.0 - dy * dy * k) + vz * dy
    out[:, 2] = -vx * dx - vy * dy + vz * dz
    if flip.any():
        out[flip, 0] = vx[flip]
        out[flip, 1] = -vy[flip]
        out[flip, 2] = -vz[flip]
    return out


def sample_vmf(rng: np.random.Generator, mean_dir: np.ndarray, kappa: np.ndarray,
               dtype: type = np.float32) -> np.ndarray:
    """Draw unit vectors from von Mises–Fisher distributions about ``mean_dir`` (n, 3).

    Exact inverse CDF of cos θ (see module docstring) and a uniform azimuth: two uniforms of
    ``dtype`` per event, drawn as one (n, 2) array (column 0 for cos θ, column 1 for φ).
    """
    n = mean_dir.shape[0]
    u = rng.random((n, 2), dtype=dtype)
    k = np.maximum(np.asarray(kappa, dtype=dtype), dtype(1e-6))
    u0 = u[:, 0]
    c = 1.0 + np.log(u0 + (1.0 - u0) * np.exp(-2.0 * k)) / k
    np.clip(c, -1.0, 1.0, out=c)
    s = np.sqrt(1.0 - c * c)
    phi = dtype(2.0 * np.pi) * u[:, 1]
    v = np.empty((n, 3), dtype=dtype)
    v[:, 0] = s * np.cos(phi)
    v[:, 1] = s * np.sin(phi)
    v[:, 2] = c
    return rotate_from_z(v, mean_dir)
