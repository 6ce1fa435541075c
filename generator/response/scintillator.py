"""Liquid-scintillator response: Birks-quenched scintillation plus a Cherenkov component.

Scintillation E_vis(T) from Birks' law with the Bethe collision stopping power (ICRU 37 with
the Sternheimer density effect, :mod:`.stopping`), α particles quenched by the medium's factor
Q_α, and the medium's directional-Cherenkov fraction added to the light; Poisson
photostatistics with constant and dark-noise terms. No direction is reconstructed:
``reco_dir`` and ``reco_cos_sun`` are NaN (stated in their attributes). Vertex resolution
∝ 1/√N_pe.
"""

from __future__ import annotations

from dataclasses import dataclass

from .model import ResponseModel

__all__ = ["ScintillatorResponse"]


@dataclass
class ScintillatorResponse(ResponseModel):
    """Scintillation + Cherenkov light; no direction."""

    directional: bool = False
    scintillation: bool = True
    split_components: bool = False
