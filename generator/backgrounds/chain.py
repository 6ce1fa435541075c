"""Chain isotopes with β–γ cascades: ²¹⁴Bi (²³⁸U chain) and ²⁰⁸Tl (²³²Th chain).

Simplified deposit (documented in the README): every β branch feeds a level of the daughter,
whose whole γ cascade to the ground state is taken as deposited in the detector
(``gamma_energy`` = level energy = Q − endpoint; full containment, no conversion electrons, no
escape). All branches use the allowed shape (the evaluations' mean energies for these
first-forbidden non-unique branches are also computed with the allowed shape).

Branches: the evaluated β⁻ branches ≥ 0.5 % (²¹⁴Bi: 20 branches, 96.7 % of decays; ²⁰⁸Tl: 5
branches, 99.3 %), renormalised to 1. Endpoints and intensities: ENSDF as tabulated by NuDat 3,
read on a public page that reproduces the NuDat table; Q(²¹⁴Bi) = 3269 keV, Q(²⁰⁸Tl) = 4999 keV.

Rates as a contamination (``g/g``) assume secular equilibrium with the chain parent:
A(²¹⁴Bi) = A(²³⁸U) (the 0.02 % ²¹⁸Po β branch also ends in ²¹⁴Bi), and A(²⁰⁸Tl) =
0.3594 A(²³²Th) (²¹²Bi α branch 35.94(6) %, LNHB/DDEP via a public page quoting it). The
²¹⁴Po α that follows ²¹⁴Bi 164 µs later and the ²¹²Po α are not generated.
"""

from __future__ import annotations

from .betashape import Branch
from .decay import PDG_ELECTRON, Isotope

__all__ = ["BI214", "TL208", "ISOTOPES", "TL208_FROM_BI212"]

#: Fraction of ²¹²Bi decays that feed ²⁰⁸Tl (α branch; LNHB/DDEP, 35.94(6) %).
TL208_FROM_BI212: float = 0.3594

_Q_BI214 = 3.269
#: (endpoint keV, intensity %) of ²¹⁴Bi β⁻ branches ≥ 0.5 % (NuDat 3 / ENSDF).
_BI214 = ((3269, 19.2), (1539, 17.55), (1504, 16.90), (1422, 8.16), (1891, 7.22),
          (1065, 5.56), (1150, 4.33), (1726, 3.09), (821, 2.78), (1252, 2.459), (1379, 1.589),
          (1258, 1.433), (787, 1.28), (1274, 1.192), (1853, 0.90), (1076, 0.866),
          (1608, 0.57), (976, 0.563), (2660, 0.55), (540, 0.542))

_Q_TL208 = 4.999
#: (endpoint keV, intensity %) of ²⁰⁸Tl β⁻ branches ≥ 0.5 % (NuDat 3 / ENSDF).
_TL208 = ((1801.3, 49.1), (1290.6, 24.2), (1523.9, 22.2), (1038.1, 3.18), (1079.2, 0.63))


def _branches(q: float, table) -> tuple[Branch, ...]:
    return tuple(Branch(i / 100.0, e / 1000.0, "allowed", max(q - e / 1000.0, 0.0))
                 for e, i in table)


BI214 = Isotope("214Bi", 106, "chain", 84, 214, 19.9 * 60.0, PDG_ELECTRON,
                _branches(_Q_BI214, _BI214),
                "ENSDF via NuDat 3: Q 3269 keV, T1/2 19.9 min, branches >= 0.5 %",
                chain=("238U", 1.0))

TL208 = Isotope("208Tl", 107, "chain", 82, 208, 3.053 * 60.0, PDG_ELECTRON,
                _branches(_Q_TL208, _TL208),
                "ENSDF via NuDat 3: Q 4999 keV, T1/2 3.053 min, branches >= 0.5 %",
                chain=("232Th", TL208_FROM_BI212))

ISOTOPES = (BI214, TL208)
