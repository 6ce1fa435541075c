"""Target media: composition, density, electron counts and optical/scintillation properties.

The number of target electrons per unit mass follows from the composition by mass,
n_e / m = N_A Σ_j w_j Z_j / A_j, with standard atomic weights A_j from the IUPAC Commission on
Isotopic Abundances and Atomic Weights, "Standard atomic weights of the elements 2021",
Prohaska et al., Pure Appl. Chem. 94, 573 (2022) (abridged/conventional values; from memory).

A medium is a small frozen record: density, a composition (component formulas with mass
fractions; a component may be a single element, so element mass fractions work too) and the
properties the detector response needs (refractive index, scintillation light yield, Birks
constants, α quenching factor, the fraction of Cherenkov light that stays directional). A new
built-in medium is one entry in :data:`MEDIA`; users add media in ``[media.<name>]`` tables
(see :mod:`generator.response.config`). Every property default is documented with its source in
:data:`MEDIA` and the README.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace

from .constants import AVOGADRO
from .errors import ConfigError

__all__ = ["Medium", "MEDIA", "get_medium", "ATOMIC_NUMBER", "ATOMIC_WEIGHT",
           "MEAN_EXCITATION_EV", "element_mass_fractions", "formula_z_a", "make_medium",
           "MASS_FRACTION_TOLERANCE", "target_electrons", "VARIANTS", "OPTICAL_KEYS",
           "with_overrides"]

#: Atomic numbers of the elements a composition may use.
ATOMIC_NUMBER: dict[str, int] = {
    "H": 1, "B": 5, "C": 6, "N": 7, "O": 8, "F": 9, "Na": 11, "Si": 14, "P": 15, "S": 16,
    "Cl": 17, "K": 19, "Ca": 20, "Gd": 64,
}

#: Standard atomic weights in g/mol: IUPAC 2021 abridged/conventional values (Prohaska et al.,
#: Pure Appl. Chem. 94, 573 (2022); from memory).
ATOMIC_WEIGHT: dict[str, float] = {
    "H": 1.008, "B": 10.81, "C": 12.011, "N": 14.007, "O": 15.999, "F": 18.998, "Na": 22.990,
    "Si": 28.085, "P": 30.974, "S": 32.06, "Cl": 35.45, "K": 39.098, "Ca": 40.078, "Gd": 157.25,
}

#: Mean excitation energies (eV) of elements bound in condensed compounds, for Bragg
#: additivity of ln I: H 19.2, C 81, N 82, O 106, F 112, Cl 180 eV are the ICRU Report 37
#: (1984) recommendations for compound constituents; the others are the elemental I values of
#: ICRU 37 (from memory).
MEAN_EXCITATION_EV: dict[str, float] = {
    "H": 19.2, "B": 76.0, "C": 81.0, "N": 82.0, "O": 106.0, "F": 112.0, "Na": 149.0,
    "Si": 173.0, "P": 173.0, "S": 180.0, "Cl": 180.0, "K": 190.0, "Ca": 191.0, "Gd": 591.0,
}

#: Tolerance on the sum of mass fractions of a composition.
MASS_FRACTION_TOLERANCE = 1e-6


def formula_z_a(formula: str, path: str = "composition") -> tuple[int, float]:
    """Electrons and molar mass (g/mol) of a formula like ``C9H12`` (ConfigError if invalid)."""
    parts = re.findall(r"([A-Z][a-z]?)(\d*)", formula)
    if not parts or "".join(e + c for e, c in parts) != formula:
        raise ConfigError(f"{path}: {formula!r} is not a chemical formula like 'C9H12'")
    z, a = 0, 0.0
    for element, count in parts:
        if element not in ATOMIC_NUMBER:
            raise ConfigError(f"{path}: unknown element {element!r} in {formula!r}; "
                              f"allowed: {sorted(ATOMIC_NUMBER)}")
        k = int(count) if count else 1
        z += ATOMIC_NUMBER[element] * k
        a += ATOMIC_WEIGHT[element] * k
    return z, a


def element_mass_fractions(composition: tuple[tuple[str, float], ...]
                           ) -> dict[str, float]:
    """Element mass fractions of a composition of (formula, mass fraction) components."""
    out: dict[str, float] = {}
    for formula, w in composition:
        _, a_mol = formula_z_a(formula)
        for element, count in re.findall(r"([A-Z][a-z]?)(\d*)", formula):
            k = int(count) if count else 1
            out[element] = out.get(element, 0.0) + w * k * ATOMIC_WEIGHT[element] / a_mol
    return out


@dataclass(frozen=True)
class Medium:
    """A homogeneous target liquid.

    Parameters
    ----------
    name : str
        Name used in the configuration (``detector.medium``).
    density_g_cm3 : float
        Mass density in g/cm³.
    composition : tuple of (str, float)
        Component formulas with their mass fractions (sum 1).
    description : str
        One-line description with the source of the density.
    variant : {"water", "scintillator", "hybrid"}
        Response model used for this medium when ``response.variant = "auto"``.
    refractive_index : float
        Refractive index (single value for the Cherenkov threshold and yield).
    light_yield_per_mev : float
        Scintillation photons per MeV of electron-equivalent (Birks-quenched) energy.
    birks_kb_cm_per_mev : float
        Birks constant kB for electrons, cm/MeV.
    alpha_quenching : float
        Ratio of α kinetic energy to electron-equivalent visible energy (α quenching factor).
    cherenkov_fraction : float
        Fraction of the Frank–Tamm Cherenkov photons (300–600 nm) that reach the photosensors
        as directional light (the rest is absorbed; in scintillators partly re-emitted, which
        the scintillation yield then includes).
    """

    name: str
    density_g_cm3: float
    composition: tuple[tuple[str, float], ...]
    description: str
    variant: str = "water"
    refractive_index: float = 1.333
    light_yield_per_mev: float = 0.0
    birks_kb_cm_per_mev: float = 0.0
    alpha_quenching: float = 1.0
    cherenkov_fraction: float = 1.0

    @property
    def z_over_a(self) -> float:
        """Mean Z/A of the medium (mol/g)."""
        return sum(w * z / a for z, a, w in
                   ((*formula_z_a(f), w) for f, w in self.composition))

    @property
    def electrons_per_gram(self) -> float:
        """Number of electrons per gram of medium (g⁻¹)."""
        return self.z_over_a * AVOGADRO

    @property
    def electrons_per_tonne(self) -> float:
        """Number of electrons per tonne (10⁶ g) of medium."""
        return self.electrons_per_gram * 1e6

    @property
    def mean_excitation_ev(self) -> float:
        """Mean excitation energy I (eV) by Bragg additivity of ln I weighted by w_j Z_j/A_j.

        Source: ICRU Report 37 (1984), eq. for compounds, ln I = Σ w_j (Z_j/A_j) ln I_j / (Z/A).
        """
        num = den = 0.0
        for element, w in element_mass_fractions(self.composition).items():
            za = w * ATOMIC_NUMBER[element] / ATOMIC_WEIGHT[element]
            num += za * math.log(MEAN_EXCITATION_EV[element])
            den += za
        return math.exp(num / den)

    def electrons_in(self, volume_cm3: float) -> float:
        """Number of target electrons in a volume (cm³) of this medium."""
        return self.electrons_per_gram * self.density_g_cm3 * volume_cm3


#: Properties a ``[media.<name>]`` table or ``[response.medium]`` override may set.
OPTICAL_KEYS = ("refractive_index", "light_yield_per_mev", "birks_kb_cm_per_mev",
                "alpha_quenching", "cherenkov_fraction")

#: Built-in media. Sources of the defaults:
#:
#: * densities: water 0.9982 g/cm³ at 20 °C (CRC Handbook of Chemistry and Physics, from
#:   memory); LAB 0.86 and pseudocumene 0.876 g/cm³ (supplier data sheets, from memory); the
#:   WbLS density is the mass-weighted harmonic mean of its components.
#: * LAB is represented by its C18H30 (dodecylbenzene) homologue; real LAB mixes C16–C19
#:   homologues, which changes electrons per gram by ≈ ±0.1 % (common practice, no source).
#: * refractive indices: water 1.333 (sodium D line; CRC Handbook, from memory), LAB 1.48 and
#:   pseudocumene 1.505 (data sheets, from memory).
#: * scintillation yields: LAB + 2–3 g/L PPO ≈ 1.0 × 10⁴ photons/MeV and pseudocumene + 1.5 g/L
#:   PPO ≈ 1.2 × 10⁴ photons/MeV (from memory); the 5 % WbLS demo value 500 photons/MeV is
#:   invented for demos (a 1 % WbLS produces O(100–250) photons/MeV, arXiv:2312.09293, from
#:   memory).
#: * Birks constants for electrons: LAB 0.0070 cm/MeV (LAB experiments report 0.0065–0.0098,
#:   from memory), pseudocumene 0.0110 cm/MeV (Bellini et al., PRD 89, 112007 (2014), from memory).
#: * α quenching factor (α energy / electron-equivalent energy at 5.3 MeV): 12.5 for
#:   pseudocumene (²¹⁰Po at ≈ 0.42 MeV_ee, Bellini et al., PRD 89, 112007 (2014), from memory), 11.0
#:   for LAB (LAB scintillators report ≈ 10–14, from memory). For water no α light.
#: * directional Cherenkov fraction: 1 in water; 0.5 in LAB/PC and 0.8 in the WbLS demo
#:   (invented, common practice no source: most UV Cherenkov light is absorbed by the fluor).
MEDIA: dict[str, Medium] = {
    "water": Medium("water", 0.9982, (("H2O", 1.0),), "pure water at 20 °C",
                    variant="water", refractive_index=1.333),
    "lab": Medium("lab", 0.86, (("C18H30", 1.0),),
                  "linear alkylbenzene scintillator (C18H30 proxy) with PPO",
                  variant="scintillator", refractive_index=1.48, light_yield_per_mev=1.0e4,
                  birks_kb_cm_per_mev=0.0070, alpha_quenching=11.0, cherenkov_fraction=0.5),
    "pc": Medium("pc", 0.876, (("C9H12", 1.0),),
                 "pseudocumene (1,2,4-trimethylbenzene) scintillator with PPO",
                 variant="scintillator", refractive_index=1.505, light_yield_per_mev=1.2e4,
                 birks_kb_cm_per_mev=0.0110, alpha_quenching=12.5, cherenkov_fraction=0.5),
    "wbls5": Medium("wbls5", 1.0 / (0.95 / 0.9982 + 0.05 / 0.86),
                    (("H2O", 0.95), ("C18H30", 0.05)),
                    "water-based scintillator, 5 % LAB by mass (demo mixture)",
                    variant="hybrid", refractive_index=1.34, light_yield_per_mev=500.0,
                    birks_kb_cm_per_mev=0.0070, alpha_quenching=11.0, cherenkov_fraction=0.8),
}

VARIANTS = ("water", "scintillator", "hybrid")


def make_medium(name: str, density_g_cm3: float, composition: tuple[tuple[str, float], ...],
                description: str, path: str, **properties: float | str) -> Medium:
    """Build a validated medium (ConfigError naming ``path`` on bad input).

    Checks: every formula parses with known elements, mass fractions are in [0, 1] and sum to
    1 within :data:`MASS_FRACTION_TOLERANCE`, density and light yield are positive/non-negative.
    """
    if not composition:
        raise ConfigError(f"{path}.composition: must list at least one component")
    for i, (formula, w) in enumerate(composition):
        formula_z_a(formula, f"{path}.composition[{i}]")
        if not 0.0 <= w <= 1.0:
            raise ConfigError(f"{path}.composition[{i}]: mass fraction {w} outside [0, 1]")
    total = sum(w for _, w in composition)
    if abs(total - 1.0) > MASS_FRACTION_TOLERANCE:
        raise ConfigError(f"{path}.composition: mass fractions sum to {total!r}, not 1 within "
                          f"{MASS_FRACTION_TOLERANCE:g}")
    if not density_g_cm3 > 0.0:
        raise ConfigError(f"{path}.density_g_cm3: {density_g_cm3} must be > 0")
    return Medium(name, density_g_cm3, tuple(composition), description, **properties)


def with_overrides(medium: Medium, overrides: dict[str, float]) -> Medium:
    """A copy of ``medium`` with optical/scintillation properties replaced."""
    return replace(medium, **overrides) if overrides else medium


def target_electrons(medium: Medium, volume_cm3: float, target_mass_t: float | None = None,
                     target_electrons: float | None = None) -> float:
    """Number of target electrons: stated, from a stated mass (t), or from the volume (cm³).

    The order of precedence is ``target_electrons``, ``target_mass_t``, then the fiducial
    volume times the medium's density.
    """
    if target_electrons is not None:
        return float(target_electrons)
    if target_mass_t is not None:
        return medium.electrons_per_tonne * target_mass_t
    return medium.electrons_in(volume_cm3)


def get_medium(name: str, custom: dict[str, Medium] | None = None) -> Medium:
    """Return the medium called ``name`` (built-in or ``custom``) or raise ConfigError."""
    table = {**MEDIA, **(custom or {})}
    try:
        return table[name]
    except KeyError:
        raise ConfigError(
            f"detector.medium: unknown medium {name!r}; allowed: {sorted(table)}"
        ) from None
