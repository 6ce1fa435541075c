"""The measured ⁸B neutrino spectrum and the ±1σ shape variants derived from it.

The measured spectrum of Winter et al., Phys. Rev. C 73, 025503 (2006), nucl-ex/0406019, is
shipped as ``generator/data/spectra/b8_measured_2006.txt`` (0.1 MeV bins, density P and its
signed, fully correlated 1σ shift ΔP; provenance in the file header). It is

* the default ⁸B shape (``sources.b8_shape = "measured"``), piecewise linear through the bin
  centres with P(0) = 0;
* the source of the ±1σ shape variants ``"plus1sigma"`` / ``"minus1sigma"``:
  P ± ΔP, renormalised (the published convention of the table: +ΔP softens the spectrum,
  ⟨E⟩ −0.13 %), so the band is centred on the measurement;
* the reference against which the R-matrix physics model of :mod:`generator.spectra.boron8`
  (``b8_shape = "model"``) is tested (mean, peak, shape, endpoint region).
"""

from __future__ import annotations

from functools import cache
from importlib import resources

import numpy as np

from generator.errors import DataFileError
from generator.spectra.boron8 import boron8_spectrum

__all__ = ["B8_DEFAULT", "B8_VARIANTS", "measured_b8_table", "b8_variant_spectrum"]

#: Names of the ⁸B spectrum variants (``sources.b8_shape``); the first is the default.
B8_VARIANTS: tuple[str, ...] = ("measured", "plus1sigma", "minus1sigma", "model")
#: Default ⁸B shape (what ``variant="nominal"`` means for ⁸B in :func:`b8_variant_spectrum`).
B8_DEFAULT: str = "measured"

_TABLE = "data/spectra/b8_measured_2006.txt"


@cache
def measured_b8_table() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The measured ⁸B spectrum (Winter et al. 2006) with a P(0) = 0 point prepended.

    Returns
    -------
    tuple of numpy.ndarray
        ``(E [MeV], P [1/MeV], ΔP [1/MeV])``, P normalised to unit area (trapezoid), ΔP on
        the same scale; read-only arrays of shape (156,).
    """
    ref = resources.files("generator").joinpath(_TABLE)
    try:
        with ref.open("r", encoding="utf-8") as fh:
            data = np.loadtxt(fh, comments="#")
    except (OSError, ValueError) as exc:  # pragma: no cover - packaging error
        raise DataFileError(f"{_TABLE}: cannot read the measured 8B table ({exc})") from None
    e = np.concatenate(([0.0], data[:, 0]))
    p = np.concatenate(([0.0], data[:, 1]))
    dp = np.concatenate(([0.0], data[:, 2]))
    norm = np.trapezoid(p, e)
    out = (e, p / norm, dp / norm)
    for a in out:
        a.setflags(write=False)
    return out


@cache
def b8_variant_spectrum(variant: str, n_nu: int = 4001) -> tuple[np.ndarray, np.ndarray]:
    """⁸B spectrum of a named variant on the model's uniform grid (cached).

    Parameters
    ----------
    variant : str
        One of :data:`B8_VARIANTS`, or ``"nominal"`` (the default, :data:`B8_DEFAULT`).
    n_nu : int
        Number of grid points.

    Returns
    -------
    tuple of numpy.ndarray
        ``(E_ν [MeV], pdf [1/MeV])`` with unit area (trapezoid).
    """
    if variant == "nominal":
        variant = B8_DEFAULT
    e, f = boron8_spectrum("nominal", n_nu)
    if variant == "model":
        return e, f
    te, tp, tdp = measured_b8_table()
    if variant == "measured":
        pdf = np.interp(e, te, tp, right=0.0)
    elif variant in ("plus1sigma", "minus1sigma"):
        sign = 1.0 if variant == "plus1sigma" else -1.0
        pdf = np.interp(e, te, tp + sign * tdp, right=0.0)
    else:
        raise KeyError(variant)
    pdf = np.maximum(pdf, 0.0)
    return e, pdf / np.trapezoid(pdf, e)
