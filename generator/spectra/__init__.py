"""Solar-neutrino source stage: fluxes at 1 AU, energy spectra and fast energy sampling.

Public API
----------
SOURCE_NAMES, SOURCE_CODES, FLUX_MODELS, DEFAULT_FLUX_MODEL
flux(source, model) -> float                  cm⁻² s⁻¹ at 1 AU
flux_uncertainty(source, model) -> float      relative 1σ
get_spectrum(source, variant) -> Spectrum     energies in MeV
load_custom_spectrum(path, name) -> Spectrum
Spectrum, InverseCDFSampler

Tables are built lazily on first use and cached, so importing is cheap.
"""

from __future__ import annotations

from generator.spectra.custom import load_custom_spectrum
from generator.spectra.fluxes import (
    DEFAULT_FLUX_MODEL,
    FLUX_MODELS,
    SOURCE_CODES,
    SOURCE_NAMES,
    flux,
    flux_table,
    flux_uncertainty,
)
from generator.spectra.sampling import InverseCDFSampler
from generator.spectra.spectrum import Spectrum, get_spectrum, source_endpoint

__all__ = [
    "SOURCE_NAMES",
    "SOURCE_CODES",
    "FLUX_MODELS",
    "DEFAULT_FLUX_MODEL",
    "flux",
    "flux_uncertainty",
    "flux_table",
    "get_spectrum",
    "source_endpoint",
    "load_custom_spectrum",
    "Spectrum",
    "InverseCDFSampler",
]
