"""Standard-solar-model neutrino fluxes at 1 AU and their relative 1σ uncertainties.

One TOML file per model set under ``generator/data/fluxes/``:

* ``B16-GS98`` and ``B16-AGSS09met``: Vinyoles et al., ApJ 835, 202 (2017), arXiv:1611.09867;
* ``BS05-OP``: Bahcall, Serenelli & Basu, ApJ 621, L85 (2005), astro-ph/0412440.

The numbers in the files are from memory (the papers' tables were not re-read); each file
records that with ``verified = false``. Uncertainties are symmetric multiplicative 1σ factors;
where a paper gives asymmetric errors the mean of the two is used. Flux correlations
(given in the papers) are not represented here.
"""

from __future__ import annotations

import math
import tomllib
from functools import cache
from importlib import resources
from typing import Any

from generator.errors import ConfigError, DataFileError

__all__ = [
    "SOURCE_NAMES",
    "SOURCE_CODES",
    "FLUX_MODELS",
    "DEFAULT_FLUX_MODEL",
    "flux",
    "flux_uncertainty",
    "flux_table",
]

#: The eight standard solar-neutrino sources.
SOURCE_NAMES: tuple[str, ...] = ("pp", "pep", "hep", "7Be", "8B", "13N", "15O", "17F")

#: Integer code of each source (custom sources get 9, 10, ... from the pipeline).
SOURCE_CODES: dict[str, int] = {name: i + 1 for i, name in enumerate(SOURCE_NAMES)}

_MODEL_FILES: dict[str, str] = {
    "B16-GS98": "b16_gs98.toml",
    "B16-AGSS09met": "b16_agss09met.toml",
    "BS05-OP": "bs05_op.toml",
}

#: Available flux model sets.
FLUX_MODELS: tuple[str, ...] = tuple(_MODEL_FILES)

#: Default model set (high-Z B16).
DEFAULT_FLUX_MODEL: str = "B16-GS98"


def _check_model(model: str) -> str:
    if model not in _MODEL_FILES:
        raise ConfigError(f"unknown flux model {model!r}; allowed: {', '.join(FLUX_MODELS)}")
    return model


def _check_source(source: str) -> str:
    if source not in SOURCE_CODES:
        raise ConfigError(
            f"unknown solar-neutrino source {source!r}; allowed: {', '.join(SOURCE_NAMES)}"
        )
    return source


@cache
def _load(model: str) -> dict[str, tuple[float, float]]:
    """Read and validate one model file → {source: (flux, relative 1σ)}."""
    path = resources.files("generator") / "data" / "fluxes" / _MODEL_FILES[model]
    try:
        raw: dict[str, Any] = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, tomllib.TOMLDecodeError) as exc:
        raise DataFileError(f"flux table {path}: cannot read ({exc})") from exc
    table = raw.get("fluxes", {})
    out: dict[str, tuple[float, float]] = {}
    for name in SOURCE_NAMES:
        entry = table.get(name)
        if not isinstance(entry, list) or len(entry) not in (2, 3):
            raise DataFileError(
                f"flux table {path}: entry {name!r} must be [flux, sigma] or [flux, +s, -s]"
            )
        value = float(entry[0])
        sigma = sum(float(v) for v in entry[1:]) / (len(entry) - 1)
        if not (math.isfinite(value) and value > 0.0 and math.isfinite(sigma) and sigma >= 0.0):
            raise DataFileError(f"flux table {path}: entry {name!r} has invalid values {entry}")
        out[name] = (value, sigma)
    return out


def flux(source: str, model: str = DEFAULT_FLUX_MODEL) -> float:
    """Total flux of one source at 1 AU.

    Parameters
    ----------
    source : str
        One of :data:`SOURCE_NAMES`.
    model : str, optional
        One of :data:`FLUX_MODELS` (default ``"B16-GS98"``).

    Returns
    -------
    float
        Flux in cm⁻² s⁻¹.

    Raises
    ------
    generator.errors.ConfigError
        Unknown source or model name.
    """
    return _load(_check_model(model))[_check_source(source)][0]


def flux_uncertainty(source: str, model: str = DEFAULT_FLUX_MODEL) -> float:
    """Relative 1σ uncertainty of a source's flux (e.g. 0.12 for 12 %).

    Parameters
    ----------
    source : str
        One of :data:`SOURCE_NAMES`.
    model : str, optional
        One of :data:`FLUX_MODELS`.

    Returns
    -------
    float
        Relative uncertainty (dimensionless).
    """
    return _load(_check_model(model))[_check_source(source)][1]


def flux_table(model: str = DEFAULT_FLUX_MODEL) -> dict[str, tuple[float, float]]:
    """All fluxes of a model set.

    Parameters
    ----------
    model : str, optional
        One of :data:`FLUX_MODELS`.

    Returns
    -------
    dict
        ``{source: (flux [cm⁻² s⁻¹], relative 1σ)}`` (a copy).
    """
    return dict(_load(_check_model(model)))
