"""The optional ``[sensitivity]`` configuration section (``sunrecoil sensitivity``).

Keys (all optional except ``exposures_days``; CLI options override them):

* ``exposures_days`` — non-empty list of live times (days, > 0) at which the Asimov sensitivity
  is evaluated. Every expected count scales linearly with live time from the configured
  exposure (the day/night and Earth–Sun-distance averages of the configured period are kept).
* ``poi`` — the parameter of interest, one of :data:`POI_NAMES` (default ``"numutau_scale"``).
* ``poi_truth``, ``poi_null`` — the true value (Asimov data and toys) and the null hypothesis
  of the discovery test; defaults per POI in :data:`POI_DEFAULTS`.
* ``energy_edges_mev`` — increasing edges of the reconstructed (true when ``[response]`` is
  off) recoil-energy bins, MeV; default 12 bins of 0.5 MeV from the analysis threshold.
* ``cos_sun_bins`` — equal bins of cos θ_sun in [−1, 1] (≥ 1; forced to 1 for a response
  without direction reconstruction); default 10.
* ``day_night`` — split every bin into day and night (default false).
* ``slope_pivot_mev`` — pivot E₀ of the P_ee slope (neutrino energy, MeV, default 10).
* ``energy_scale_sigma``, ``energy_resolution_sigma`` — Gaussian priors (relative, > 0) of
  the energy-scale and resolution nuisances (defaults 0.01 and 0.05; demo numbers).
* ``background_sigma`` — relative prior of every background normalisation (> 0, default
  0.1), or a table ``{isotope = sigma}`` (unlisted isotopes get 0.1).
* ``flux_sigma`` — table ``{source = sigma}`` overriding the flux-model priors (relative 1σ of
  the flux tables; sources with an overridden flux have none and are fixed unless given here).
* ``fix`` — list of nuisance names held at their central value (see :func:`nuisance_names`
  of :mod:`generator.sensitivity`): ``"energy_scale"``, ``"energy_resolution"``,
  ``"flux_<source>"``, ``"bkg_<isotope>"``.
* ``n_toys`` (≥ 0, default 0), ``toy_seed`` (root entropy of the toys' SeedSequence; random
  and recorded when absent), ``toy_exposure_days`` (default: the first exposure).
* ``templates`` — ``"tables"`` (deterministic, default) or ``"file"`` with ``template_file``
  (an event file of the same configuration; relative paths are relative to the config file).
* ``minimiser`` — ``"scipy"`` (default, scipy.optimize L-BFGS-B) or ``"iminuit"``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .config_checks import _check_number, _Section
from .errors import ConfigError
from .userfiles import clip

__all__ = ["SensitivityConfig", "parse_sensitivity", "sensitivity_toml_lines", "POI_NAMES",
           "POI_DEFAULTS", "TEMPLATE_MODES", "MINIMISERS", "check_exposures"]

#: Selectable parameters of interest (see :mod:`generator.sensitivity` for the model).
POI_NAMES = ("numutau_scale", "pee_slope", "flux_8B", "flux_7Be", "day_night",
             "sterile_fraction")
#: (truth, null) defaults of each POI.
POI_DEFAULTS = {"numutau_scale": (1.0, 0.0), "pee_slope": (0.0, 0.0), "flux_8B": (1.0, 0.0),
                "flux_7Be": (1.0, 0.0), "day_night": (1.0, 0.0),
                "sterile_fraction": (0.0, 0.0)}
TEMPLATE_MODES = ("tables", "file")
MINIMISERS = ("scipy", "iminuit")
#: Most exposures of one scan and most toys of one run (resource bounds).
MAX_EXPOSURES = 1000
MAX_TOYS = 1_000_000
DEFAULT_BACKGROUND_SIGMA = 0.1


@dataclass(frozen=True)
class SensitivityConfig:
    """Validated ``[sensitivity]`` section (see the module docstring for the keys)."""

    exposures_days: tuple[float, ...] = ()
    poi: str = "numutau_scale"
    poi_truth: float | None = None
    poi_null: float | None = None
    energy_edges_mev: tuple[float, ...] | None = None
    cos_sun_bins: int = 10
    day_night: bool = False
    slope_pivot_mev: float = 10.0
    energy_scale_sigma: float = 0.01
    energy_resolution_sigma: float = 0.05
    background_sigma: float = DEFAULT_BACKGROUND_SIGMA
    background_sigma_by_isotope: tuple[tuple[str, float], ...] = ()
    flux_sigma: tuple[tuple[str, float], ...] = ()
    fix: tuple[str, ...] = ()
    n_toys: int = 0
    toy_seed: int | None = None
    toy_exposure_days: float | None = None
    templates: str = "tables"
    template_file: str | None = None
    minimiser: str = "scipy"

    @property
    def truth(self) -> float:
        """True POI value (Asimov data, toys)."""
        return POI_DEFAULTS[self.poi][0] if self.poi_truth is None else self.poi_truth

    @property
    def null(self) -> float:
        """POI value of the null hypothesis of the discovery test."""
        return POI_DEFAULTS[self.poi][1] if self.poi_null is None else self.poi_null


def check_exposures(values: Any, key: str = "sensitivity.exposures_days") -> tuple[float, ...]:
    """Validate a list of live times (days): non-empty, finite, > 0, at most 1000 entries."""
    if not isinstance(values, list | tuple):
        raise ConfigError(f"{key}: expected a list of live times in days, got {clip(values)}")
    if not values:
        raise ConfigError(f"{key}: [] is empty; give at least one live time in days (> 0)")
    if len(values) > MAX_EXPOSURES:
        raise ConfigError(f"{key}: {len(values)} entries; at most {MAX_EXPOSURES} allowed")
    return tuple(_check_number(f"{key}[{i}]", v, 0.0, 1e6, True) for i, v in enumerate(values))


def _sigma(path: str, v: Any) -> float:
    if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v) or v <= 0:
        raise ConfigError(f"{path}: {clip(v)} is not allowed; a prior width must be a finite "
                          "number > 0 (relative); to hold a nuisance fixed list it in "
                          "sensitivity.fix")
    if v > 100.0:
        raise ConfigError(f"{path}: {v} is out of range; must be ≤ 100 (relative)")
    return float(v)


def _sigma_table(path: str, t: Any) -> tuple[tuple[str, float], ...]:
    if not isinstance(t, dict):
        raise ConfigError(f"{path}: expected a table {{name = sigma}}, got {clip(t)}")
    return tuple((str(k), _sigma(f"{path}.{k}", v)) for k, v in t.items())


def parse_sensitivity(t: Any, base_dir: Path | None = None) -> SensitivityConfig | None:
    """Parse ``[sensitivity]`` (None when absent).

    Raises
    ------
    ConfigError
        Naming the key, the bad value and what is allowed.
    """
    if t is None:
        return None
    s = _Section(t, "sensitivity")
    s.used.add("exposures_days")
    exposures = check_exposures(t["exposures_days"]) if "exposures_days" in t else ()
    poi = s.string("poi", "numutau_scale", choices=POI_NAMES)
    truth = s.number("poi_truth", lo=-1e6, hi=1e6, optional=True)
    null = s.number("poi_null", lo=-1e6, hi=1e6, optional=True)
    edges = None
    s.used.add("energy_edges_mev")
    if "energy_edges_mev" in t:
        from .rates import check_edges

        edges = tuple(check_edges(t["energy_edges_mev"], "sensitivity.energy_edges_mev",
                                  0.0).tolist())
    cos_bins = s.integer("cos_sun_bins", 10, lo=1, hi=200)
    dn = s.boolean("day_night", False)
    pivot = s.number("slope_pivot_mev", 10.0, lo=0.0, hi=100.0)
    s.used.update(("energy_scale_sigma", "energy_resolution_sigma", "background_sigma",
                   "flux_sigma", "fix"))
    sig_s = _sigma("sensitivity.energy_scale_sigma", t.get("energy_scale_sigma", 0.01))
    sig_r = _sigma("sensitivity.energy_resolution_sigma", t.get("energy_resolution_sigma", 0.05))
    bg = t.get("background_sigma", DEFAULT_BACKGROUND_SIGMA)
    bg_default, bg_table = DEFAULT_BACKGROUND_SIGMA, ()
    if isinstance(bg, dict):
        from .backgrounds import ISOTOPES

        bg_table = _sigma_table("sensitivity.background_sigma", bg)
        for name, _ in bg_table:
            if name not in ISOTOPES:
                raise ConfigError(f"sensitivity.background_sigma.{clip(name)}: unknown "
                                  f"isotope; allowed: {sorted(ISOTOPES)}")
    else:
        bg_default = _sigma("sensitivity.background_sigma", bg)
    flux = _sigma_table("sensitivity.flux_sigma", t["flux_sigma"]) if "flux_sigma" in t else ()
    fix = t.get("fix", [])
    if not isinstance(fix, list) or not all(isinstance(f, str) for f in fix):
        raise ConfigError(f"sensitivity.fix: expected a list of nuisance names, got {clip(fix)}")
    n_toys = s.integer("n_toys", 0, lo=0, hi=MAX_TOYS)
    seed = s.integer("toy_seed", lo=0, hi=2**128 - 1, optional=True)
    toy_exp = s.number("toy_exposure_days", lo=0.0, hi=1e6, lo_open=True, optional=True)
    mode = s.string("templates", "tables", choices=TEMPLATE_MODES)
    tfile = s.string("template_file", optional=True)
    if tfile is not None and base_dir is not None and not Path(tfile).is_absolute():
        tfile = str(base_dir / tfile)
    if mode == "file" and tfile is None:
        raise ConfigError("sensitivity.template_file: required with templates = 'file' (an "
                          "event file generated from the same configuration)")
    minimiser = s.string("minimiser", "scipy", choices=MINIMISERS)
    s.finish()
    return SensitivityConfig(exposures, poi, truth, null, edges, cos_bins, dn, pivot, sig_s,
                             sig_r, bg_default, bg_table, flux, tuple(fix), n_toys, seed,
                             toy_exp, mode, tfile, minimiser)


def sensitivity_toml_lines(sc: SensitivityConfig | None) -> list[str]:
    """TOML lines of the section (round-trips through :func:`parse_sensitivity`)."""
    if sc is None:
        return []
    from .config_toml import _key, _toml_value

    lines = ["[sensitivity]"]
    if sc.exposures_days:
        lines.append(f"exposures_days = {_toml_value(list(sc.exposures_days))}")
    lines.append(f"poi = {_toml_value(sc.poi)}")
    for k in ("poi_truth", "poi_null", "toy_seed", "toy_exposure_days", "template_file"):
        if getattr(sc, k) is not None:
            lines.append(f"{k} = {_toml_value(getattr(sc, k))}")
    if sc.energy_edges_mev is not None:
        lines.append(f"energy_edges_mev = {_toml_value(list(sc.energy_edges_mev))}")
    for k in ("cos_sun_bins", "day_night", "slope_pivot_mev", "energy_scale_sigma",
              "energy_resolution_sigma", "n_toys", "templates", "minimiser"):
        lines.append(f"{k} = {_toml_value(getattr(sc, k))}")
    if sc.fix:
        lines.append(f"fix = {_toml_value(list(sc.fix))}")
    if sc.background_sigma_by_isotope:
        lines.append("")
        lines.append("[sensitivity.background_sigma]")
        lines += [f"{_key(k)} = {_toml_value(v)}" for k, v in sc.background_sigma_by_isotope]
    else:
        lines.append(f"background_sigma = {_toml_value(sc.background_sigma)}")
    if sc.flux_sigma:
        lines.append("")
        lines.append("[sensitivity.flux_sigma]")
        lines += [f"{_key(k)} = {_toml_value(v)}" for k, v in sc.flux_sigma]
    lines.append("")
    return lines
