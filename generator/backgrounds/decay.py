"""Decay-data records of the background isotopes and the rate bookkeeping.

Rates are given per isotope in one of three units (:data:`RATE_UNITS`):

* ``Bq/kg``: decays per second per kilogram of target;
* ``cpd/100t``: decays per day per 100 tonnes of target;
* ``g/g``: a mass contamination of the chain parent (²³⁸U for ²¹⁴Bi, ²³²Th for ²⁰⁸Tl) in
  secular equilibrium; the activity is the parent's specific activity
  a = ln 2 · N_A / (T½ · M) times the branching of the chain to the isotope.

Expected decays for the configured exposure: N = R [Bq/kg] × M [kg] × live time [s] × the
visible fraction of the isotope (the fraction of decays that emit anything detectable, 1 except
for ¹¹C whose 0.24 % electron-capture branch emits only a neutrino and keV X-rays).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..constants import AVOGADRO as _N_A  # Avogadro constant (exact, SI 2019; scipy.constants)
from ..constants import SECONDS_PER_DAY
from .betashape import Branch

__all__ = ["Isotope", "ChainParent", "RATE_UNITS", "CHAIN_PARENTS", "specific_activity",
           "bq_per_kg", "PDG_ELECTRON", "PDG_POSITRON", "PDG_ALPHA", "PDG_GAMMA",
           "SECONDS_PER_YEAR"]

PDG_ELECTRON = 11
PDG_POSITRON = -11
PDG_ALPHA = 1000020040
PDG_GAMMA = 22

#: Julian year in seconds (the year of half-life tables, IUPAC/IAU convention).
SECONDS_PER_YEAR: float = 365.25 * SECONDS_PER_DAY

RATE_UNITS = ("Bq/kg", "cpd/100t", "g/g")


@dataclass(frozen=True)
class ChainParent:
    """A long-lived chain parent: half-life (s) and molar mass (g/mol), with sources."""

    name: str
    half_life_s: float
    molar_mass_g: float
    source: str


#: ²³⁸U: T½ = 4.468 × 10⁹ y (ENSDF, Browne & Tuli, Nucl. Data Sheets; from memory),
#: M = 238.050788 g/mol (AME2020, Wang et al., Chinese Phys. C 45, 030003 (2021); from memory).
#: ²³²Th: T½ = 1.40 × 10¹⁰ y (ENSDF; from memory), M = 232.038055 g/mol (AME2020; from memory).
CHAIN_PARENTS = {
    "238U": ChainParent("238U", 4.468e9 * SECONDS_PER_YEAR, 238.050788,
                        "T1/2 ENSDF, mass AME2020 (from memory)"),
    "232Th": ChainParent("232Th", 1.40e10 * SECONDS_PER_YEAR, 232.038055,
                         "T1/2 ENSDF, mass AME2020 (from memory)"),
}


def specific_activity(half_life_s: float, molar_mass_g: float) -> float:
    """Specific activity a = ln 2 · N_A / (T½ · M) in Bq per gram.

    Parameters
    ----------
    half_life_s : float
        Half-life in s.
    molar_mass_g : float
        Molar mass in g/mol.
    """
    return math.log(2.0) * _N_A / (half_life_s * molar_mass_g)


@dataclass(frozen=True)
class Isotope:
    """Evaluated decay data of one background isotope.

    Attributes
    ----------
    name, code : str, int
        Name (e.g. ``"14C"``) and origin code (≥ 100).
    family : str
        Module that defines it (intrinsic, chain, cosmogenic, alpha).
    z_daughter, a : int
        Daughter charge and mass number (Fermi function).
    half_life_s : float
        Half-life in s.
    particle : int
        PDG code of the primary (11 e⁻, -11 e⁺, 1000020040 α).
    branches : tuple of Branch
        Decay branches (intensities of the evaluation; renormalised when sampled).
    source : str
        Citation of the decay data.
    chain : tuple of (str, float), optional
        (chain parent, branching of the chain to this isotope) for ``g/g`` rates.
    visible_fraction : float
        Fraction of decays that are generated (see the module docstring).
    branch_particles : tuple of int
        Per-branch PDG code override (e.g. 22 for a γ-only electron-capture branch); empty
        means ``particle`` for every branch.
    """

    name: str
    code: int
    family: str
    z_daughter: int
    a: int
    half_life_s: float
    particle: int
    branches: tuple[Branch, ...]
    source: str
    chain: tuple[str, float] | None = None
    visible_fraction: float = 1.0
    branch_particles: tuple[int, ...] = field(default=())

    @property
    def positron(self) -> bool:
        """True for a β⁺ emitter."""
        return self.particle == PDG_POSITRON


def bq_per_kg(iso: Isotope, rate: float, unit: str) -> float:
    """Convert a configured rate to decays per second per kg (Bq/kg).

    Parameters
    ----------
    iso : Isotope
        The isotope (its chain parent is used for ``g/g``).
    rate : float
        Rate value (≥ 0).
    unit : str
        One of :data:`RATE_UNITS`.
    """
    if unit == "Bq/kg":
        return rate
    if unit == "cpd/100t":
        return rate / SECONDS_PER_DAY / 1.0e5
    if unit == "g/g":
        if iso.chain is None:
            raise ValueError(f"{iso.name}: g/g needs a chain isotope")
        parent = CHAIN_PARENTS[iso.chain[0]]
        # rate g/g × 1000 g/kg × Bq/g of the parent × branching to the isotope
        return rate * 1000.0 * specific_activity(parent.half_life_s, parent.molar_mass_g) \
            * iso.chain[1]
    raise ValueError(f"unknown rate unit {unit!r}")
