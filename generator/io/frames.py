"""Event arrays as pandas DataFrames (optional extra ``pandas``).

Scalar fields become one column each; vector fields of shape (n, 3) become three columns
``<name>_x``, ``<name>_y``, ``<name>_z`` (detector frame, see the file's ``frame``
attribute); other vector shapes get ``<name>_0``, ``<name>_1``, ...
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..errors import SunrecoilError

__all__ = ["to_dataframe", "column_names", "require_pandas"]

_AXES = ("x", "y", "z")


def require_pandas() -> Any:
    """Import pandas or explain how to install it."""
    try:
        import pandas
    except ImportError:  # pragma: no cover - the test extra installs pandas
        raise SunrecoilError("DataFrame output needs pandas: pip install 'sunrecoil[pandas]'"
                             ) from None
    return pandas


def column_names(name: str, shape: tuple[int, ...]) -> list[str]:
    """DataFrame column names of a field with per-event ``shape``."""
    if not shape:
        return [name]
    if len(shape) != 1:
        raise SunrecoilError(f"field {name}: per-event shape {shape} has no flat columns")
    if shape[0] == 3:
        return [f"{name}_{a}" for a in _AXES]
    return [f"{name}_{i}" for i in range(shape[0])]


def to_dataframe(arrays: Mapping[str, np.ndarray], index_start: int = 0) -> Any:
    """A DataFrame of event arrays (columns in the given order, index = event number)."""
    pd = require_pandas()
    cols: dict[str, np.ndarray] = {}
    n = None
    for name, a in arrays.items():
        n = len(a) if n is None else n
        names = column_names(name, a.shape[1:])
        if a.ndim == 1:
            cols[name] = a
        else:
            for j, c in enumerate(names):
                cols[c] = a[:, j]
    index = pd.RangeIndex(index_start, index_start + (n or 0), name="event")
    return pd.DataFrame(cols, index=index, copy=False)
