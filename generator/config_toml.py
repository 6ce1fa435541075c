"""TOML output of a configuration (``sunrecoil config show`` and the ``config_toml`` attribute).

:func:`to_toml` writes the effective configuration so that it round-trips through
:func:`generator.config.parse_config`; strings use TOML 1.0 basic-string escaping (backslash,
quote and every control character), keys outside ``A–Z a–z 0–9 _ -`` are quoted.
"""

from __future__ import annotations

from dataclasses import fields
from typing import Any

__all__ = ["to_toml"]


def _toml_value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v)
    if isinstance(v, str):
        return _toml_string(v)
    if isinstance(v, tuple | list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {v!r} as TOML")


_TOML_ESCAPES = {"\\": "\\\\", '"': '\\"', "\b": "\\b", "\t": "\\t", "\n": "\\n",
                 "\f": "\\f", "\r": "\\r"}


def _toml_string(v: str) -> str:
    """A TOML basic string: backslash, quote and every control character escaped (TOML 1.0)."""
    out = []
    for ch in v:
        if ch in _TOML_ESCAPES:
            out.append(_TOML_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _key(k: str) -> str:
    """A bare TOML key when it only has A–Z, a–z, 0–9, '_' and '-'; else a quoted key."""
    bare = k and all(c.isascii() and (c.isalnum() or c in "_-") for c in k)
    return k if bare else _toml_string(k)


def to_toml(cfg: Any) -> str:
    """Write the effective configuration as TOML text (round-trips through :func:`parse_config`)."""
    lines: list[str] = []
    for section in fields(cfg):
        if section.name in ("source_file", "response", "media", "backgrounds", "sensitivity"):
            continue
        obj = getattr(cfg, section.name)
        lines.append(f"[{section.name}]")
        tables: list[tuple[str, tuple]] = []
        arrays: list[tuple[str, tuple]] = []
        for f in fields(obj):
            v = getattr(obj, f.name)
            if v is None:
                continue
            if f.name in ("scale", "flux_override"):
                tables.append((f.name, v))
            elif f.name == "custom":
                arrays.append((f.name, v))
            else:
                lines.append(f"{f.name} = {_toml_value(v)}")
        for name, pairs in tables:
            lines.append(f"\n[{section.name}.{name}]")
            for k, val in pairs:
                lines.append(f"{_key(k)} = {_toml_value(val)}")
        for name, items in arrays:
            for item in items:
                lines.append(f"\n[[{section.name}.{name}]]")
                for f in fields(item):
                    lines.append(f"{f.name} = {_toml_value(getattr(item, f.name))}")
        lines.append("")
    from .backgrounds.config import backgrounds_toml_lines
    from .response.config import media_toml_lines, response_toml_lines
    from .sensitivity_config import sensitivity_toml_lines

    return "\n".join(lines + response_toml_lines(cfg.response) + media_toml_lines(cfg.media)
                     + backgrounds_toml_lines(cfg.backgrounds)
                     + sensitivity_toml_lines(cfg.sensitivity))
