"""α lines: ²¹⁰Po.

The α is emitted with its kinetic energy and PDG code 1000020040; quenching of its light is the
detector response's job (:mod:`generator.response`).
"""

from __future__ import annotations

from .betashape import Branch
from .decay import PDG_ALPHA, Isotope

__all__ = ["PO210", "ISOTOPES"]

#: ²¹⁰Po → ²⁰⁶Pb: E_α = 5304.33 keV (≈ 100 %; the 0.001 % branch to the 803 keV level is
#: neglected), T½ = 138.376 d — ENSDF / NuDat 3 (from memory).
PO210 = Isotope("210Po", 104, "alpha", 82, 206, 138.376 * 86400.0, PDG_ALPHA,
                (Branch(1.0, 5.30433, "line"),),
                "ENSDF/NuDat 3: E_alpha 5304.33 keV, T1/2 138.376 d (from memory)")

ISOTOPES = (PO210,)
