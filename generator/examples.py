"""The demo configurations shipped with the package (fictional detectors at fictional sites).

They live in the repository's ``configs/`` folder, which the package data links as
``generator/data/examples`` so that an installed copy has them too. ``sunrecoil config
examples`` lists them and ``sunrecoil config show --example NAME`` prints one (paths inside it
resolved to the installed files).
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from .errors import ConfigError

__all__ = ["example_names", "example_path"]


def _folder() -> Path:
    return Path(str(resources.files("generator") / "data" / "examples"))


def example_names() -> list[str]:
    """Names of the shipped example configurations (file stems)."""
    return sorted(p.stem for p in _folder().glob("*.toml"))


def example_path(name: str) -> Path:
    """The file of example ``name`` (see :func:`example_names`)."""
    path = _folder() / f"{name.removesuffix('.toml')}.toml"
    if not path.is_file():
        raise ConfigError(f"--example: unknown example {name!r}; available: {example_names()}")
    return path
