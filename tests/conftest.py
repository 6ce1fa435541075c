"""Shared fixtures: small, fast configurations built from the embedded default."""

from __future__ import annotations

import os
import tomllib
from pathlib import Path

import pytest

from generator.config import Config, default_config_text, parse_config


@pytest.fixture(autouse=True, scope="session")
def _cache_dir(tmp_path_factory: pytest.TempPathFactory):
    """Keep the night-table cache of the test session in a private directory."""
    if "SUNRECOIL_CACHE" not in os.environ:
        os.environ["SUNRECOIL_CACHE"] = str(tmp_path_factory.mktemp("cache"))
    yield


def make_config(overrides: dict | None = None) -> Config:
    """The default configuration with section-level overrides applied."""
    data = tomllib.loads(default_config_text())
    for section, values in (overrides or {}).items():
        data.setdefault(section, {}).update(values)
    return parse_config(data, Path.cwd())


@pytest.fixture(scope="session")
def small_config() -> Config:
    """Default detector, one month of exposure, all sources, 0.5 MeV threshold."""
    return make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-02-01T00:00:00Z"},
        "interaction": {"threshold_mev": 0.5},
        "run": {"events": 20000, "chunk_size": 4096, "seed": 12345},
    })
