"""Physical constants, each with its source and edition.

Internal units: MeV for energies, mm for lengths inside events, cm for cross sections
(cm²) and fluxes (cm⁻² s⁻¹), seconds for exposure times.

CODATA values come from :mod:`scipy.constants` (CODATA 2022 in scipy ≥ 1.15; the edition is
whatever the installed scipy ships and is recorded in the event files through
:data:`CODATA_EDITION_NOTE`). Quantities CODATA does not provide are taken from the PDG
Review of Particle Physics or the IAU, cited beside each value.

Importing :mod:`scipy.constants` costs ≈ 0.1–0.2 s (it pulls in scipy's array-API layer), so
the values read from it are kept in the table cache (:mod:`generator.cache`), keyed by the
scipy version and the constant names: scipy.constants stays the only source (a new scipy
re-reads it), and a cached entry is checked against plausibility bands before use.
"""

from __future__ import annotations

import math

import numpy as np
import scipy as _scipy

from .cache import CacheRejected, cached_arrays

__all__ = [
    "ALPHA",
    "ALPHA_PARTICLE_MASS",
    "NEUTRON_MASS",
    "PROTON_MASS",
    "AU_CM",
    "AVOGADRO",
    "CODATA_EDITION_NOTE",
    "ELECTRON_MASS",
    "FERMI_CONSTANT",
    "HBARC_MEV_CM",
    "HBARC_MEV_FM",
    "HBARC2_MEV2_CM2",
    "R_SUN_KM",
    "SIN2_THETA_W_MZ",
    "SECONDS_PER_DAY",
    "SECONDS_PER_JULIAN_YEAR",
    "CLASSICAL_ELECTRON_RADIUS_CM",
    "MATTER_POTENTIAL_EV_PER_NA",
    "MUON_MASS",
    "TAU_MASS",
]

#: CODATA entries of ``scipy.constants.physical_constants`` (then two module attributes) used
#: by the package, with plausibility bands for cached values: (name, rough value, relative
#: band). The rough values are from memory (CODATA 2018/2022 agree with them to < 1e-8); they
#: only guard the cache against edited entries and are never used as constants.
_CODATA: tuple[tuple[str, float, float], ...] = (
    ("Fermi coupling constant", 1.1663787e-5, 1e-5),
    ("electron mass energy equivalent in MeV", 0.51099895, 1e-6),
    ("muon mass energy equivalent in MeV", 105.6583755, 1e-6),
    ("fine-structure constant", 7.2973525693e-3, 1e-6),
    ("reduced Planck constant times c in MeV fm", 197.3269804, 1e-6),
    ("classical electron radius", 2.8179403262e-15, 1e-6),
    ("alpha particle mass energy equivalent in MeV", 3727.3794066, 1e-6),
    ("proton mass energy equivalent in MeV", 938.27208816, 1e-6),
    ("neutron mass energy equivalent in MeV", 939.56542052, 1e-6),
    ("N_A", 6.02214076e23, 1e-9),
    ("au", 1.495978707e11, 1e-9),
)


def _read_scipy_constants() -> dict[str, np.ndarray]:
    import scipy.constants as sc

    return {"values": np.array([getattr(sc, n) if n in ("N_A", "au")
                                else sc.physical_constants[n][0] for n, _, _ in _CODATA],
                               dtype=np.float64)}


def _check_plausible(arrays: dict[str, np.ndarray]) -> None:
    v = arrays.get("values")
    if v is None or set(arrays) != {"values"} or v.shape != (len(_CODATA),) \
            or v.dtype != np.float64:
        raise CacheRejected("constants table has the wrong layout")
    for x, (name, rough, band) in zip(v.tolist(), _CODATA, strict=True):
        if not abs(x / rough - 1.0) <= band:
            raise CacheRejected(f"{name} = {x!r} is outside its plausibility band")


_values = cached_arrays("constants", {"table": "codata-v1", "scipy": _scipy.__version__,
                                      "names": [n for n, _, _ in _CODATA]},
                        _read_scipy_constants, _check_plausible)["values"].tolist()
_pc = {n: (x,) for (n, _, _), x in zip(_CODATA, _values, strict=True)}

#: Fermi coupling constant G_F/(ħc)³ in MeV⁻² (CODATA via scipy.constants, GeV⁻² → MeV⁻²).
FERMI_CONSTANT: float = _pc["Fermi coupling constant"][0] * 1e-6

#: Electron mass m_e c² in MeV (CODATA via scipy.constants).
ELECTRON_MASS: float = _pc["electron mass energy equivalent in MeV"][0]

#: α-particle mass m_α c² in MeV (CODATA via scipy.constants).
ALPHA_PARTICLE_MASS: float = _pc["alpha particle mass energy equivalent in MeV"][0]

#: Proton and neutron masses m_p c², m_n c² in MeV (CODATA via scipy.constants).
PROTON_MASS: float = _pc["proton mass energy equivalent in MeV"][0]
NEUTRON_MASS: float = _pc["neutron mass energy equivalent in MeV"][0]

#: Muon mass m_μ c² in MeV (CODATA via scipy.constants).
MUON_MASS: float = _pc["muon mass energy equivalent in MeV"][0]

#: τ-lepton mass m_τ c² = 1776.86 ± 0.12 MeV (PDG, Review of Particle Physics 2022,
#: R. L. Workman et al., Prog. Theor. Exp. Phys. 2022, 083C01, τ summary table) — from memory,
#: not re-read from the table; scipy.constants (CODATA) does not provide m_τ. Enters only
#: through ln(m_τ/m_μ) in the ν_τ charge-radius term (generator.radiative), where ±0.12 MeV
#: changes κ_τ by 2e-7.
TAU_MASS: float = 1776.86

#: Fine-structure constant α (CODATA via scipy.constants).
ALPHA: float = _pc["fine-structure constant"][0]

#: ħc in MeV fm (CODATA via scipy.constants; exact in the 2019 SI).
HBARC_MEV_FM: float = _pc["reduced Planck constant times c in MeV fm"][0]

#: ħc in MeV cm.
HBARC_MEV_CM: float = HBARC_MEV_FM * 1e-13

#: (ħc)² in MeV² cm², converts MeV⁻² to cm².
HBARC2_MEV2_CM2: float = HBARC_MEV_CM**2

#: Avogadro constant in mol⁻¹ (CODATA via scipy.constants; exact in the 2019 SI).
AVOGADRO: float = _pc["N_A"][0]

#: Classical electron radius in cm (CODATA via scipy.constants).
CLASSICAL_ELECTRON_RADIUS_CM: float = _pc["classical electron radius"][0] * 100.0

#: Astronomical unit in cm (IAU 2012 Resolution B2, exact; scipy.constants.au).
AU_CM: float = _pc["au"][0] * 100.0

#: Nominal solar radius in km (IAU 2015 Resolution B3: R⊙ = 6.957 × 10⁸ m).
R_SUN_KM: float = 6.957e5

#: MS-bar weak mixing angle sin²θ̂_W(M_Z) = 0.23129 (PDG 2024, Review of Particle Physics,
#: "Electroweak model and constraints on new physics", Erler & Freitas) — from memory,
#: not re-read from the table. Used in the tree-level couplings; see generator.xsec.
SIN2_THETA_W_MZ: float = 0.23129

#: Seconds per day.
SECONDS_PER_DAY: float = 86400.0

#: Seconds per Julian year (365.25 d, IAU).
SECONDS_PER_JULIAN_YEAR: float = 365.25 * 86400.0

#: √2 G_F N_A in eV per (N_A cm⁻³) of electron density: V_CC = √2 G_F n_e
#: (Wolfenstein, Phys. Rev. D 17, 2369 (1978)); ≈ 7.63 × 10⁻¹⁴ eV.
MATTER_POTENTIAL_EV_PER_NA: float = (
    math.sqrt(2.0) * FERMI_CONSTANT * AVOGADRO * HBARC_MEV_CM**3 * 1e6
)

#: Human-readable note of where the CODATA values came from (stored in event files).
CODATA_EDITION_NOTE: str = f"scipy.constants of scipy {_scipy.__version__}"
