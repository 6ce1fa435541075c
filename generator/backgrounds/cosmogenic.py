"""Cosmogenic (spallation) isotopes: ¹¹C (scintillator) and ⁸Li, ¹²B, ¹⁶N (water).

Generated at a uniform rate per volume and uniformly in live time: the time and space
correlation with the parent muon is not simulated (README limitation).
"""

from __future__ import annotations

from .betashape import ANNIHILATION_MEV, Branch
from .decay import PDG_ELECTRON, PDG_POSITRON, Isotope

__all__ = ["C11", "LI8", "B12", "N16", "ISOTOPES"]

#: ¹¹C → ¹¹B: Q_EC = 1981.7 keV, β⁺ 99.76 % (endpoint Q_EC − 2m_e = 959.7 keV, 3/2⁻ → 3/2⁻
#: allowed), EC 0.24 % (not generated); T½ = 20.364 min — ENSDF / TUNL A = 11 evaluation (from
#: memory). The positron's two 511 keV annihilation quanta go to ``gamma_energy``.
C11 = Isotope("11C", 105, "cosmogenic", 5, 11, 20.364 * 60.0, PDG_POSITRON,
              (Branch(1.0, 1.9817 - ANNIHILATION_MEV, "allowed", ANNIHILATION_MEV),),
              "ENSDF/TUNL: Q_EC 1981.7 keV, beta+ 99.76 %, T1/2 20.364 min (from memory)",
              visible_fraction=0.9976)

#: ⁸Li → ⁸Be(3.03 MeV, 2⁺) → 2α: Q = 16.004 MeV, T½ = 839.9 ms, ≈ 100 % to the broad 3.03 MeV
#: level (allowed); the level's width and the α pair (quenched, below the Cherenkov threshold)
#: are neglected — TUNL A = 8 evaluation (from memory).
LI8 = Isotope("8Li", 108, "cosmogenic", 4, 8, 0.8399, PDG_ELECTRON,
              (Branch(1.0, 16.004 - 3.03, "allowed"),),
              "TUNL A=8: Q 16.004 MeV, T1/2 839.9 ms (from memory)")

#: ¹²B → ¹²C: Q = 13.369 MeV, T½ = 20.20 ms; 97.2 % ground state (1⁺ → 0⁺ allowed), 1.28 % to
#: 4.439 MeV (γ 4.439), 1.5 % to the 7.654 MeV level (→ 3α, no γ deposit) — TUNL A = 12
#: evaluation (from memory).
B12 = Isotope("12B", 109, "cosmogenic", 6, 12, 0.0202, PDG_ELECTRON,
              (Branch(0.972, 13.369), Branch(0.0128, 13.369 - 4.439, "allowed", 4.439),
               Branch(0.015, 13.369 - 7.654)),
              "TUNL A=12: Q 13.369 MeV, T1/2 20.20 ms, branches (from memory)")

#: ¹⁶N → ¹⁶O: Q = 10.420 MeV, T½ = 7.13 s; 66.2 % to 6.130 MeV (γ 6.129; 2⁻ → 3⁻, allowed shape
#: used), 28.0 % ground state (2⁻ → 0⁺, first-forbidden unique), 4.8 % to 7.117 MeV (γ 7.117),
#: 1.06 % to 8.872 MeV (γ cascade 8.872) — TUNL A = 16 evaluation (from memory).
N16 = Isotope("16N", 110, "cosmogenic", 8, 16, 7.13, PDG_ELECTRON,
              (Branch(0.662, 10.420 - 6.130, "allowed", 6.129),
               Branch(0.280, 10.420, "unique1"),
               Branch(0.048, 10.420 - 7.117, "allowed", 7.117),
               Branch(0.0106, 10.420 - 8.872, "allowed", 8.872)),
              "TUNL A=16: Q 10.420 MeV, T1/2 7.13 s, branches (from memory)")

ISOTOPES = (C11, LI8, B12, N16)
