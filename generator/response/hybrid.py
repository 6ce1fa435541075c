"""Water-based-scintillator (hybrid) response: both light components kept apart.

The Cherenkov and the isotropic (scintillation + dark-noise) photoelectrons are drawn as two
independent Poisson counts (their sum is the Poisson count of the total light). The direction
comes from the Cherenkov part alone: multiple scattering plus a reconstruction term that
scales as 1/n_c and is degraded by the ratio of all to Cherenkov photoelectrons (see
:mod:`.model`).
"""

from __future__ import annotations

from dataclasses import dataclass

from .model import ResponseModel

__all__ = ["HybridResponse"]


@dataclass
class HybridResponse(ResponseModel):
    """Cherenkov + scintillation light drawn separately; direction from the Cherenkov part."""

    directional: bool = True
    scintillation: bool = True
    split_components: bool = True
