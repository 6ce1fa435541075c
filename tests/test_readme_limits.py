"""The limits in the README's configuration table are the limits of the code.

Every row of the table whose "allowed" column is a plain numeric range (``[a, b]``, ``(a, b]``,
``≥ a``, ``> a``, ``a … b``, ``a–b``) is checked at both ends through :func:`parse_config`:
a value on a closed end is accepted, a value just outside (or on an open end) is refused with an
error that names the key.
"""

from __future__ import annotations

import math
import re
import tomllib
from pathlib import Path

import pytest

from generator.config import default_config_text, parse_config
from generator.errors import ConfigError

README = Path(__file__).resolve().parents[1] / "README.md"
_SUP = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-")
_NUM = r"[−-]?[0-9][0-9.]*(?:[⁰¹²³⁴⁵⁶⁷⁸⁹]+)?(?:[−-]1)?"


def _number(text: str) -> float:
    """'10¹²' → 1e12, '2¹²⁸−1' → 2**128 − 1, '−90' → −90."""
    t = text.replace("−", "-").strip()
    m = re.fullmatch(r"(-?\d+)([⁰¹²³⁴⁵⁶⁷⁸⁹]+)(-1)?", t)
    if m:
        value = int(m.group(1)) ** int(m.group(2).translate(_SUP))
        return value - 1 if m.group(3) else value
    return float(t) if "." in t else int(t)


def _rows() -> list[tuple[str, str]]:
    text = README.read_text("utf-8")
    section = text.split("## Configuration reference", 1)[1].split("\n## ", 1)[0]
    out = []
    for line in section.splitlines():
        m = re.match(r"\|\s*`([a-z_]+\.[a-z0-9_]+)`\s*\|([^|]*)\|", line)
        if m:
            out.append((m.group(1), m.group(2).strip()))
    return out


def _range(allowed: str):
    """(lo, lo_open, hi, hi_open) of a plain range, or None."""
    a = allowed.split(" for ")[0].strip()
    m = re.fullmatch(rf"([\[(])\s*({_NUM}),\s*({_NUM})\s*([\])])", a)
    if m:
        return _number(m.group(2)), m.group(1) == "(", _number(m.group(3)), m.group(4) == ")"
    m = re.fullmatch(rf"({_NUM})\s*(?:…|–)\s*({_NUM})", a)
    if m:
        return _number(m.group(1)), False, _number(m.group(2)), False
    m = re.fullmatch(rf"(≥|>)\s*({_NUM})(?:,.*)?", a)
    if m:
        return _number(m.group(2)), m.group(1) == ">", None, False
    return None


CASES = [(key, r) for key, allowed in _rows() if (r := _range(allowed)) is not None]


def test_table_has_checkable_rows():
    keys = {k for k, _ in CASES}
    assert {"detector.fiducial_radius_m", "detector.depth_m", "interaction.threshold_mev",
            "run.events", "run.chunk_size", "run.seed"} <= keys, keys


def _accepts(key: str, value) -> bool:
    data = tomllib.loads(default_config_text())
    section, name = key.split(".")
    data.setdefault(section, {})[name] = value
    try:
        parse_config(data)
    except ConfigError as exc:
        assert key in str(exc) or section in str(exc), str(exc)
        return False
    return True


def _integer_key(key: str) -> bool:
    """True when the code reads the key as an integer (a float is refused as such)."""
    data = tomllib.loads(default_config_text())
    section, name = key.split(".")
    data.setdefault(section, {})[name] = 1.5
    try:
        parse_config(data)
    except ConfigError as exc:
        return "integer" in str(exc)
    return False


def _step(bound, integer: bool):
    return 1 if integer else max(1e-9, abs(bound) * 1e-9)


@pytest.mark.parametrize("key,limits", CASES, ids=[k for k, _ in CASES])
def test_readme_limit_is_the_code_limit(key, limits):
    lo, lo_open, hi, hi_open = limits
    integer = isinstance(lo, int) and (hi is None or isinstance(hi, int)) and _integer_key(key)
    cast = int if integer else float
    if lo is not None and math.isfinite(lo):
        eps = _step(lo, integer)
        if lo_open:
            assert not _accepts(key, cast(lo)), f"{key} = {lo} should be refused"
            assert _accepts(key, cast(lo + eps) if integer else lo + max(eps, 1e-6)), key
        else:
            assert _accepts(key, cast(lo)), f"{key} = {lo} should be accepted"
            assert not _accepts(key, cast(lo - eps)), f"{key} below {lo} should be refused"
    if hi is not None:
        eps = _step(hi, integer)
        if hi_open:
            assert not _accepts(key, cast(hi)), f"{key} = {hi} should be refused"
        else:
            assert _accepts(key, cast(hi)), f"{key} = {hi} should be accepted"
        assert not _accepts(key, cast(hi + eps) if integer else hi * (1 + 1e-9) + 1e-9), \
            f"{key} above {hi} should be refused"
