"""Intrinsic β emitters dissolved in the target: ¹⁴C, ⁸⁵Kr, ²¹⁰Bi and ⁴⁰K.

Decay data (Q, branches, half-lives) from the evaluated nuclear data; each value carries its
source. "NuDat 3 (ENSDF)" values quoted "via a secondary page" were read on public pages that
quote NuDat 3 / NUBASE2020 (not on the NNDC site itself).
"""

from __future__ import annotations

from .betashape import Branch
from .decay import PDG_ELECTRON, PDG_GAMMA, SECONDS_PER_YEAR, Isotope

__all__ = ["C14", "KR85", "BI210", "K40", "ISOTOPES"]

_DAY = 86400.0

#: ¹⁴C → ¹⁴N: Q = 156.476 keV, T½ = 5700 y, 100 % to the ground state (0⁺ → 1⁺, hindered
#: Gamow–Teller) — ENSDF / NuDat 3 (from memory). Shape: measured linear shape factor
#: (:data:`generator.backgrounds.betashape.C14_SLOPE`).
C14 = Isotope("14C", 100, "intrinsic", 7, 14, 5700.0 * SECONDS_PER_YEAR, PDG_ELECTRON,
              (Branch(1.0, 0.156476, "c14"),),
              "ENSDF/NuDat 3: Q 156.476 keV, T1/2 5700 y (from memory); shape factor "
              "Kuzminov & Osetrova, Phys. At. Nucl. 63, 1292 (2000) (slope from memory)")

#: ⁸⁵Kr → ⁸⁵Rb: Q = 687 keV, T½ = 10.728 y (NUBASE2020, Kondev et al., Chinese Phys. C 45,
#: 030001 (2021), via a secondary page); 99.57 % to the ground state (9/2⁺ → 5/2⁻, first-forbidden
#: unique), 0.43 % with endpoint 173 keV to the 514 keV level (γ 514 keV) — NuDat 3 via a
#: secondary page.
KR85 = Isotope("85Kr", 101, "intrinsic", 37, 85, 10.728 * SECONDS_PER_YEAR, PDG_ELECTRON,
               (Branch(0.9957, 0.687, "unique1"), Branch(0.0043, 0.173, "allowed", 0.514)),
               "NUBASE2020 half-life, NuDat 3 branches (via secondary pages)")

#: ²¹⁰Bi → ²¹⁰Po: Q = 1162.2 keV, T½ = 5.012 d, ≈ 100 % to the ground state (1⁻ → 0⁺,
#: first-forbidden non-unique) — ENSDF (from memory); measured shape factor of Alekseev et al.,
#: PRC 102, 064329 (2020).
BI210 = Isotope("210Bi", 102, "intrinsic", 84, 210, 5.012 * _DAY, PDG_ELECTRON,
                (Branch(1.0, 1.1622, "bi210"),),
                "ENSDF: Q 1162.2 keV, T1/2 5.012 d (from memory); shape factor Alekseev et al., "
                "PRC 102, 064329 (2020)")

#: ⁴⁰K: β⁻ 89.25 % (Q_β⁻ = 1311.07 keV, 4⁻ → 0⁺, third-forbidden unique) and electron capture
#: 10.55 % to the 1460.822 keV level of ⁴⁰Ar (γ 1460.822 keV); 0.2 % EC to the ground state and
#: 0.001 % β⁺ emit nothing detectable and are not generated; T½ = 1.2504 × 10⁹ y — LNHB/DDEP
#: Table de Radionucléides, ⁴⁰K (Mougeot & Helmer, 2012), read on a public copy.
K40 = Isotope("40K", 103, "intrinsic", 20, 40, 1.2504e9 * SECONDS_PER_YEAR, PDG_ELECTRON,
              (Branch(0.8925, 1.31107, "unique3"), Branch(0.1055, 0.0, "line", 1.460822)),
              "LNHB/DDEP Table de Radionucleides K-40 (2012)",
              visible_fraction=0.998, branch_particles=(PDG_ELECTRON, PDG_GAMMA))

ISOTOPES = (C14, KR85, BI210, K40)
