"""Root attributes and tables that describe a run in its event file (provenance)."""

from __future__ import annotations

import datetime as _dt
import hashlib
from typing import TYPE_CHECKING, Any

import numpy as np

from . import __version__
from .config import to_toml
from .constants import CODATA_EDITION_NOTE
from .io.schema import FRAME_CONVENTION, LAYOUT_VERSION

if TYPE_CHECKING:
    from .pipeline import RunPlan

__all__ = ["ABSENT_STAGES", "provenance", "stage_names", "write_tables"]

#: Optional stages, absent from the event files unless switched on.
ABSENT_STAGES = ("detector response (reconstructed fields)", "radioactive backgrounds")


def stage_names(response_on: bool, backgrounds_on: bool = False) -> dict[str, str]:
    """``stages_present``/``stages_absent`` attributes."""
    present = "sources, cross sections, ephemeris, solar MSW, Earth regeneration"
    on = {ABSENT_STAGES[0]: response_on, ABSENT_STAGES[1]: backgrounds_on}
    absent = [s for s in ABSENT_STAGES if not on[s]]
    return {"stages_present": present + (", radioactive backgrounds" if backgrounds_on else "")
            + (", detector response" if response_on else ""),
            "stages_absent": "; ".join(absent) or "none"}


def provenance(plan: RunPlan, entropy: int, n: int) -> dict[str, Any]:
    """Root attributes of an event file."""
    cfg = plan.config
    text = to_toml(cfg)
    return {
        "tool": "sunrecoil",
        "tool_version": __version__,
        "layout_version": LAYOUT_VERSION,
        "config_toml": text,
        "config_sha256": hashlib.sha256(text.encode("utf-8")).hexdigest(),
        "config_source": cfg.source_file or "embedded default",
        "seed_entropy": str(entropy),
        "seed_scheme": "chunk k draws from numpy SeedSequence(seed_entropy, spawn_key=(k,)); "
                       "Poisson count from spawn_key=(2**31,)",
        "chunk_size": cfg.run.chunk_size,
        "created_utc": _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "n_events": n,
        "count_mode": cfg.run.count_mode,
        "expected_events": plan.expected_total,
        "weight_per_event": plan.expected_total / n if n else 0.0,
        "expected_events_per_live_day": plan.expected_rate_per_day,
        "live_seconds": plan.exposure.live_seconds,
        "mean_inverse_r2": plan.exposure.mean_inverse_r2,
        "target_electrons": plan.n_electrons,
        "fiducial_mass_kg": plan.fiducial.volume_cm3 * plan.medium.density_g_cm3 / 1000.0,
        "threshold_mev": cfg.interaction.threshold_mev,
        "frame": FRAME_CONVENTION,
        "units_convention": "MeV for energies and mm for lengths inside events; UTC seconds "
                            "since the Unix epoch for event times; cm^2 and cm^-2 s^-1 for "
                            "cross sections and fluxes",
        **stage_names(False, plan.backgrounds is not None),
        **_background_attrs(plan),
        "constants": CODATA_EDITION_NOTE,
    }


def _background_attrs(plan: RunPlan) -> dict[str, Any]:
    """Normalisation split between signal and backgrounds (root attributes)."""
    if plan.backgrounds is None:
        return {}
    bg = float(plan.backgrounds.expected.sum())
    return {"expected_events_backgrounds": bg,
            "expected_events_signal": plan.expected_total - bg,
            "background_normalisation": "expected_events = signal + background expected events;"
            " every event's weight = expected_events / n_events; origin codes >= 100 are "
            "background isotopes (table /backgrounds)"}


def write_tables(sink: Any, plan: RunPlan) -> None:
    """Write the run's tables (sources, exposure, flavour probabilities) to ``sink``."""
    names = np.array([sp.name for sp in plan.sources], dtype=object)
    sink.write_table("sources/name", names, "", "source names (UTF-8)")
    sink.write_table("sources/code", np.array([sp.code for sp in plan.sources], np.int16), "",
                     "origin code of each source")
    sink.write_table("sources/flux", np.array([sp.flux for sp in plan.sources]), "cm^-2 s^-1",
                     "flux at 1 AU after scaling and overrides")
    sink.write_table("sources/expected_events",
                     np.array([sp.expected_events for sp in plan.sources]), "events",
                     "expected events above threshold for the configured exposure")
    sink.write_table("sources/mean_sigma", np.array([sp.mean_sigma for sp in plan.sources]),
                     "cm^2", "exposure-, spectrum- and flavour-averaged cross section above "
                     "threshold per incident neutrino")
    sink.write_table("exposure/intervals", plan.exposure.intervals, "s",
                     "live periods [start, stop], UTC seconds since the Unix epoch")
    sink.write_table("exposure/zenith_edges", plan.zenith_edges, "", "cos-zenith bin edges")
    sink.write_table("exposure/zenith_weights", plan.zenith_weights, "s",
                     "live time weighted by (1 AU/r)^2 per cos-zenith bin")
    for region in sorted({sp.production_region for sp in plan.sources}):
        e, p = plan.flavour.day_table(region)
        sink.write_table(f"flavour/day/{region}/energy", e, "MeV", "neutrino energy grid")
        sink.write_table(f"flavour/day/{region}/probability", p, "",
                         "daytime P(nu_e -> nu_e, nu_mu, nu_tau) at the detector")
    night = plan.flavour.night_table()
    if night:
        sink.write_table("flavour/night/energy", night["energy"], "MeV", "energy grid")
        sink.write_table("flavour/night/cos_zenith", night["cos_zenith"], "",
                         "cos-zenith grid (night half)")
        sink.write_table("flavour/night/p_earth", night["p_earth"], "",
                         "P(nu_i -> nu_alpha) through the Earth, axes (E, cos_zenith, i, alpha)")
    sink.set_attrs({k: (str(v) if not isinstance(v, int | float | str | bool) else v)
                    for k, v in plan.flavour.describe().items()}, group="flavour")

