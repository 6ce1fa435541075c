"""Run configuration: TOML files parsed into frozen dataclasses and validated at the boundary.

Sections ``[detector]``, ``[exposure]``, ``[sources]``, ``[oscillation]``, ``[interaction]``,
``[run]``, ``[output]``, and the optional ``[response]`` and ``[media.<name>]`` (parsed in
:mod:`generator.response.config`), ``[backgrounds]`` (:mod:`generator.backgrounds.config`) and
``[sensitivity]`` (:mod:`generator.sensitivity_config`, used by ``sunrecoil sensitivity``).
The embedded default (``generator/data/default.toml``, a fictional mid-size water-Cherenkov
detector at a fictional site) is used when no file is given; a user file is merged over it key
by key (for ``[exposure]`` a file that sets any of ``stop_utc``, ``live_days`` or ``run_list``
replaces the default's choice of time window).

Every error is a :class:`~generator.errors.ConfigError` that names the key path, the bad value
and what is allowed.
"""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

from .errors import ConfigError
from .spectra.boron8_measured import B8_DEFAULT, B8_VARIANTS
from .userfiles import clip, read_user_text

__all__ = ["Config", "DetectorConfig", "ExposureConfig", "SourcesConfig", "CustomSourceConfig",
           "OscillationConfig", "InteractionConfig", "RunConfig", "OutputConfig", "load_config",
           "parse_config", "default_config_text", "to_toml", "check_data_files", "MAX_EVENTS",
           "MAX_CHUNK_SIZE"]

KNOWN_SOURCES = ("pp", "pep", "hep", "7Be", "8B", "13N", "15O", "17F")
RESERVED_SECTIONS: dict[str, str] = {}
COMPRESSIONS = ("deflate", "blosc-lz4", "zstd", "lzf", "gzip", "none")
COUNT_MODES = ("fixed", "expected", "poisson")
#: Most events one run may produce (every count mode and --events).
MAX_EVENTS = 10**12
#: Largest run.chunk_size: events in flight cost about 540 bytes each (all fields plus the
#: rejection candidates), so 2**22 events are about 2.3 GB.
MAX_CHUNK_SIZE = 1 << 22
#: Lowest generation threshold (MeV). Recoils below it need neutrinos under 0.08 MeV and
#: atomic-binding corrections (keV scale) that the free-electron cross sections do not include.
MIN_THRESHOLD_MEV = 0.02


# --------------------------------------------------------------------------- dataclasses
@dataclass(frozen=True)
class DetectorConfig:
    """Detector: medium, fiducial geometry (m) and site (degrees, m)."""

    name: str
    medium: str
    fiducial_shape: str
    fiducial_radius_m: float
    fiducial_half_height_m: float
    latitude_deg: float
    longitude_deg: float
    depth_m: float
    target_mass_t: float | None = None
    target_electrons: float | None = None
    fiducial_half_lengths_m: tuple[float, float, float] | None = None   # box only


@dataclass(frozen=True)
class ExposureConfig:
    """Exposure window: either [start_utc, stop_utc], start_utc + live_days, or a run list."""

    start_utc: str | None
    stop_utc: str | None
    live_days: float | None
    run_list: str | None


@dataclass(frozen=True)
class CustomSourceConfig:
    """A user-defined source.

    Spectrum table file, flux at 1 AU (cm⁻² s⁻¹) and the standard source whose solar
    production region it shares (used for the MSW average).
    """

    name: str
    spectrum_file: str
    flux: float
    production_region: str


@dataclass(frozen=True)
class SourcesConfig:
    """Which SSM sources, which flux model, scale factors and absolute overrides."""

    flux_model: str
    include: tuple[str, ...]
    b8_shape: str
    scale: tuple[tuple[str, float], ...]
    flux_override: tuple[tuple[str, float], ...]
    custom: tuple[CustomSourceConfig, ...]


@dataclass(frozen=True)
class OscillationConfig:
    """Flavour conversion: preset name plus optional per-parameter overrides."""

    enabled: bool
    preset: str
    earth_matter: bool
    solar_profile: str
    sin2_theta12: float | None
    sin2_theta13: float | None
    sin2_theta23: float | None
    delta_cp_deg: float | None
    dm2_21: float | None
    dm2_31: float | None


@dataclass(frozen=True)
class InteractionConfig:
    """ν–e scattering model and the generation threshold on the recoil kinetic energy (MeV)."""

    corrections: str
    threshold_mev: float
    magnetic_moment: float
    nsi_eps_l: tuple[float, float, float]
    nsi_eps_r: tuple[float, float, float]


@dataclass(frozen=True)
class RunConfig:
    """Event count, count mode, seed and chunk size."""

    events: int
    count_mode: str
    seed: int | None
    chunk_size: int


@dataclass(frozen=True)
class OutputConfig:
    """Output file path and compression filter."""

    path: str
    compression: str
    compression_level: int | None


@dataclass(frozen=True)
class Config:
    """The complete, validated configuration of one run."""

    detector: DetectorConfig
    exposure: ExposureConfig
    sources: SourcesConfig
    oscillation: OscillationConfig
    interaction: InteractionConfig
    run: RunConfig
    output: OutputConfig
    response: Any = None              # generator.response.config.ResponseConfig
    media: tuple = ()                 # generator.response.config.MediumConfig entries
    backgrounds: Any = None           # generator.backgrounds.config.BackgroundsConfig
    source_file: str | None = None
    sensitivity: Any = None           # generator.sensitivity_config.SensitivityConfig


# --------------------------------------------------------------------------- value checks
# (typed readers of one TOML table, in generator/config_checks.py; the section parsers of the
# response and background stages import them from here)
from .config_checks import (  # noqa: E402
    _MISSING,  # noqa: F401
    _check_number,
    _fmt,
    _Section,
    _suggest,
)


# --------------------------------------------------------------------------- sections
def _parse_detector(t: Any, media: tuple[str, ...] = ()) -> DetectorConfig:
    s = _Section(t, "detector")
    from .geometry import SHAPES
    from .media import MEDIA

    cfg = DetectorConfig(
        name=s.string("name"),
        medium=s.string("medium", choices=tuple(sorted({*MEDIA, *media}))),
        fiducial_shape=s.string("fiducial_shape", choices=SHAPES),
        fiducial_radius_m=s.number("fiducial_radius_m", lo=0.0, hi=1000.0, lo_open=True),
        fiducial_half_height_m=s.number("fiducial_half_height_m", 0.0, lo=0.0, hi=1000.0),
        latitude_deg=s.number("latitude_deg", lo=-90.0, hi=90.0),
        longitude_deg=s.number("longitude_deg", lo=-180.0, hi=180.0),
        depth_m=s.number("depth_m", 0.0, lo=0.0, hi=10000.0),
        target_mass_t=s.number("target_mass_t", lo=0.0, hi=1e9, lo_open=True, optional=True),
        target_electrons=s.number("target_electrons", lo=0.0, hi=1e45, lo_open=True,
                                  optional=True),
        fiducial_half_lengths_m=_box(s._get("fiducial_half_lengths_m", None)),
    )
    s.finish()
    if cfg.target_mass_t is not None and cfg.target_electrons is not None:
        raise ConfigError("detector.target_electrons: give either target_mass_t or "
                          "target_electrons, not both")
    if cfg.fiducial_shape == "box" and cfg.fiducial_half_lengths_m is None:
        raise ConfigError("detector.fiducial_half_lengths_m: required for a box (three half "
                          "lengths [x, y, z] in m)")
    if cfg.fiducial_shape == "cylinder" and cfg.fiducial_half_height_m <= 0.0:
        raise ConfigError(
            f"detector.fiducial_half_height_m: {cfg.fiducial_half_height_m} must be > 0 "
            "for a cylinder"
        )
    return cfg


def _box(v: Any) -> tuple[float, float, float] | None:
    if v is None:
        return None
    if not isinstance(v, list) or len(v) != 3:
        raise ConfigError(f"detector.fiducial_half_lengths_m: expected three numbers [x, y, z] "
                          f"in m, got {_fmt(v)}")
    a, b, c = (_check_number(f"detector.fiducial_half_lengths_m[{i}]", x, 0.0, 1000.0, True)
               for i, x in enumerate(v))
    return (a, b, c)


def _parse_exposure(t: Any, base_dir: Path | None) -> ExposureConfig:
    from .exposure import parse_utc

    s = _Section(t, "exposure")
    start = s.string("start_utc", optional=True)
    stop = s.string("stop_utc", optional=True)
    live = s.number("live_days", lo=0.0, hi=200.0 * 366.0, lo_open=True, optional=True)
    run_list = s.string("run_list", optional=True)
    s.finish()
    if run_list is not None:
        if start is not None or stop is not None or live is not None:
            raise ConfigError(
                "exposure.run_list: cannot be combined with start_utc/stop_utc/live_days; "
                "give either a run list or a time window"
            )
        p = Path(run_list)
        if not p.is_absolute() and base_dir is not None:
            p = base_dir / p
        run_list = str(p)
        return ExposureConfig(None, None, None, run_list)
    if start is None:
        raise ConfigError("exposure.start_utc: required (or give exposure.run_list)")
    t0 = parse_utc(start, "exposure.start_utc")
    if (stop is None) == (live is None):
        raise ConfigError(
            "exposure: give exactly one of stop_utc or live_days together with start_utc "
            f"(got stop_utc={stop!r}, live_days={live!r})"
        )
    if stop is not None:
        t1 = parse_utc(stop, "exposure.stop_utc")
        if t1 <= t0:
            raise ConfigError(
                f"exposure.stop_utc: {stop!r} is not after start_utc {start!r}; "
                "the time range must be increasing"
            )
    else:
        from .exposure import MAX_UTC

        if t0 + live * 86400.0 > MAX_UTC:
            raise ConfigError(
                f"exposure.live_days: {live} days from {start!r} runs past 2200-01-01"
            )
    return ExposureConfig(start, stop, live, None)


def _pairs(t: Any, path: str, lo: float, lo_open: bool) -> tuple[tuple[str, float], ...]:
    if not isinstance(t, dict):
        raise ConfigError(f"{path}: expected a table of source = number, got {_fmt(t)}")
    out = []
    for k, v in t.items():
        out.append((k, _check_number(f"{path}.{k}", v, lo, 1e30, lo_open)))
    return tuple(sorted(out))


def _parse_sources(t: Any, base_dir: Path | None) -> SourcesConfig:
    s = _Section(t, "sources")
    flux_model = s.string("flux_model")
    include = s._get("include", list(KNOWN_SOURCES))
    if not isinstance(include, list) or not all(isinstance(x, str) for x in include):
        raise ConfigError(f"sources.include: expected a list of source names, got {_fmt(include)}")
    b8_shape = s.string("b8_shape", B8_DEFAULT, choices=B8_VARIANTS)
    scale = _pairs(s._get("scale", {}), "sources.scale", 0.0, False)
    override = _pairs(s._get("flux_override", {}), "sources.flux_override", 0.0, False)
    custom_raw = s._get("custom", [])
    s.finish()
    if not isinstance(custom_raw, list):
        raise ConfigError(f"sources.custom: expected an array of tables, got {_fmt(custom_raw)}")
    customs = []
    for i, c in enumerate(custom_raw):
        cs = _Section(c, f"sources.custom[{i}]")
        name = cs.string("name")
        f = cs.string("spectrum_file")
        flux = cs.number("flux", lo=0.0, hi=1e30, lo_open=True)
        region = cs.string("production_region", "8B", choices=KNOWN_SOURCES)
        cs.finish()
        p = Path(f)
        if not p.is_absolute() and base_dir is not None:
            p = base_dir / p
        if name in KNOWN_SOURCES:
            raise ConfigError(
                f"sources.custom[{i}].name: {name!r} clashes with a standard source name"
            )
        if len(name) > 64 or name != name.strip() or any(not c.isprintable() for c in name):
            raise ConfigError(f"sources.custom[{i}].name: {_fmt(name)}; allowed: 1–64 printable "
                              "characters (any script) without leading or trailing spaces")
        customs.append(CustomSourceConfig(name, str(p), flux, region))
    names = [c.name for c in customs]
    if len(set(names)) != len(names):
        raise ConfigError(f"sources.custom: duplicate names {_fmt(names)}; each custom source "
                          "needs its own name")
    for i, name in enumerate(include):
        if name not in KNOWN_SOURCES:
            raise ConfigError(
                f"sources.include[{i}]: unknown source {name!r}; allowed: {list(KNOWN_SOURCES)}"
            )
    if len(set(include)) != len(include):
        raise ConfigError(f"sources.include: duplicate entries in {include}")
    allowed = set(include) | set(names)
    for path, pairs in (("sources.scale", scale), ("sources.flux_override", override)):
        for k, _ in pairs:
            if k not in allowed:
                raise ConfigError(
                    f"{path}.{k}: not an included source; included: {sorted(allowed)}"
                )
    if not include and not customs:
        raise ConfigError("sources.include: no source selected (empty list and no custom source)")
    from .spectra import FLUX_MODELS

    if flux_model not in FLUX_MODELS:
        raise ConfigError(
            f"sources.flux_model: unknown model {flux_model!r}; allowed: {list(FLUX_MODELS)}"
        )
    return SourcesConfig(flux_model, tuple(include), b8_shape, scale, override, tuple(customs))


def _parse_oscillation(t: Any) -> OscillationConfig:
    s = _Section(t, "oscillation")
    enabled = s.boolean("enabled", True)
    preset = s.string("preset", "nufit-6.0")
    earth = s.boolean("earth_matter", True)
    profile = s.string("solar_profile", "ssm", choices=("ssm", "exponential"))
    vals = {}
    for k in ("sin2_theta12", "sin2_theta13", "sin2_theta23"):
        vals[k] = s.number(k, lo=0.0, hi=1.0, optional=True)
    vals["delta_cp_deg"] = s.number("delta_cp_deg", lo=-360.0, hi=360.0, optional=True)
    vals["dm2_21"] = s.number("dm2_21", lo=0.0, hi=1.0, lo_open=True, optional=True)
    vals["dm2_31"] = s.number("dm2_31", lo=-1.0, hi=1.0, optional=True)
    s.finish()
    if vals["dm2_31"] == 0.0:
        raise ConfigError("oscillation.dm2_31: 0.0 is not allowed; give a non-zero splitting (eV²)")
    from .oscillation import PRESETS, RENAMED_PRESETS

    if preset not in PRESETS:
        new = RENAMED_PRESETS.get(preset)
        hint = f" ({preset!r} is now {new!r})" if new else ""
        raise ConfigError(
            f"oscillation.preset: unknown preset {preset!r}; allowed: {list(PRESETS)}{hint}"
        )
    return OscillationConfig(enabled, preset, earth, profile, **vals)


def _triple(v: Any, path: str) -> tuple[float, float, float]:
    if not isinstance(v, list) or len(v) != 3:
        raise ConfigError(f"{path}: expected a list of three numbers [ee, μμ, ττ], got {_fmt(v)}")
    a, b, c = (_check_number(f"{path}[{i}]", x, -10.0, 10.0) for i, x in enumerate(v))
    return (a, b, c)


def _parse_interaction(t: Any) -> InteractionConfig:
    s = _Section(t, "interaction")
    cfg = InteractionConfig(
        corrections=s.string("corrections", "radiative", choices=("radiative", "tree")),
        threshold_mev=s.number("threshold_mev", lo=MIN_THRESHOLD_MEV, hi=15.0),
        magnetic_moment=s.number("magnetic_moment", 0.0, lo=0.0, hi=1e4),
        nsi_eps_l=_triple(s._get("nsi_eps_l", [0.0, 0.0, 0.0]), "interaction.nsi_eps_l"),
        nsi_eps_r=_triple(s._get("nsi_eps_r", [0.0, 0.0, 0.0]), "interaction.nsi_eps_r"),
    )
    s.finish()
    return cfg


def _parse_run(t: Any) -> RunConfig:
    s = _Section(t, "run")
    cfg = RunConfig(
        events=s.integer("events", lo=1, hi=MAX_EVENTS),
        count_mode=s.string("count_mode", "fixed", choices=COUNT_MODES),
        seed=s.integer("seed", lo=0, hi=2**128 - 1, optional=True),
        chunk_size=s.integer("chunk_size", 1 << 18, lo=1, hi=MAX_CHUNK_SIZE),
    )
    s.finish()
    return cfg


def _parse_output(t: Any) -> OutputConfig:
    s = _Section(t, "output")
    cfg = OutputConfig(
        path=s.string("path"),
        compression=s.string("compression", "deflate", choices=COMPRESSIONS),
        compression_level=s.integer("compression_level", lo=0, hi=9, optional=True),
    )
    s.finish()
    return cfg


# --------------------------------------------------------------------------- loading
def default_config_text() -> str:
    """Return the text of the embedded default configuration (TOML)."""
    return resources.files("generator").joinpath("data/default.toml").read_text("utf-8")


def _merge(base: dict, over: dict) -> dict:
    out = dict(base)
    for k, v in over.items():
        if k == "exposure" and isinstance(v, dict) and isinstance(out.get(k), dict):
            keep = dict(out[k])
            if any(x in v for x in ("stop_utc", "live_days", "run_list")):
                for x in ("stop_utc", "live_days", "run_list"):
                    keep.pop(x, None)
            if "run_list" in v:
                keep.pop("start_utc", None)
            keep.update(v)
            out[k] = keep
        elif isinstance(v, dict) and isinstance(out.get(k), dict) and k != "custom":
            out[k] = _merge(out[k], v)
        else:
            out[k] = v
    return out


def parse_config(data: dict, base_dir: Path | None = None, source_file: str | None = None
                 ) -> Config:
    """Validate a configuration mapping (already merged with defaults) into a :class:`Config`.

    Parameters
    ----------
    data : dict
        Parsed TOML document.
    base_dir : pathlib.Path, optional
        Directory against which relative data-file paths are resolved.
    source_file : str, optional
        Name of the file the data came from (recorded only).

    Raises
    ------
    ConfigError
        Naming the key path, the bad value and what is allowed.
    """
    known = ("detector", "exposure", "sources", "oscillation", "interaction", "run", "output")
    optional = ("response", "media", "backgrounds", "sensitivity")
    from .backgrounds.config import check_vessels, parse_backgrounds
    from .response.config import parse_media, parse_response
    from .sensitivity_config import parse_sensitivity

    for k in [k for k in data if k not in optional]:
        if k in RESERVED_SECTIONS:
            raise ConfigError(f"{k}: section not supported yet ({RESERVED_SECTIONS[k]})")
        if k not in known:
            raise ConfigError(f"{clip(k)}: unknown section{_suggest(k, known)}; allowed "
                              f"sections: {[*known, *optional]}")
    for k in known:
        if k not in data:
            raise ConfigError(f"{k}: required section is missing")
    media = parse_media(data.get("media", {}))
    detector = _parse_detector(data["detector"], tuple(m.name for m in media))
    backgrounds = parse_backgrounds(data.get("backgrounds"))
    check_vessels(backgrounds, detector)
    return Config(
        detector=detector,
        exposure=_parse_exposure(data["exposure"], base_dir),
        sources=_parse_sources(data["sources"], base_dir),
        oscillation=_parse_oscillation(data["oscillation"]),
        interaction=_parse_interaction(data["interaction"]),
        run=_parse_run(data["run"]),
        output=_parse_output(data["output"]),
        response=parse_response(data.get("response", {"enabled": False})),
        media=media,
        backgrounds=backgrounds,
        source_file=source_file,
        sensitivity=parse_sensitivity(data.get("sensitivity"), base_dir),
    )


def load_config(path: str | Path | None = None, *, under: dict | None = None) -> Config:
    """Load the embedded default configuration, merged with the TOML file ``path`` if given.

    ``under`` replaces the embedded default as the mapping the file is merged over (e.g. an
    event file's recorded configuration, for ``sunrecoil reweight``).

    Raises
    ------
    ConfigError
        For unreadable files, TOML syntax errors and invalid values.
    """
    default = tomllib.loads(default_config_text()) if under is None else under
    if path is None:
        return parse_config(default, None, None)
    p = Path(path)
    text = read_user_text(p, "config file", ConfigError)
    try:
        user = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"config file {clip(str(p))}: invalid TOML ({exc})") from None
    except RecursionError:
        raise ConfigError(f"config file {clip(str(p))}: tables or arrays nested too deeply"
                          ) from None
    # relative paths inside the file are relative to the folder the file is named in (as
    # written: a symbolic link to the file is not resolved)
    base = Path(os.path.abspath(p)).parent
    try:
        return parse_config(_merge(default, user), base, str(p))
    except RecursionError:
        raise ConfigError(f"config file {clip(str(p))}: values nested too deeply") from None


def check_data_files(cfg: Config) -> None:
    """Read and validate every data file a configuration names (run list, custom spectra).

    Raises
    ------
    DataFileError
        For a missing, unreadable or malformed file, naming it.
    """
    from .exposure import load_run_list
    from .spectra import load_custom_spectrum

    if cfg.exposure.run_list is not None:
        load_run_list(cfg.exposure.run_list)
    for c in cfg.sources.custom:
        load_custom_spectrum(c.spectrum_file, c.name)


# --------------------------------------------------------------------------- TOML output
# (in generator/config_toml.py; re-exported here, the names other modules import from config)
from .config_toml import _key, _toml_string, _toml_value, to_toml  # noqa: E402,F401
