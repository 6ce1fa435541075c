"""Water-Cherenkov response: Cherenkov light only, direction from the Cherenkov ring.

Light above the Cherenkov threshold β > 1/n (Frank–Tamm along the track, see :mod:`.light`),
Poisson photostatistics with dark noise and the σ(E) form of :mod:`.model`; direction from
multiple Coulomb scattering (Highland, PDG review) plus a reconstruction term; vertex
resolution ∝ 1/√N_pe; smooth trigger turn-on and analysis threshold.
"""

from __future__ import annotations

from dataclasses import dataclass

from .model import ResponseModel

__all__ = ["WaterResponse"]


@dataclass
class WaterResponse(ResponseModel):
    """Cherenkov-only light; reconstructs a direction."""

    directional: bool = True
    scintillation: bool = False
    split_components: bool = False
