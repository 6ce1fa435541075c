"""Configuration of the detector response (``[response]``) and of media (``[media.<name>]``).

``[response]`` keys (defaults depend on the response variant, see :data:`VARIANT_DEFAULTS`; the
embedded default configuration switches the response on with ``variant = "auto"``, i.e. the
variant of the detector's medium):

* ``enabled`` (bool), ``variant`` (``auto``, ``water``, ``scintillator``, ``hybrid``);
* ``pe_per_mev`` (> 0): detected photoelectrons per MeV of electron kinetic energy at
  ``reference_energy_mev``;
* ``resolution_stochastic`` (√MeV, optional): the stochastic term a of
  σ/E = √(a²/E + b² + c²/E²); photostatistics give 1/√pe_per_mev, the rest is added as Gaussian
  smearing; a value below the photostatistics floor would need a negative width (error);
* ``resolution_constant`` (b, ≥ 0), ``dark_noise_pe`` (mean dark photoelectrons per event,
  ≥ 0; gives c = √dark/pe_per_mev);
* ``direction_resolution_deg`` (≥ 0): reconstruction term added to multiple scattering;
* ``vertex_resolution_mm`` (≥ 0): per-coordinate σ at the reference photoelectron count;
* ``trigger_threshold_mev``, ``trigger_width_mev``, ``analysis_threshold_mev`` (≥ 0);
* ``keep_untriggered`` (bool): keep events that fail (flagged ``triggered = 0``) or drop them.

``[media.<name>]`` defines a new medium (``density_g_cm3`` and ``composition``, a table of
formula = mass fraction, or elements = mass fraction) or, for a built-in name, overrides its
optical properties (``refractive_index``, ``light_yield_per_mev``, ``birks_kb_cm_per_mev``,
``alpha_quenching``, ``cherenkov_fraction``, ``variant``).
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any

from ..errors import ConfigError
from ..media import MEDIA, OPTICAL_KEYS, VARIANTS, Medium, make_medium, with_overrides

__all__ = ["ResponseConfig", "MediumConfig", "parse_response", "parse_media", "build_media",
           "VARIANT_DEFAULTS", "resolved", "response_toml_lines", "media_toml_lines"]

#: Per-variant defaults of the response parameters (fictional detectors; anchors: ≈ 6 hits/MeV
#: and ≈ 0.5–0.9 m vertex resolution at 10 MeV for a 40 %-coverage water detector, Hosaka et
#: al., PRD 73, 112001 (2006); ≈ 500 p.e./MeV and ≈ 10 cm at 1 MeV for a pseudocumene
#: detector, Bellini et al., PRD 89, 112007 (2014) — all from memory. The hybrid values are
#: invented for demos).
VARIANT_DEFAULTS: dict[str, dict[str, float]] = {
    "water": dict(pe_per_mev=6.0, reference_energy_mev=10.0, resolution_constant=0.01,
                  dark_noise_pe=2.0, direction_resolution_deg=10.0, vertex_resolution_mm=700.0,
                  trigger_threshold_mev=3.0, trigger_width_mev=0.4,
                  analysis_threshold_mev=3.5),
    "scintillator": dict(pe_per_mev=500.0, reference_energy_mev=1.0, resolution_constant=0.01,
                         dark_noise_pe=1.0, direction_resolution_deg=0.0,
                         vertex_resolution_mm=100.0, trigger_threshold_mev=0.08,
                         trigger_width_mev=0.01, analysis_threshold_mev=0.1),
    "hybrid": dict(pe_per_mev=60.0, reference_energy_mev=3.0, resolution_constant=0.01,
                   dark_noise_pe=1.5, direction_resolution_deg=15.0, vertex_resolution_mm=250.0,
                   trigger_threshold_mev=0.5, trigger_width_mev=0.08,
                   analysis_threshold_mev=0.6),
}

_NUMERIC = ("pe_per_mev", "reference_energy_mev", "resolution_stochastic",
            "resolution_constant", "dark_noise_pe", "direction_resolution_deg",
            "vertex_resolution_mm", "trigger_threshold_mev", "trigger_width_mev",
            "analysis_threshold_mev")


@dataclass(frozen=True)
class ResponseConfig:
    """Validated ``[response]`` section; None means "the variant's default"."""

    enabled: bool = True
    variant: str = "auto"
    keep_untriggered: bool = True
    pe_per_mev: float | None = None
    reference_energy_mev: float | None = None
    resolution_stochastic: float | None = None
    resolution_constant: float | None = None
    dark_noise_pe: float | None = None
    direction_resolution_deg: float | None = None
    vertex_resolution_mm: float | None = None
    trigger_threshold_mev: float | None = None
    trigger_width_mev: float | None = None
    analysis_threshold_mev: float | None = None


@dataclass(frozen=True)
class MediumConfig:
    """One ``[media.<name>]`` table: a new medium or property overrides of a built-in one."""

    name: str
    density_g_cm3: float | None
    composition: tuple[tuple[str, float], ...]
    properties: tuple[tuple[str, Any], ...]


def parse_response(t: Any) -> ResponseConfig:
    """Validate the ``[response]`` table (ConfigError naming ``response.<key>``)."""
    from ..config import _Section

    s = _Section(t, "response")
    vals: dict[str, Any] = {
        "enabled": s.boolean("enabled", True),
        "variant": s.string("variant", "auto", choices=("auto", *VARIANTS)),
        "keep_untriggered": s.boolean("keep_untriggered", True),
    }
    for k in _NUMERIC:
        lo_open = k in ("pe_per_mev", "reference_energy_mev")
        vals[k] = s.number(k, lo=0.0, hi=1e7, lo_open=lo_open, optional=True)
    s.finish()
    if vals["direction_resolution_deg"] is not None and vals["direction_resolution_deg"] > 180:
        raise ConfigError(f"response.direction_resolution_deg: {vals['direction_resolution_deg']}"
                          " is out of range; must be ≤ 180")
    return ResponseConfig(**vals)


def resolved(cfg: ResponseConfig, variant: str) -> dict[str, float]:
    """Response parameters with the variant's defaults filled in."""
    out = dict(VARIANT_DEFAULTS[variant])
    out["resolution_stochastic"] = None
    for k in _NUMERIC:
        v = getattr(cfg, k)
        if v is not None:
            out[k] = v
    return out


def parse_media(t: Any) -> tuple[MediumConfig, ...]:
    """Validate the ``[media]`` tables (one sub-table per medium)."""
    from ..config import _Section

    if not isinstance(t, dict):
        raise ConfigError(f"media: expected tables [media.<name>], got {t!r}")
    out = []
    for name in sorted(t):
        path = f"media.{name}"
        s = _Section(t[name], path)
        density = s.number("density_g_cm3", lo=0.0, hi=30.0, lo_open=True, optional=True)
        comp_raw = s._get("composition", None)
        props: dict[str, Any] = {}
        for k in OPTICAL_KEYS:
            lo_open = k in ("refractive_index", "alpha_quenching")
            hi = 1.0 if k == "cherenkov_fraction" else 1e7
            v = s.number(k, lo=0.0, hi=hi, lo_open=lo_open, optional=True)
            if v is not None:
                props[k] = v
        v = s.string("variant", choices=VARIANTS, optional=True)
        if v is not None:
            props["variant"] = v
        description = s.string("description", f"user-defined medium {name}")
        s.finish()
        if "refractive_index" in props and props["refractive_index"] < 1.0:
            raise ConfigError(f"{path}.refractive_index: {props['refractive_index']} must be ≥ 1")
        comp: tuple[tuple[str, float], ...] = ()
        if comp_raw is not None:
            if not isinstance(comp_raw, dict) or not comp_raw:
                raise ConfigError(f"{path}.composition: expected a table of formula = mass "
                                  f"fraction, got {comp_raw!r}")
            from ..config import _check_number

            comp = tuple((f, _check_number(f"{path}.composition.{f}", w, 0.0, 1.0))
                         for f, w in comp_raw.items())
        if name in MEDIA:
            if comp or density is not None:
                raise ConfigError(f"{path}: {name!r} is a built-in medium; only its optical "
                                  f"properties {list(OPTICAL_KEYS)} can be overridden (choose "
                                  "another name for a new composition)")
        elif not comp or density is None:
            raise ConfigError(f"{path}: a new medium needs density_g_cm3 and composition")
        if description != f"user-defined medium {name}":
            props["description"] = description
        out.append(MediumConfig(name, density, comp, tuple(sorted(props.items()))))
    return tuple(out)


def build_media(specs: tuple[MediumConfig, ...]) -> dict[str, Medium]:
    """Media defined or modified by the configuration, by name."""
    out: dict[str, Medium] = {}
    for m in specs:
        props = dict(m.properties)
        desc = props.pop("description", f"user-defined medium {m.name}")
        if m.name in MEDIA:
            out[m.name] = with_overrides(MEDIA[m.name], props)
        else:
            out[m.name] = make_medium(m.name, m.density_g_cm3, m.composition, desc,
                                      f"media.{m.name}", **props)
    return out


def response_toml_lines(cfg: ResponseConfig | None) -> list[str]:
    """TOML lines of the ``[response]`` section (None values omitted)."""
    from ..config import _toml_value

    if cfg is None:
        return []
    lines = ["[response]"]
    for f in fields(cfg):
        v = getattr(cfg, f.name)
        if v is not None:
            lines.append(f"{f.name} = {_toml_value(v)}")
    return lines + [""]


def media_toml_lines(specs: tuple[MediumConfig, ...]) -> list[str]:
    """TOML lines of the ``[media.<name>]`` tables."""
    from ..config import _key, _toml_value

    lines: list[str] = []
    for m in specs:
        lines.append(f"[media.{_key(m.name)}]")
        if m.density_g_cm3 is not None:
            lines.append(f"density_g_cm3 = {_toml_value(m.density_g_cm3)}")
        for k, v in m.properties:
            lines.append(f"{k} = {_toml_value(v)}")
        if m.composition:
            lines.append(f"\n[media.{_key(m.name)}.composition]")
            for f, w in m.composition:
                lines.append(f"{_key(f)} = {_toml_value(w)}")
        lines.append("")
    return lines
