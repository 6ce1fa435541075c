"""Radioactive backgrounds mixed into the event files as isotropic events.

One file per isotope family: :mod:`.intrinsic` (¹⁴C, ⁸⁵Kr, ²¹⁰Bi, ⁴⁰K), :mod:`.chain`
(²¹⁴Bi, ²⁰⁸Tl with their γ cascades), :mod:`.cosmogenic` (¹¹C, ⁸Li, ¹²B, ¹⁶N), :mod:`.alpha`
(²¹⁰Po); shared β spectra and shape factors in :mod:`.betashape`, decay-data records and rate
units in :mod:`.decay`, the ``[backgrounds]`` section in :mod:`.config` and the per-chunk
sampling in :mod:`.stage`. Background isotopes have origin codes ≥ 100.

Example
-------
>>> from generator.backgrounds import ISOTOPES
>>> ISOTOPES["210Po"].code
104
"""

from __future__ import annotations

from . import alpha, chain, cosmogenic, intrinsic
from .decay import Isotope
from .stage import BackgroundPlan, background_seed, build_backgrounds, combined_cdf

__all__ = ["ISOTOPES", "Isotope", "BackgroundPlan", "build_backgrounds", "combined_cdf",
           "background_seed"]

#: Every known background isotope by name, in origin-code order.
ISOTOPES: dict[str, Isotope] = {
    iso.name: iso for iso in sorted((*intrinsic.ISOTOPES, *alpha.ISOTOPES, *chain.ISOTOPES,
                                     *cosmogenic.ISOTOPES), key=lambda i: i.code)}
