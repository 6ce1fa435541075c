"""Target media: electron densities of the detector liquids.

The number of target electrons per unit mass follows from the chemical composition,
n_e / m = N_A Σ_k ν_k Z_k / Σ_k ν_k A_k, with standard atomic weights A_k from the IUPAC
Commission on Isotopic Abundances and Atomic Weights, "Standard atomic weights of the elements
2021", Pure Appl. Chem. 95, 1 (2023) (conventional values; from memory).

Each medium is a small record; a new medium is one new entry in :data:`MEDIA` (see
DEVELOPERS.md). The optical and scintillation properties belong to the detector-response stage
and are not part of this module yet.
"""

from __future__ import annotations

from dataclasses import dataclass

from .constants import AVOGADRO
from .errors import ConfigError

__all__ = ["Medium", "MEDIA", "get_medium", "ATOMIC_NUMBER", "ATOMIC_WEIGHT"]

#: Atomic numbers of the elements used here.
ATOMIC_NUMBER: dict[str, int] = {"H": 1, "C": 6, "N": 7, "O": 8}

#: Conventional standard atomic weights in g/mol (IUPAC 2021, from memory).
ATOMIC_WEIGHT: dict[str, float] = {"H": 1.008, "C": 12.011, "N": 14.007, "O": 15.999}


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
        Mass fractions of component molecules, each given as (formula, mass fraction).
    description : str
        One-line description with the source of the density.
    """

    name: str
    density_g_cm3: float
    composition: tuple[tuple[str, float], ...]
    description: str

    @property
    def electrons_per_gram(self) -> float:
        """Number of electrons per gram of medium (g⁻¹)."""
        total = 0.0
        for formula, mass_fraction in self.composition:
            z, a = _formula_z_a(formula)
            total += mass_fraction * z / a
        return total * AVOGADRO

    def electrons_in(self, volume_cm3: float) -> float:
        """Number of target electrons in a volume (cm³) of this medium."""
        return self.electrons_per_gram * self.density_g_cm3 * volume_cm3


def _formula_z_a(formula: str) -> tuple[int, float]:
    """Return (electrons, molar mass g/mol) of a simple formula like ``C18H30``."""
    import re

    z = 0
    a = 0.0
    for element, count in re.findall(r"([A-Z][a-z]?)(\d*)", formula):
        k = int(count) if count else 1
        z += ATOMIC_NUMBER[element] * k
        a += ATOMIC_WEIGHT[element] * k
    return z, a


#: Known media. Densities: water at 20 °C (0.9982 g/cm³, CRC Handbook of Chemistry and
#: Physics, from memory); linear alkylbenzene represented by its dominant C18H30 homologue
#: (dodecylbenzene) at 0.86 g/cm³ (common practice, no source); the water-based scintillator is
#: a demo mixture of 5 % LAB in water by mass (invented for demos).
MEDIA: dict[str, Medium] = {
    "water": Medium("water", 0.9982, (("H2O", 1.0),), "pure water at 20 °C"),
    "lab": Medium(
        "lab", 0.86, (("C18H30", 1.0),), "linear alkylbenzene scintillator (C18H30 proxy)"
    ),
    "wbls5": Medium(
        "wbls5",
        0.9924,
        (("H2O", 0.95), ("C18H30", 0.05)),
        "water-based scintillator, 5 % LAB by mass (demo mixture)",
    ),
}


def get_medium(name: str) -> Medium:
    """Return the medium called ``name`` or raise :class:`ConfigError`."""
    try:
        return MEDIA[name]
    except KeyError:
        raise ConfigError(
            f"detector.medium: unknown medium {name!r}; allowed: {sorted(MEDIA)}"
        ) from None
