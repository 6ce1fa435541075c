"""Typed, validated reads of TOML tables for the configuration parsers.

:class:`_Section` reads one table key by key (string, boolean, number, integer with ranges and
choices) and reports unknown keys with the closest allowed one; every error is a
:class:`~generator.errors.ConfigError` naming the key path, the value (cut to about 80
characters) and what is allowed.
"""

from __future__ import annotations

import difflib
import math
from typing import Any

from .errors import ConfigError
from .userfiles import clip

__all__: list[str] = []


_MISSING = object()


def _fmt(value: Any) -> str:
    return clip(value)


def _suggest(word: str, allowed: Any) -> str:
    """' (did you mean X?)' for the closest allowed name, or ''."""
    close = difflib.get_close_matches(str(word), [str(a) for a in allowed], n=1, cutoff=0.6)
    return f" (did you mean {close[0]!r}?)" if close else ""


class _Section:
    """Reads typed values from one TOML table and reports unknown keys."""

    def __init__(self, table: Any, path: str):
        if not isinstance(table, dict):
            raise ConfigError(f"{path}: expected a table, got {_fmt(table)}")
        self.table = table
        self.path = path
        self.used: set[str] = set()

    def _get(self, key: str, default: Any) -> Any:
        self.used.add(key)
        if key in self.table:
            return self.table[key]
        if default is _MISSING:
            raise ConfigError(f"{self.path}.{key}: required key is missing")
        return default

    def string(self, key: str, default: Any = _MISSING, choices: tuple[str, ...] | None = None,
               optional: bool = False) -> str | None:
        v = self._get(key, None if optional and default is _MISSING else default)
        if v is None and optional:
            return None
        if not isinstance(v, str):
            raise ConfigError(f"{self.path}.{key}: expected a string, got {_fmt(v)}")
        if choices is not None and v not in choices:
            raise ConfigError(f"{self.path}.{key}: {_fmt(v)} is not allowed; use one of {choices}")
        if choices is None and not v.strip():
            raise ConfigError(f"{self.path}.{key}: must not be empty")
        return v

    def boolean(self, key: str, default: Any = _MISSING) -> bool:
        v = self._get(key, default)
        if not isinstance(v, bool):
            raise ConfigError(f"{self.path}.{key}: expected true or false, got {_fmt(v)}")
        return v

    def number(self, key: str, default: Any = _MISSING, *, lo: float | None = None,
               hi: float | None = None, lo_open: bool = False, optional: bool = False
               ) -> float | None:
        v = self._get(key, None if optional and default is _MISSING else default)
        if v is None and optional:
            return None
        return _check_number(f"{self.path}.{key}", v, lo, hi, lo_open)

    def integer(self, key: str, default: Any = _MISSING, *, lo: int | None = None,
                hi: int | None = None, optional: bool = False) -> int | None:
        v = self._get(key, None if optional and default is _MISSING else default)
        if v is None and optional:
            return None
        if isinstance(v, bool) or not isinstance(v, int):
            raise ConfigError(f"{self.path}.{key}: expected an integer, got {_fmt(v)}")
        if lo is not None and v < lo:
            raise ConfigError(f"{self.path}.{key}: {v} is below the minimum {lo}")
        if hi is not None and v > hi:
            raise ConfigError(f"{self.path}.{key}: {v} is above the maximum {hi}")
        return v

    def finish(self) -> None:
        unknown = sorted(set(self.table) - self.used)
        if unknown:
            hint = _suggest(unknown[0], self.used) if len(unknown) == 1 else ""
            raise ConfigError(
                f"{self.path}: unknown key(s) {clip(unknown)}{hint}; allowed keys: "
                f"{sorted(self.used)}"
            )


def _check_number(path: str, v: Any, lo: float | None, hi: float | None,
                  lo_open: bool = False) -> float:
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise ConfigError(f"{path}: expected a number, got {_fmt(v)}")
    try:
        v = float(v)
    except OverflowError:
        raise ConfigError(f"{path}: {_fmt(v)} is out of range (too large for a number)"
                          ) from None
    if not math.isfinite(v):
        raise ConfigError(f"{path}: {v} is not finite; a finite number is required")
    if lo is not None and (v < lo or (lo_open and v == lo)):
        rel = ">" if lo_open else "≥"
        raise ConfigError(f"{path}: {v} is out of range; must be {rel} {lo}")
    if hi is not None and v > hi:
        raise ConfigError(f"{path}: {v} is out of range; must be ≤ {hi}")
    return v
