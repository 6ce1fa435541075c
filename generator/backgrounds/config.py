"""The ``[backgrounds]`` configuration section.

Keys:

* ``enabled`` (bool, default true when the section is present);
* ``vessel_radius_m``, ``vessel_half_height_m`` (optional; the inner vessel from which external
  backgrounds enter; a sphere around a spherical fiducial volume, otherwise a vertical cylinder
  that needs the half height), ``outer_vessel_radius_m``, ``outer_vessel_half_height_m``
  (optional second vessel); the fiducial volume must lie inside every vessel given;
* one table per isotope, ``[backgrounds.<isotope>]`` with ``rate`` (≥ 0), ``unit``
  (``Bq/kg``, ``cpd/100t`` or, for chain isotopes, ``g/g`` of the chain parent), ``vertex``
  (``uniform`` in the fiducial volume, ``vessel`` or ``outer_vessel``: exponential attenuation
  with the depth below that vessel's wall) and ``attenuation_length_m`` (> 0, for the vessel
  profiles).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ..config import _Section, _suggest
from ..errors import ConfigError
from ..userfiles import clip
from .decay import RATE_UNITS

__all__ = ["BackgroundsConfig", "IsotopeConfig", "parse_backgrounds", "backgrounds_toml_lines",
           "VERTEX_MODELS", "check_vessels"]

VERTEX_MODELS = ("uniform", "vessel", "outer_vessel")
_VESSEL_KEYS = ("vessel_radius_m", "vessel_half_height_m", "outer_vessel_radius_m",
                "outer_vessel_half_height_m")


@dataclass(frozen=True)
class IsotopeConfig:
    """Rate and vertex model of one background isotope."""

    name: str
    rate: float
    unit: str
    vertex: str = "uniform"
    attenuation_length_m: float | None = None


@dataclass(frozen=True)
class BackgroundsConfig:
    """Validated ``[backgrounds]`` section."""

    enabled: bool
    isotopes: tuple[IsotopeConfig, ...]
    vessel_radius_m: float | None = None
    vessel_half_height_m: float | None = None
    outer_vessel_radius_m: float | None = None
    outer_vessel_half_height_m: float | None = None


def parse_backgrounds(t: Any) -> BackgroundsConfig | None:
    """Parse ``[backgrounds]`` (None when absent).

    Raises
    ------
    ConfigError
        For unknown isotopes or keys, negative rates or dimensions, a ``g/g`` rate of a
        non-chain isotope, or a vessel profile without its vessel or attenuation length.
    """
    if t is None:
        return None
    from . import ISOTOPES

    s = _Section(t, "backgrounds")
    enabled = s.boolean("enabled", True)
    dims = {k: s.number(k, lo=0.0, hi=1000.0, lo_open=True, optional=True)
            for k in _VESSEL_KEYS}
    tables = {k: v for k, v in t.items() if k not in s.used}
    isotopes = []
    for name, sub in tables.items():
        if name not in ISOTOPES:
            shown = name if name.isprintable() and len(name) <= 40 else clip(name)
            raise ConfigError(f"backgrounds.{shown}: unknown isotope or key"
                              f"{_suggest(name, [*ISOTOPES, *s.used])}; allowed isotopes: "
                              f"{sorted(ISOTOPES)}, keys: {sorted(s.used)}")
        s.used.add(name)
        isotopes.append(_parse_isotope(sub, name, ISOTOPES[name].chain is not None))
    s.finish()
    cfg = BackgroundsConfig(enabled, tuple(isotopes), **dims)
    if cfg.outer_vessel_radius_m is not None and cfg.vessel_radius_m is not None \
            and cfg.outer_vessel_radius_m < cfg.vessel_radius_m:
        raise ConfigError(f"backgrounds.outer_vessel_radius_m: {cfg.outer_vessel_radius_m} m "
                          f"is inside vessel_radius_m = {cfg.vessel_radius_m} m")
    for iso in cfg.isotopes:
        if iso.vertex != "uniform":
            key = f"{iso.vertex}_radius_m"
            if getattr(cfg, key) is None:
                raise ConfigError(f"backgrounds.{iso.name}.vertex: {iso.vertex!r} needs "
                                  f"backgrounds.{key}")
    return cfg


def _parse_isotope(t: Any, name: str, chain: bool) -> IsotopeConfig:
    s = _Section(t, f"backgrounds.{name}")
    rate = s.number("rate", lo=0.0, hi=1e30)
    unit = s.string("unit", choices=RATE_UNITS)
    vertex = s.string("vertex", "uniform", choices=VERTEX_MODELS)
    att = s.number("attenuation_length_m", lo=0.0, hi=1000.0, lo_open=True, optional=True)
    s.finish()
    if unit == "g/g" and not chain:
        raise ConfigError(f"backgrounds.{name}.unit: 'g/g' is only for chain isotopes "
                          "(214Bi, 208Tl); use 'Bq/kg' or 'cpd/100t'")
    if unit == "g/g" and rate > 1.0:
        raise ConfigError(f"backgrounds.{name}.rate: {rate} g/g is above 1")
    if vertex != "uniform" and att is None:
        raise ConfigError(f"backgrounds.{name}.attenuation_length_m: required (> 0 m) for "
                          f"vertex = {vertex!r}")
    if vertex == "uniform" and att is not None:
        raise ConfigError(f"backgrounds.{name}.attenuation_length_m: only used with a vessel "
                          "vertex profile (vertex = 'vessel' or 'outer_vessel')")
    return IsotopeConfig(name, rate, unit, vertex, att)


def check_vessels(bg: BackgroundsConfig | None, detector: Any) -> None:
    """Raise ConfigError when the fiducial volume is not inside a configured vessel."""
    if bg is None:
        return
    from ..geometry import make_fiducial, make_vessel

    fid = make_fiducial(detector.fiducial_shape, detector.fiducial_radius_m,
                        detector.fiducial_half_height_m, detector.fiducial_half_lengths_m)
    for prefix in ("vessel", "outer_vessel"):
        r = getattr(bg, f"{prefix}_radius_m")
        if r is not None:
            make_vessel(fid, r, getattr(bg, f"{prefix}_half_height_m"), f"backgrounds.{prefix}")


def backgrounds_toml_lines(bg: BackgroundsConfig | None) -> list[str]:
    """TOML lines of the section (round-trips through :func:`parse_backgrounds`)."""
    if bg is None:
        return []
    from ..config import _toml_value

    lines = ["[backgrounds]", f"enabled = {_toml_value(bg.enabled)}"]
    for k in _VESSEL_KEYS:
        if getattr(bg, k) is not None:
            lines.append(f"{k} = {_toml_value(getattr(bg, k))}")
    for iso in bg.isotopes:
        lines.append("")
        lines.append(f"[backgrounds.{iso.name}]")
        lines.append(f"rate = {_toml_value(iso.rate)}")
        lines.append(f"unit = {_toml_value(iso.unit)}")
        lines.append(f"vertex = {_toml_value(iso.vertex)}")
        if iso.attenuation_length_m is not None:
            lines.append(f"attenuation_length_m = {_toml_value(iso.attenuation_length_m)}")
    lines.append("")
    return lines
