"""β spectra with the relativistic Fermi function: β⁺ neutrino spectra, β± electron spectra.

The electron (positron) side, :func:`electron_spectrum`, serves the radioactive backgrounds
(:mod:`generator.backgrounds`); the neutrino side below serves the solar β⁺ sources.

Shape (Fermi theory, allowed approximation, nuclear recoil neglected; e.g. Bahcall,
*Neutrino Astrophysics*, CUP (1989), ch. 6; Hayen et al., Rev. Mod. Phys. 90, 015008 (2018)):

    dN/dE_ν ∝ E_ν² · p W · F₀(Z, W),   0 < E_ν < Q_β,

with W = (Q_β − E_ν + m_e)/m_e the total positron energy and p = √(W² − 1) its momentum (units
of m_e, c = 1), Z the charge of the daughter nucleus, and F₀ the relativistic point-charge
Fermi function evaluated at the nuclear radius R (Fermi, Z. Phys. 88, 161 (1934)):

    F₀(Z, W) = 2(1 + γ) (2pR)^(2γ−2) e^(πη) |Γ(γ + iη)|² / Γ(2γ + 1)²,
    γ = √(1 − (αZ)²),  η = ∓ αZ W/p  (upper sign for β⁺).

R = 1.2 A^(1/3) fm (a common convention; Hayen et al. 2018 discuss better prescriptions — the
mean neutrino energy changes by < 1e-4 relative between R = 0 and this R for Z ≤ 8).

Endpoints follow from atomic mass excesses Δ of the Atomic Mass Evaluation AME2020
(Wang et al., Chinese Phys. C 45, 030003 (2021)); the Δ values below are from memory, not
re-read from the tables. For β⁺ decay with atomic masses, Q_β = Δ(parent) − Δ(daughter) − 2m_e.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from generator.constants import ALPHA, ELECTRON_MASS, HBARC_MEV_FM
from generator.errors import ConfigError

__all__ = [
    "MASS_EXCESS_KEV",
    "LI7_EXCITED_MEV",
    "nuclear_radius_fm",
    "fermi_function",
    "allowed_shape",
    "electron_spectrum",
    "q_beta_plus",
    "q_electron_capture",
]

#: Atomic mass excesses Δ in keV, AME2020 (Wang et al., Chinese Phys. C 45, 030003 (2021)),
#: from memory (not re-read from the tables).
MASS_EXCESS_KEV: dict[str, float] = {
    "1H": 7288.971,
    "2H": 13135.722,
    "3He": 14931.218,
    "4He": 2424.916,
    "7Li": 14907.105,
    "7Be": 15769.0,
    "8Be": 4941.67,
    "8B": 22921.6,
    "13C": 3125.009,
    "13N": 5345.48,
    "15N": 101.439,
    "15O": 2855.6,
    "17O": -808.76,
    "17F": 1951.70,
}

#: Excitation energy of the first excited state of ⁷Li in MeV (Tilley et al., Nucl. Phys. A
#: 708, 3 (2002)), from memory.
LI7_EXCITED_MEV: float = 0.4776

#: Reduced Compton wavelength of the electron ħ/(m_e c) in fm.
_ELECTRON_COMPTON_FM: float = HBARC_MEV_FM / ELECTRON_MASS


def nuclear_radius_fm(mass_number: int) -> float:
    """Nuclear radius R = 1.2 A^(1/3) fm used inside the Fermi function (common convention).

    Parameters
    ----------
    mass_number : int
        Mass number A of the daughter nucleus (≥ 1).

    Returns
    -------
    float
        Radius in fm.
    """
    if mass_number < 1:
        raise ConfigError(f"mass number must be >= 1, got {mass_number!r}")
    return 1.2 * float(mass_number) ** (1.0 / 3.0)


def fermi_function(z: int, w: np.ndarray, radius_fm: float, positron: bool = True,
                   k: int = 1) -> np.ndarray:
    """Relativistic Fermi function F₀(Z, W) at the nuclear radius (Fermi 1934), or F_{k−1}.

    F_{k−1} generalises it to the lepton partial wave k (forbidden unique shapes).

    F₀: formula as in the module docstring (see also Hayen et al., RMP 90, 015008 (2018), eq.
    for F₀). For k ≥ 2 (Konopinski, *The Theory of Beta Radioactivity* (1966); Behrens &
    Bühring (1982)):

        F_{k−1} = [k (2k−1)!!]² 4^(k−1) (2pR)^(2(γ_k−k)) e^(πη) |Γ(γ_k + iη)|² / Γ(2γ_k + 1)²
                  × 2(k + γ_k)/k,   γ_k = √(k² − (αZ)²),

    which reduces to F₀ for k = 1 and to 1 for Z → 0; λ_k = F_{k−1}/F₀ are the Coulomb
    functions of the unique shape factors. Vectorised over ``w``.

    Parameters
    ----------
    z : int
        Charge of the daughter nucleus (Z ≥ 0; Z = 0 gives F₀ = 1).
    w : numpy.ndarray
        Total lepton energy in units of m_e c², any shape, values > 1.
    radius_fm : float
        Nuclear radius in fm.
    positron : bool, optional
        True for β⁺ (repulsive Coulomb field, η < 0), False for β⁻.
    k : int, optional
        Lepton partial wave (1 gives F₀).

    Returns
    -------
    numpy.ndarray
        F_{k−1}, dimensionless, same shape as ``w``; 0 where ``w <= 1``.
    """
    from scipy.special import gammaln, loggamma  # lazy: keeps package import fast

    w = np.asarray(w, dtype=np.float64)
    if z == 0:
        return np.where(w > 1.0, 1.0, 0.0)
    az = ALPHA * z
    gam = np.sqrt(1.0 - az * az)
    valid = w > 1.0
    wv = np.where(valid, w, 2.0)
    p = np.sqrt(wv * wv - 1.0)
    eta = (-az if positron else az) * wv / p
    r = radius_fm / _ELECTRON_COMPTON_FM
    if k != 1:
        gk = np.sqrt(k * k - az * az)
        dfact = float(np.prod(np.arange(2 * k - 1, 0, -2)))
        log_f = (
            2.0 * np.log(k * dfact) + (k - 1) * np.log(4.0)
            + 2.0 * (gk - k) * np.log(2.0 * p * r)
            + np.pi * eta
            + 2.0 * np.real(loggamma(gk + 1j * eta))
            - 2.0 * gammaln(2.0 * gk + 1.0)
            + np.log(2.0 * (k + gk) / k)
        )
        return np.where(valid, np.exp(log_f), 0.0)
    log_f = (
        np.log(2.0 * (1.0 + gam))
        + (2.0 * gam - 2.0) * np.log(2.0 * p * r)
        + np.pi * eta
        + 2.0 * np.real(loggamma(gam + 1j * eta))
        - 2.0 * gammaln(2.0 * gam + 1.0)
    )
    return np.where(valid, np.exp(log_f), 0.0)


def allowed_shape(
    e_nu: np.ndarray, q_beta: float, z_daughter: int, a_daughter: int
) -> np.ndarray:
    """Unnormalised allowed β⁺ neutrino spectrum E_ν² · p W · F₀(Z, W).

    Parameters
    ----------
    e_nu : numpy.ndarray
        Neutrino energies in MeV, any shape.
    q_beta : float
        Kinetic energy shared by positron and neutrino (endpoint) in MeV, > 0.
    z_daughter : int
        Charge of the daughter nucleus.
    a_daughter : int
        Mass number (sets the radius in F₀).

    Returns
    -------
    numpy.ndarray
        Spectrum in arbitrary units (MeV² scale), same shape as ``e_nu``; 0 outside
        ``(0, q_beta)``.
    """
    if not q_beta > 0.0:
        raise ConfigError(f"endpoint 'q_beta' must be > 0 MeV, got {q_beta!r}")
    e = np.asarray(e_nu, dtype=np.float64)
    inside = (e > 0.0) & (e < q_beta)
    w = np.where(inside, (q_beta - e + ELECTRON_MASS) / ELECTRON_MASS, 2.0)
    p = np.sqrt(w * w - 1.0)
    f = fermi_function(z_daughter, w, nuclear_radius_fm(a_daughter), positron=True)
    return np.where(inside, e * e * p * w * f, 0.0)


def electron_spectrum(
    t: np.ndarray,
    endpoint: float,
    z_daughter: int,
    a_daughter: int,
    positron: bool = False,
    shape_factor: Callable[[np.ndarray, float], np.ndarray] | None = None,
) -> np.ndarray:
    """Unnormalised β⁻ or β⁺ kinetic-energy spectrum p W (W₀ − W)² F₀(Z, W) C(W).

    The same Fermi-theory shape as :func:`allowed_shape`, written for the charged lepton
    (Hayen et al., RMP 90, 015008 (2018), eq. for dN/dW), with an optional shape factor C(W)
    for forbidden transitions (C = 1: allowed). The sign of η in F₀ follows ``positron``
    (attractive Coulomb field for β⁻, repulsive for β⁺); Z is the daughter's charge.

    Parameters
    ----------
    t : numpy.ndarray
        Electron (positron) kinetic energies in MeV, any shape.
    endpoint : float
        Branch endpoint kinetic energy in MeV, > 0.
    z_daughter, a_daughter : int
        Charge and mass number of the daughter nucleus.
    positron : bool, optional
        True for β⁺.
    shape_factor : callable, optional
        ``C(W, W0)`` with W, W0 in units of m_e c² (dimensionless, ≥ 0).

    Returns
    -------
    numpy.ndarray
        Spectrum in arbitrary units per MeV, same shape as ``t``; 0 outside ``(0, endpoint)``.
    """
    if not endpoint > 0.0:
        raise ConfigError(f"endpoint must be > 0 MeV, got {endpoint!r}")
    t = np.asarray(t, dtype=np.float64)
    inside = (t > 0.0) & (t < endpoint)
    w = np.where(inside, 1.0 + t / ELECTRON_MASS, 2.0)
    w0 = 1.0 + endpoint / ELECTRON_MASS
    p = np.sqrt(w * w - 1.0)
    f = fermi_function(z_daughter, w, nuclear_radius_fm(a_daughter), positron=positron)
    c = 1.0 if shape_factor is None else shape_factor(w, w0)
    return np.where(inside, p * w * (w0 - w) ** 2 * f * c, 0.0)


def q_beta_plus(parent: str, daughter: str) -> float:
    """β⁺ endpoint Q_β = Δ(parent) − Δ(daughter) − 2 m_e in MeV (atomic mass excesses).

    Parameters
    ----------
    parent, daughter : str
        Keys of :data:`MASS_EXCESS_KEV`.

    Returns
    -------
    float
        Endpoint in MeV.
    """
    return (MASS_EXCESS_KEV[parent] - MASS_EXCESS_KEV[daughter]) * 1e-3 - 2.0 * ELECTRON_MASS


def q_electron_capture(parent: str, daughter: str) -> float:
    """Electron-capture energy Q_EC = Δ(parent) − Δ(daughter) in MeV (atomic mass excesses).

    Parameters
    ----------
    parent, daughter : str
        Keys of :data:`MASS_EXCESS_KEV`.

    Returns
    -------
    float
        Q_EC in MeV (the neutrino line energy when atomic binding and recoil are neglected).
    """
    return (MASS_EXCESS_KEV[parent] - MASS_EXCESS_KEV[daughter]) * 1e-3
