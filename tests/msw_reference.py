"""Test-only comparison formula: the reduced two-flavour solar MSW treatment.

The generator uses the full three-flavour adiabatic fractions
(:func:`generator.oscillation.matter_mass_fractions`).  The formula here is the older
reduction, kept only to state and test the size of the difference: ν₃ is taken as decoupled
with P_e3 = s₁₃², and the 1–2 sector is a two-flavour system with Δm²₂₁, θ₁₂ and the potential
c₁₃² V_CC (Kuo & Pantaleone, Rev. Mod. Phys. 61, 937 (1989)); with P_c = 0 (Parke, Phys. Rev.
Lett. 57, 1275 (1986)) P_e1 = c₁₃² cos²θ₁₂ᵐ, P_e2 = c₁₃² sin²θ₁₂ᵐ, where
cos 2θᵐ = (cos 2θ − β)/sqrt((cos 2θ − β)² + sin² 2θ), β = 2 c₁₃² V_CC E/Δm²₂₁
(Wolfenstein, Phys. Rev. D 17, 2369 (1978); Mikheyev & Smirnov 1985).
"""

from __future__ import annotations

import numpy as np

from generator.constants import MATTER_POTENTIAL_EV_PER_NA
from generator.oscillation import OscillationParams

__all__ = ["reduced_cos2_theta12", "reduced_fractions"]


def reduced_cos2_theta12(energy, n_e, p: OscillationParams) -> np.ndarray:
    """cos 2θ₁₂ᵐ of the reduced treatment (energy in MeV, n_e in N_A cm⁻³)."""
    beta = (2.0 * (1.0 - p.sin2_theta13) * MATTER_POTENTIAL_EV_PER_NA
            * np.asarray(n_e) * np.asarray(energy) * 1e6 / p.dm2_21)
    c2 = 1.0 - 2.0 * p.sin2_theta12
    return (c2 - beta) / np.sqrt((c2 - beta) ** 2 + 1.0 - c2 * c2)


def reduced_fractions(energy, n_e, p: OscillationParams) -> np.ndarray:
    """(P_e1, P_e2, P_e3) of the reduced treatment, shape broadcast(energy, n_e) + (3,)."""
    c = reduced_cos2_theta12(energy, n_e, p)
    c13sq = 1.0 - p.sin2_theta13
    return np.stack([c13sq * 0.5 * (1 + c), c13sq * 0.5 * (1 - c),
                     np.full_like(c, p.sin2_theta13)], axis=-1)
