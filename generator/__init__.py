"""sunrecoil: Monte Carlo generator of solar-neutrino elastic scattering on electrons.

The import package is ``generator``; the distribution and command are ``sunrecoil``.

Example
-------
>>> from generator import config, pipeline                     # doctest: +SKIP
>>> cfg = config.load_config(None)          # embedded default detector
>>> result = pipeline.generate(cfg, "outputs/demo.h5", n_events=10_000, seed=1)
"""

from __future__ import annotations

__all__ = ["__version__"]

__version__ = "0.2.0"
