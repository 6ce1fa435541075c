"""One-loop electroweak and QED corrections to ν e⁻ → ν e⁻ (electron-energy spectrum).

Source of every formula here: J. N. Bahcall, M. Kamionkowski, A. Sirlin, Phys. Rev. D 51,
6146 (1995), astro-ph/9502003 ("BKS"). The electroweak part replaces the tree couplings by
T-dependent ones built from ρ_NC and κ(T); the QED part multiplies the three helicity
structures of the tree cross section by 1 + (α/π) f(z), where f₋, f₊, f₊₋ include virtual
photons and real bremsstrahlung integrated over all photon energies, with only the electron
kinetic energy T observed ("electron-only" observable).

Provenance of the coefficients (be explicit about certainty):

* The numerical constants ρ_NC, κ_e(T), κ_μ(T), ŝ_Z² and the functions I(T), f₋, f₊₋ are
  recalled from BKS (from memory; the primary paper was not reachable when this module was
  written). They pass the soft-endpoint, non-relativistic and leading-logarithm consistency
  checks (tests/test_xsec.py).
* f₊ uses the form whose A-bracket ends in −½(z² ln z + 1 − z). A second recollection of the
  BKS appendix gives this form, and it is the one consistent with the leading-logarithm
  (collinear) structure of QED, which the first recollection (+(1 − z)) violates. Not yet
  confirmed against the printed appendix.
* ν_τ: BKS give κ for ν_e and ν_μ only. κ differs between flavours through the neutrino
  charge radius, whose charged-lepton loop depends on ln m_l (one-loop SM result:
  ⟨r²_{ν_l}⟩ = (G_F/(4√2π²))[3 − 2 ln(m_l²/M_W²)], J. Bernabéu, J. Papavassiliou, J. Vidal,
  Phys. Rev. Lett. 89, 101802 (2002), hep-ph/0206015, eq. for the charge radius — from memory;
  the same ln m_l term sits in the κ^{(ν_l; e)} of W. J. Marciano, A. Sirlin, Phys. Rev. D 22,
  2695 (1980) and A. Sarantakos, A. Sirlin, W. J. Marciano, Nucl. Phys. B 217, 84 (1983), used
  by BKS). Only that term differs between ν_μ and ν_τ (no W box with external τ), so
  κ_τ(T) ŝ² = κ_μ(T) ŝ² + (α/3π) ln(m_τ/m_μ)  [:func:`charge_radius_shift`]. The same
  expression with ln(m_μ/m_e) reproduces the BKS constants themselves:
  (α/3π) ln(m_μ/m_e) / 0.2317 = 0.01782 against κ_μ − κ_e = 0.9970 − 0.9791 = 0.0179
  (tests/test_xsec.py). The T dependence of the τ (and μ) loop is of order 2mT/m_l² and is
  neglected, as BKS do for the muon (coefficient −0.00037).
* Combined electron + photon energy corrections (M. Passera, Phys. Rev. D 64, 113002 (2001),
  hep-ph/0011190) are NOT implemented: their formulas could not be obtained. The generator
  therefore models the electron-only spectrum.

Conventions: chiral couplings in the "positive" convention g_L(ν_e) = ½ + s² at tree level
(BKS use the overall opposite sign; squares and g_L g_R are unchanged).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from generator.constants import ALPHA, ELECTRON_MASS, MUON_MASS, TAU_MASS

__all__ = [
    "RHO_NC",
    "KAPPA_E_0",
    "KAPPA_E_1",
    "KAPPA_MU_0",
    "KAPPA_MU_1",
    "SIN2_THETA_W_BKS",
    "i_function",
    "charge_radius_shift",
    "kappa",
    "ew_couplings",
    "collinear_factor",
    "endpoint_log",
    "spence_l",
    "f_minus",
    "f_plus_weighted",
    "f_plus",
    "f_plus_minus",
]

#: ρ_NC^{(ν,l)} = 1.0126 ± 0.0016, BKS eq. for the NC normalisation (from memory).
RHO_NC: float = 1.0126
#: κ_e(T) = 0.9791 + 0.0097 I(T) (ν_e), BKS (from memory).
KAPPA_E_0: float = 0.9791
KAPPA_E_1: float = 0.0097
#: κ_μ(T) = 0.9970 − 0.00037 I(T) (ν_μ, ν_τ), BKS (from memory; second coefficient uncertain,
#: changes κ by < 2e-4 for T < 20 MeV).
KAPPA_MU_0: float = 0.9970
KAPPA_MU_1: float = -0.00037
#: ŝ_Z² used by BKS in their numerical results (from memory).
SIN2_THETA_W_BKS: float = 0.2317

_M = ELECTRON_MASS
_AOP = ALPHA / np.pi


def i_function(t: ArrayLike) -> np.ndarray:
    """BKS auxiliary function I(T) entering κ(T).

    I(T) = (1/6){1/3 + (3 − x²)[(x/2) ln((x + 1)/(x − 1)) − 1]}, x = √(1 + 2m/T)
    (BKS 1995). Below T = 1e-3 m the series I ≈ T/(15 m) is used (the bracket cancels there).

    Parameters
    ----------
    t : array_like
        Electron kinetic energy T in MeV, T ≥ 0.

    Returns
    -------
    numpy.ndarray
        I(T), dimensionless, same shape as ``t``.
    """
    tt = np.asarray(t, dtype=np.float64)
    small = tt < 1e-3 * _M
    ts = np.where(small, 1.0, tt)
    x = np.sqrt(1.0 + 2.0 * _M / ts)
    bracket = 0.5 * x * np.log((x + 1.0) / (x - 1.0)) - 1.0
    full = (1.0 / 6.0) * (1.0 / 3.0 + (3.0 - x * x) * bracket)
    return np.where(small, tt / (15.0 * _M), full)


def charge_radius_shift(lepton_mass_from: float, lepton_mass_to: float) -> float:
    """Change of the effective κ ŝ² between two neutrino flavours from the charge radius.

    Δ(κ ŝ²) = (α/3π) ln(m_to/m_from): the charged-lepton-mass dependence of the one-loop
    neutrino charge radius, ⟨r²_{ν_l}⟩ ∝ 3 − 2 ln(m_l²/M_W²) (Bernabéu, Papavassiliou & Vidal,
    Phys. Rev. Lett. 89, 101802 (2002), from memory), entering νe scattering as
    ŝ² → ŝ² − (√2πα/3G_F)⟨r²⟩ (module docstring).

    Parameters
    ----------
    lepton_mass_from, lepton_mass_to : float
        Charged-lepton masses in MeV.

    Returns
    -------
    float
        Δ(κ ŝ²), dimensionless (positive for a heavier lepton).
    """
    return ALPHA / (3.0 * np.pi) * float(np.log(lepton_mass_to / lepton_mass_from))


#: Δ(κ ŝ²) of ν_τ relative to ν_μ, (α/3π) ln(m_τ/m_μ) ≈ 2.185e-3.
TAU_SHIFT: float = charge_radius_shift(MUON_MASS, TAU_MASS)


def _generation(flavour: ArrayLike) -> np.ndarray:
    """0 (ν_e), 1 (ν_μ), 2 (ν_τ) from a generation index or a legacy is-ν_e boolean."""
    f = np.asarray(flavour)
    if f.dtype == bool:
        return np.where(f, 0, 1)
    return f.astype(np.int64)


def kappa(t: ArrayLike, generation: ArrayLike, sin2_theta_w: float = 0.2317) -> np.ndarray:
    """BKS κ(T) for ν_e (generation 0), ν_μ (1) and ν_τ (2).

    κ_e = 0.9791 + 0.0097 I(T), κ_μ = 0.9970 − 0.00037 I(T) (BKS, from memory);
    κ_τ = κ_μ + (α/3π) ln(m_τ/m_μ)/ŝ² (charge-radius term, module docstring).

    Parameters
    ----------
    t : array_like
        Electron kinetic energy T in MeV.
    generation : array_like of int (or bool: True = ν_e, False = ν_μ)
        Broadcast against ``t``.
    sin2_theta_w : float
        ŝ_Z² used with κ (only the ν_τ shift depends on it).

    Returns
    -------
    numpy.ndarray
        κ(T), dimensionless.
    """
    i = i_function(t)
    gen = _generation(generation)
    k_mu = KAPPA_MU_0 + KAPPA_MU_1 * i
    k_tau = k_mu + TAU_SHIFT / sin2_theta_w
    return np.where(gen == 0, KAPPA_E_0 + KAPPA_E_1 * i, np.where(gen == 2, k_tau, k_mu))


def ew_couplings(
    t: ArrayLike, generation: ArrayLike, sin2_theta_w: float
) -> tuple[np.ndarray, np.ndarray]:
    """Electroweak-corrected chiral couplings g_L(T), g_R(T) for neutrinos (positive convention).

    BKS: ν_e: g_L = ρ(½ − κ_e ŝ²) − 1, g_R = −ρ κ_e ŝ²; ν_μ,τ: g_L = ρ(½ − κ_l ŝ²),
    g_R = −ρ κ_l ŝ² (κ_τ from :func:`kappa`). Returned with the overall sign flipped
    (g_L(ν_e) → +0.723 at T → 0).

    Parameters
    ----------
    t : array_like
        Electron kinetic energy T in MeV.
    generation : array_like of int (or bool: True = ν_e)
        0 ν_e (charged current present), 1 ν_μ, 2 ν_τ; broadcast against ``t``.
    sin2_theta_w : float
        MS-bar ŝ_Z² at M_Z.

    Returns
    -------
    tuple of numpy.ndarray
        (g_L, g_R), dimensionless.
    """
    gen = _generation(generation)
    k = kappa(t, gen, sin2_theta_w)
    rks = RHO_NC * k * sin2_theta_w
    g_r = rks
    g_l = np.where(gen == 0, 1.0 - 0.5 * RHO_NC + rks, -0.5 * RHO_NC + rks)
    return g_l, g_r


def spence_l(x: ArrayLike) -> np.ndarray:
    """BKS Spence function L(x) = ∫₀ˣ ln|1 − t|/t dt = −Li₂(x) for x ≤ 1.

    Uses ``scipy.special.spence(u) = Li₂(1 − u)``.

    Parameters
    ----------
    x : array_like
        Argument, x ≤ 1.

    Returns
    -------
    numpy.ndarray
        L(x).
    """
    from scipy.special import spence  # lazy: scipy.special is needed to build tables only

    return -spence(1.0 - np.asarray(x, dtype=np.float64))


def collinear_factor(t: ArrayLike) -> np.ndarray:
    """BKS A(T) = (E_e/p_e) ln[(E_e + p_e)/m] − 1 (→ β²/3 as β → 0).

    Parameters
    ----------
    t : array_like
        Electron kinetic energy T in MeV, T ≥ 0.

    Returns
    -------
    numpy.ndarray
        A(T), dimensionless. A series in u = p_e/m is used for u < 1e-3.
    """
    tt = np.asarray(t, dtype=np.float64)
    u = np.sqrt(tt * (tt + 2.0 * _M)) / _M
    small = u < 1e-3
    us = np.where(small, 1.0, u)
    full = np.sqrt(1.0 + us * us) * np.arcsinh(us) / us - 1.0
    series = u * u / 3.0 - 2.0 * u**4 / 15.0
    return np.where(small, series, full)


def endpoint_log(energy: ArrayLike, t: ArrayLike) -> np.ndarray:
    """BKS soft-photon endpoint log λ = ln[1 − z − m/(E_e + p_e)], z = T/E.

    The argument vanishes at T = T_max; it is floored at 1e-300 so that λ stays finite
    (≈ −690) at and beyond the endpoint (callers zero the cross section there).

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV.
    t : array_like
        Electron kinetic energy T in MeV, broadcast against ``energy``.

    Returns
    -------
    numpy.ndarray
        λ, dimensionless.
    """
    e = np.asarray(energy, dtype=np.float64)
    tt = np.asarray(t, dtype=np.float64)
    ee = tt + _M
    pe = np.sqrt(tt * (tt + 2.0 * _M))
    arg = 1.0 - tt / e - _M / (ee + pe)
    return np.log(np.maximum(arg, 1e-300))


def _common(energy: ArrayLike, t: ArrayLike):
    e = np.asarray(energy, dtype=np.float64)
    tt = np.asarray(t, dtype=np.float64)
    z = tt / e
    ee = tt + _M
    pe = np.sqrt(tt * (tt + 2.0 * _M))
    beta = pe / ee
    return e, tt, z, beta, collinear_factor(tt), endpoint_log(e, tt)


def f_minus(energy: ArrayLike, t: ArrayLike) -> np.ndarray:
    """BKS QED function f₋(z) multiplying the g_L² (for ν) term.

    f₋ = A[2λ − ln(1 − z) − ½ ln z − 5/12] + ½[L(z) − L(β)] − ½ ln²(1 − z)
         − (11/12 + z/2) ln(1 − z) + z[ln z + ½ ln(2E/m)] − (31/18 + (1/12) ln z) β
         − (11/12) z + z²/24                                     (BKS 1995, Appendix A)

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV.
    t : array_like
        Electron kinetic energy T in MeV, 0 < T < T_max(E), broadcast against ``energy``.

    Returns
    -------
    numpy.ndarray
        f₋, dimensionless.
    """
    e, _, z, beta, a, lam = _common(energy, t)
    return _fm(e, z, beta, a, lam, np.log(z), np.log1p(-z))


def _fm(e, z, beta, a, lam, lz, l1z):
    return (
        a * (2.0 * lam - l1z - 0.5 * lz - 5.0 / 12.0)
        + 0.5 * (spence_l(z) - spence_l(beta))
        - 0.5 * l1z * l1z
        - (11.0 / 12.0 + 0.5 * z) * l1z
        + z * (lz + 0.5 * np.log(2.0 * e / _M))
        - (31.0 / 18.0 + lz / 12.0) * beta
        - 11.0 / 12.0 * z
        + z * z / 24.0
    )


def f_plus_weighted(energy: ArrayLike, t: ArrayLike) -> np.ndarray:
    """(1 − z)² f₊(z), the QED function of the g_R² (for ν) term times its Born shape.

    (1 − z)² f₊ = A[(1 − z)²(2λ − ln(1 − z) − ½ ln z − 2/3) − ½(z² ln z + 1 − z)]
                 − ½(1 − z)²[ln²(1 − z) + β(L(1 − z) − ln z ln(1 − z))]
                 + ln(1 − z)[½ z² ln z + (1 − z)(2z − ½)/3]
                 − ½ z² L(1 − z) − (z(1 − 2z)/3) ln z − z(1 − z)/6
                 − (β/12)[ln z + (1 − z)(115 − 109 z)/6]      (BKS 1995, Appendix A)

    The A-bracket term −½(z² ln z + 1 − z) is the leading-log-consistent form (see module
    docstring). Coding the product keeps it finite as z → 1.

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV.
    t : array_like
        Electron kinetic energy T in MeV, 0 < T < T_max(E).

    Returns
    -------
    numpy.ndarray
        (1 − z)² f₊, dimensionless.
    """
    _, _, z, beta, a, lam = _common(energy, t)
    return _fpw(z, beta, a, lam, np.log(z), np.log1p(-z))


def _fpw(z, beta, a, lam, lz, l1z):
    w = 1.0 - z
    w2 = w * w
    sw = spence_l(w)
    return (
        a * (w2 * (2.0 * lam - l1z - 0.5 * lz - 2.0 / 3.0) - 0.5 * (z * z * lz + w))
        - 0.5 * w2 * (l1z * l1z + beta * (sw - lz * l1z))
        + l1z * (0.5 * z * z * lz + w * (2.0 * z - 0.5) / 3.0)
        - 0.5 * z * z * sw
        - z * (1.0 - 2.0 * z) / 3.0 * lz
        - z * w / 6.0
        - beta / 12.0 * (lz + w * (115.0 - 109.0 * z) / 6.0)
    )


def f_plus(energy: ArrayLike, t: ArrayLike) -> np.ndarray:
    """BKS QED function f₊(z) = [(1 − z)² f₊] / (1 − z)²; see :func:`f_plus_weighted`.

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV.
    t : array_like
        Electron kinetic energy T in MeV, 0 < T < T_max(E).

    Returns
    -------
    numpy.ndarray
        f₊, dimensionless.
    """
    z = np.asarray(t, dtype=np.float64) / np.asarray(energy, dtype=np.float64)
    return f_plus_weighted(energy, t) / (1.0 - z) ** 2


def f_plus_minus(energy: ArrayLike, t: ArrayLike) -> np.ndarray:
    """BKS QED function of the interference term, f₊₋ = 2 A λ (BKS 1995, Appendix A).

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV.
    t : array_like
        Electron kinetic energy T in MeV, 0 < T < T_max(E).

    Returns
    -------
    numpy.ndarray
        f₊₋, dimensionless.
    """
    return 2.0 * collinear_factor(t) * endpoint_log(energy, t)


def qed_factors(energy: ArrayLike, t: ArrayLike) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The three multiplicative QED factors of the helicity structures.

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV.
    t : array_like
        Electron kinetic energy T in MeV, 0 < T < T_max(E).

    Returns
    -------
    tuple of numpy.ndarray
        (1 + (α/π) f₋, (1 − z)²[1 + (α/π) f₊], 1 + (α/π) f₊₋), each dimensionless; the
        second already includes the Born shape (1 − z)².
    """
    e, _, z, beta, a, lam = _common(energy, t)
    lz = np.log(z)
    l1z = np.log1p(-z)
    w2 = (1.0 - z) ** 2
    return (
        1.0 + _AOP * _fm(e, z, beta, a, lam, lz, l1z),
        w2 + _AOP * _fpw(z, beta, a, lam, lz, l1z),
        1.0 + _AOP * 2.0 * a * lam,
    )


__all__ += ["qed_factors", "TAU_SHIFT"]
