"""Detector response: reconstructed energy, direction, vertex and trigger of each event.

One file per variant (:mod:`.water`, :mod:`.scintillator`, :mod:`.hybrid`) behind the shared
:class:`~generator.response.model.ResponseModel`; the physics lives in :mod:`.stopping`
(electron stopping power and CSDA range), :mod:`.light` (Cherenkov and Birks-quenched light),
:mod:`.scattering` (multiple scattering and von Mises–Fisher sampling); :mod:`.config` parses
``[response]`` and ``[media.<name>]``.

The response of chunk k draws only from ``SeedSequence(seed, spawn_key=(k, 1))``, so switching
it on or off never changes the truth fields.

Example
-------
>>> from generator.config import load_config
>>> from generator.response import build_response
>>> model = build_response(load_config("configs/scintillator.toml"))  # doctest: +SKIP
>>> model.energy_matrix([1.0, 2.0], [0.0, 0.5, 1.0, 1.5, 2.0, 2.5])      # doctest: +SKIP
"""

from __future__ import annotations

import threading
from typing import Any

import numpy as np

from ..io.schema import EVENT_FIELDS, RESPONSE_FIELDS, Field
from ..media import Medium, get_medium
from .config import build_media, resolved
from .hybrid import HybridResponse
from .model import ResponseModel
from .scintillator import ScintillatorResponse
from .water import WaterResponse

__all__ = ["ResponseModel", "WaterResponse", "ScintillatorResponse", "HybridResponse",
           "build_response", "build_media", "output_fields", "response_seed", "ResponseStage",
           "RESPONSE_SPAWN_SUFFIX", "VARIANT_CLASSES", "DEFAULT_T_MAX"]

VARIANT_CLASSES = {"water": WaterResponse, "scintillator": ScintillatorResponse,
                   "hybrid": HybridResponse}
#: Child-stream suffix of the response: chunk k uses spawn_key (k, 1).
RESPONSE_SPAWN_SUFFIX = 1
#: Highest tabulated deposit (MeV); above it the tables are extrapolated linearly.
DEFAULT_T_MAX = 30.0


def build_response(cfg: Any, medium: Medium | None = None, t_max: float = DEFAULT_T_MAX
                   ) -> ResponseModel | None:
    """The response model of a configuration (None when ``response.enabled`` is false).

    Raises
    ------
    ConfigError
        For parameters that give negative widths or no light at the reference energy.
    """
    rc = cfg.response
    if rc is None or not rc.enabled:
        return None
    if medium is None:
        medium = get_medium(cfg.detector.medium, build_media(cfg.media))
    variant = medium.variant if rc.variant == "auto" else rc.variant
    cls = VARIANT_CLASSES[variant]
    model = cls(variant=variant, medium=medium, params=resolved(rc, variant),
                keep_untriggered=rc.keep_untriggered, t_max=max(t_max, DEFAULT_T_MAX))
    return model.build()


def output_fields(cfg: Any) -> tuple[Field, ...]:
    """Event fields written for a configuration (truth fields + the response's if on)."""
    on = cfg.response is not None and cfg.response.enabled
    return (*EVENT_FIELDS, *RESPONSE_FIELDS) if on else tuple(EVENT_FIELDS)


def response_seed(entropy: int, k: int) -> np.random.SeedSequence:
    """Seed sequence of the response stream of chunk ``k``."""
    return np.random.SeedSequence(entropy, spawn_key=(k, RESPONSE_SPAWN_SUFFIX))


class ResponseStage:
    """Applies a response model to the chunks of a run and keeps the trigger bookkeeping."""

    def __init__(self, model: ResponseModel, sun_dir: Any = None):
        self.model = model
        self.sun_dir = sun_dir
        self.n_generated = 0
        self.n_triggered = 0
        self._count_lock = threading.Lock()   # chunks may be processed in several threads

    def process(self, ev: dict[str, np.ndarray], entropy: int, k: int
                ) -> dict[str, np.ndarray]:
        """Add the reconstructed fields to chunk ``k``; drop untriggered events if asked."""
        rng = np.random.default_rng(response_seed(entropy, k))
        ev.update(self.model.sample(rng, ev, self.sun_dir))
        trig = ev["triggered"].view(bool)
        n_trig = int(np.count_nonzero(trig))
        with self._count_lock:
            self.n_generated += trig.size
            self.n_triggered += n_trig
        if self.model.keep_untriggered or n_trig == trig.size:
            return ev
        return {key: v[trig] for key, v in ev.items()}

    def attrs(self, weight: float) -> dict[str, Any]:
        """Root attributes describing the response and the trigger efficiency."""
        m = self.model
        eff = self.n_triggered / self.n_generated if self.n_generated else 0.0
        return {
            "response_variant": m.variant,
            "response_kept_untriggered": int(m.keep_untriggered),
            "n_generated": self.n_generated,
            "n_triggered": self.n_triggered,
            "trigger_efficiency": eff,
            "expected_events_triggered": weight * self.n_triggered,
            "response_normalisation": (
                "every event carries weight = expected_events / n_generated; the sum of the "
                "weights of triggered events estimates the expected triggered count "
                "(binomial error); with response_kept_untriggered = 0 only triggered events "
                "are stored"),
        }

    def write_tables(self, sink: Any) -> None:
        """Store the response tables (mean light, calibration, MCS width) under /response."""
        m = self.model
        t = np.linspace(0.0, m.t_max, 601)
        mu_c, mu_s = m.mean_light(t)
        sink.write_table("response/energy", t, "MeV", "electron kinetic-energy grid")
        sink.write_table("response/mean_pe_cherenkov", mu_c, "photoelectrons",
                         "mean Cherenkov photoelectrons of an electron")
        sink.write_table("response/mean_pe_isotropic", mu_s, "photoelectrons",
                         "mean scintillation photoelectrons of an electron")
        if "mcs_var" in m.tables:
            sink.write_table("response/mcs_sigma", np.sqrt(m.tables["mcs_var"](t)), "rad",
                             "per-plane rms of the light-weighted track direction (multiple "
                             "scattering)")
        sink.set_attrs({k: (v if isinstance(v, int | float | str | bool) else str(v))
                        for k, v in m.describe().items()}, group="response")
