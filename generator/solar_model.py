"""Solar interior for flavour conversion: electron density and neutrino production regions.

Two electron-density profiles are offered (``profile`` argument):

``"ssm"`` (default)
    An analytic description of the present-day solar core built in this module.  It joins the
    exponential fit of Bahcall (*Neutrino Astrophysics*, CUP 1989; n_e = 245 N_A cm⁻³
    exp(−10.54 r/R⊙), from memory) outside the core to a flat-topped core anchored to the
    standard-solar-model (SSM) central values ρ_c = 150 g cm⁻³ and X_c = 0.35 (BP2000/BS05
    central values, Bahcall, Pinsonneault & Basu, ApJ 555, 990 (2001); from memory), which give
    n_e(0) = ρ_c (1 + X_c)/2 ≈ 101 N_A cm⁻³.  Composition: hydrogen mass fraction rising from
    X_c at the centre to 0.71 outside the burnt core; temperature T_c = 15.7 MK (from memory)
    with a Lorentzian fall-off (T = T_c/2 at 0.24 R⊙, shape from memory of SSM tables).
    It is *not* a published SSM table; see :func:`mass_density` for the exact construction.

``"exponential"``
    The Bahcall (1989) exponential everywhere.  It overestimates the centre ≈ 2.4× and is kept
    only to quantify the profile systematic.

Production regions of the eight sources follow from the same core model: the local rate is
the product of number densities and the non-resonant thermonuclear rate ⟨σv⟩ ∝ τ² e^{−τ},
τ = 3E₀/kT = 42.487 (Z₁²Z₂² μ/T₆)^{1/3} (constant S-factor; D. D. Clayton, *Principles of
Stellar Evolution and Nucleosynthesis*, McGraw-Hill 1968, ch. 4; C. Rolfs & W. Rodney,
*Cauldrons in the Cosmos*, 1988), with ³He and ⁷Be at their local equilibrium abundances
(Bahcall 1989, ch. 3), ⁷Be electron capture ∝ n_e T^{−1/2} and pep/pp ∝ ρ(1+X) T^{−1/2}
(Bahcall & May, ApJ 155, 501 (1969); from memory).  The resulting most-probable radii
(⁸B 0.046, ⁷Be 0.061, pep 0.091, pp 0.101, hep 0.121, ¹⁵O 0.050 R⊙) agree with the values
read from SSM tables (Bahcall 1989; see tests).  Limitations: the outer ¹²C-burning tail of ¹³N
and the non-equilibrium ³He shell (which pushes hep outward) are not modelled.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from generator.errors import ConfigError

__all__ = [
    "PROFILES",
    "SOURCES",
    "electron_density",
    "mass_density",
    "hydrogen_fraction",
    "temperature_mk",
    "production_pdf",
    "production_quadrature",
    "sample_production_radius",
]

#: Names accepted for the electron-density profile.
PROFILES: tuple[str, ...] = ("ssm", "exponential")

#: Solar-neutrino sources (trade names).
SOURCES: tuple[str, ...] = ("pp", "pep", "hep", "7Be", "8B", "13N", "15O", "17F")

# Exponential fit, Bahcall, Neutrino Astrophysics (CUP 1989) — from memory.
_EXP_NE0 = 245.0  # N_A cm⁻³
_EXP_SLOPE = 10.54  # per solar radius
# SSM central anchors (BP2000 / BS05 central values, from memory).
_RHO_C = 150.0  # g cm⁻³
_X_C = 0.35
_T_C_MK = 15.7
# Outer-core composition and shape choices of our analytic core (from memory of SSM tables:
# X ≈ 0.53 at 0.1 R⊙, ≈ 0.69 at 0.2 R⊙; T ≈ T_c/2 near 0.24 R⊙; ρ(0.1 R⊙) ≈ 0.6 ρ_c).
_X_OUT = 0.71
_X_WIDTH = 0.12
_Z_METALS = 0.02
_T_HALF = 0.24
_CORE_WIDTH = 0.142
_RHO_OUT = _EXP_NE0 / ((1.0 + _X_OUT) / 2.0)  # density normalisation matching the exponential
_G0 = np.log(_RHO_OUT / _RHO_C) / _EXP_SLOPE

_R_MAX = 0.5  # production beyond 0.5 R⊙ is negligible (< 1e-6 of every source)
_N_QUAD = 2000


def _check_profile(profile: str) -> None:
    if profile not in PROFILES:
        raise ConfigError(f"solar_profile: unknown value {profile!r}; allowed: {PROFILES}")


def _check_source(source: str) -> None:
    if source not in SOURCES:
        raise ConfigError(f"source: unknown value {source!r}; allowed: {SOURCES}")


def hydrogen_fraction(x: np.ndarray | float) -> np.ndarray:
    """Hydrogen mass fraction X(r) of the analytic core model.

    X = X_out − (X_out − X_c) exp(−(x/0.12)²) with X_c = 0.35 (SSM centre, from memory) and
    X_out = 0.71.

    Parameters
    ----------
    x : array_like
        Radius in units of the solar radius, any shape.

    Returns
    -------
    ndarray
        Mass fraction, same shape as ``x``.
    """
    x = np.asarray(x, dtype=float)
    return _X_OUT - (_X_OUT - _X_C) * np.exp(-((x / _X_WIDTH) ** 2))


def temperature_mk(x: np.ndarray | float) -> np.ndarray:
    """Temperature of the analytic core model, T = T_c/(1 + (x/0.24)²), in 10⁶ K.

    Parameters
    ----------
    x : array_like
        Radius / R⊙.

    Returns
    -------
    ndarray
        Temperature in MK (T_c = 15.7 MK, SSM central value, from memory).
    """
    x = np.asarray(x, dtype=float)
    return _T_C_MK / (1.0 + (x / _T_HALF) ** 2)


def mass_density(x: np.ndarray | float) -> np.ndarray:
    """Mass density of the analytic core model in g cm⁻³.

    ρ = ρ_out exp(−10.54 g(x)) with g(x) = sqrt(x² + g₀² exp(−(x/0.142)²)): equal to the
    Bahcall (1989) exponential (divided by (1 + X_out)/2) for x ≳ 0.25, quadratic at the centre
    with ρ(0) = ρ_c = 150 g cm⁻³ (zero slope, as hydrostatic equilibrium requires) and
    ρ(0.1 R⊙) ≈ 0.6 ρ_c.

    Parameters
    ----------
    x : array_like
        Radius / R⊙.

    Returns
    -------
    ndarray
        Density in g cm⁻³, same shape as ``x``.
    """
    x = np.abs(np.asarray(x, dtype=float))
    g = np.sqrt(x * x + _G0 * _G0 * np.exp(-((x / _CORE_WIDTH) ** 2)))
    return _RHO_OUT * np.exp(-_EXP_SLOPE * g)


def electron_density(x: np.ndarray | float, profile: str = "ssm") -> np.ndarray:
    """Electron number density n_e(r) in units of N_A cm⁻³.

    ``"ssm"``: n_e = ρ (1 + X)/2 (full ionisation of H and He; metals change it by < 0.1 %).
    ``"exponential"``: 245 exp(−10.54 x) (Bahcall 1989, from memory).

    Parameters
    ----------
    x : array_like
        Radius / R⊙ (0 ≤ x ≤ 1).
    profile : {"ssm", "exponential"}
        Profile name.

    Returns
    -------
    ndarray
        n_e / (N_A cm⁻³), same shape as ``x``.

    Raises
    ------
    ConfigError
        Unknown profile.
    """
    _check_profile(profile)
    x = np.asarray(x, dtype=float)
    if profile == "exponential":
        return _EXP_NE0 * np.exp(-_EXP_SLOPE * x)
    return mass_density(x) * (1.0 + hydrogen_fraction(x)) / 2.0


def _sigma_v(z1: int, z2: int, mu: float, t6: np.ndarray) -> np.ndarray:
    """Non-resonant ⟨σv⟩ up to a constant: τ² e^{−τ}, τ = 42.487 (Z₁²Z₂²μ/T₆)^{1/3}.

    Constant-S-factor Gamow-peak rate (Clayton 1968, ch. 4); μ in atomic mass units.
    """
    tau = 42.487 * (z1 * z1 * z2 * z2 * mu / t6) ** (1.0 / 3.0)
    return tau * tau * np.exp(-tau)


def _rate_density(source: str, x: np.ndarray) -> np.ndarray:
    """Unnormalised production rate per unit radius, ∝ x² × rate per volume."""
    rho = mass_density(x)
    xh = hydrogen_fraction(x)
    y = 1.0 - xh - _Z_METALS
    t6 = temperature_mk(x)
    s_pp = _sigma_v(1, 1, 0.5, t6)
    # ³He in local equilibrium: X₃ ∝ X (⟨σv⟩_pp/⟨σv⟩_33)^{1/2} (Bahcall 1989, ch. 3).
    x3 = xh * np.sqrt(s_pp / _sigma_v(2, 2, 1.5, t6))
    s34 = _sigma_v(2, 2, 12.0 / 7.0, t6)
    if source == "pp":
        rate = rho**2 * xh**2 * s_pp
    elif source == "pep":
        rate = rho**3 * xh**2 * (1.0 + xh) * s_pp / np.sqrt(t6)
    elif source == "hep":
        rate = rho**2 * xh * x3 * _sigma_v(2, 1, 0.75, t6)
    elif source == "7Be":
        rate = rho**2 * x3 * y * s34
    elif source == "8B":
        # ⁷Be equilibrium between ³He(α,γ) production and e⁻ capture ∝ n_e T^{-1/2}.
        n7 = rho**2 * x3 * y * s34 / (rho * (1.0 + xh) / np.sqrt(t6))
        rate = n7 * rho * xh * _sigma_v(4, 1, 7.0 / 8.0, t6)
    elif source in ("13N", "15O"):
        # CN cycle in equilibrium: every cycle is paced by ¹⁴N(p,γ).
        rate = rho**2 * xh * _sigma_v(7, 1, 14.0 / 15.0, t6)
    else:  # 17F
        rate = rho**2 * xh * _sigma_v(8, 1, 16.0 / 17.0, t6)
    return x * x * rate


@lru_cache(maxsize=16)
def _quadrature(source: str) -> tuple[np.ndarray, np.ndarray]:
    edges = np.linspace(0.0, _R_MAX, _N_QUAD + 1)
    mid = 0.5 * (edges[1:] + edges[:-1])
    w = _rate_density(source, mid)
    w = w / w.sum()
    mid.setflags(write=False)
    w.setflags(write=False)
    return mid, w


def production_quadrature(source: str) -> tuple[np.ndarray, np.ndarray]:
    """Midpoint quadrature of the production region (cached).

    Parameters
    ----------
    source : str
        One of :data:`SOURCES`.

    Returns
    -------
    x : ndarray, shape (2000,)
        Bin-centre radii / R⊙ on [0, 0.5].
    weights : ndarray, shape (2000,)
        Fraction of the source's neutrinos produced in each bin (sums to 1).
    """
    _check_source(source)
    return _quadrature(source)


def production_pdf(source: str, x: np.ndarray | float) -> np.ndarray:
    """Normalised radial production density f(x), ∫₀¹ f dx = 1.

    Parameters
    ----------
    source : str
        One of :data:`SOURCES`.
    x : array_like
        Radius / R⊙.

    Returns
    -------
    ndarray
        Density per unit x (R⊙⁻¹), same shape as ``x``; zero beyond 0.5 R⊙.
    """
    mid, w = production_quadrature(source)
    dx = mid[1] - mid[0]
    norm = w.sum() / (_rate_density(source, mid).sum() * dx)
    x = np.asarray(x, dtype=float)
    inside = (x >= 0.0) & (x <= _R_MAX)
    return np.where(inside, _rate_density(source, np.clip(x, 0.0, _R_MAX)) * norm, 0.0)


def sample_production_radius(source: str, n: int, rng: np.random.Generator) -> np.ndarray:
    """Draw production radii from the source's radial distribution (inverse CDF).

    Parameters
    ----------
    source : str
        One of :data:`SOURCES`.
    n : int
        Number of radii.
    rng : numpy.random.Generator
        Random generator (the only source of randomness).

    Returns
    -------
    ndarray, shape (n,)
        Radii / R⊙.
    """
    mid, w = production_quadrature(source)
    dx = mid[1] - mid[0]
    cdf = np.concatenate([[0.0], np.cumsum(w)])
    cdf[-1] = 1.0
    edges = np.concatenate([mid - 0.5 * dx, [mid[-1] + 0.5 * dx]])
    return np.interp(rng.random(n), cdf, edges)
