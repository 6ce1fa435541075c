"""ROOT export: one flat TTree ``events`` written with uproot (extra ``root``).

One branch per event field (in the file's alphabetical order); vector fields (directions,
vertices) become three branches ``<name>_x``, ``<name>_y``, ``<name>_z``. Branch types are
the HDF5 dtypes (float32, float64, int16, int32, uint8). Each branch title is
``<description> [<unit>]`` from the field's attributes (the unit is empty for dimensionless
fields). The tree title names the tool and the unit convention. The root attributes of the
event file (configuration, seed, exposure, origin names …) are stored as strings
(``TObjString``) in the directory ``provenance``.
"""

from __future__ import annotations

import contextlib
import logging
from collections.abc import Iterator, Mapping
from typing import Any

import numpy as np

from .. import __version__

__all__ = ["RootWriter", "branch_layout"]

log = logging.getLogger(__name__)


def branch_layout(fields: Mapping[str, tuple[np.dtype, tuple[int, ...], str, str]]
                  ) -> dict[str, tuple[str, np.dtype, int | None, str]]:
    """Branch name → (field, dtype, component or None, title) for the given event fields.

    Parameters
    ----------
    fields : mapping
        Field name → (dtype, per-event shape, units, description).
    """
    out: dict[str, tuple[str, np.dtype, int | None, str]] = {}
    for name, (dtype, shape, units, description) in fields.items():
        if shape == ():
            out[name] = (name, dtype, None, f"{description} [{units}]")
        elif shape == (3,):
            for i, axis in enumerate("xyz"):
                out[f"{name}_{axis}"] = (name, dtype, i,
                                         f"{description}, {axis} component [{units}]")
        else:
            log.warning("field %s of shape %s has no flat ROOT branch layout; skipped",
                        name, shape)
    return out


@contextlib.contextmanager
def _branch_titles(titles: Mapping[str, str]) -> Iterator[None]:
    """Give uproot's new branches our titles (uproot has no public option for them).

    uproot titles a branch ``name/T`` (the leaf list); ROOT reads the leaves, not the branch
    title, so a descriptive title is safe. If uproot's internals change the default titles
    are kept and a warning is logged.
    """
    try:
        from uproot.writing import _cascadetree as ct
        original = ct.Tree._branch_np
    except (ImportError, AttributeError):  # pragma: no cover - other uproot versions
        log.warning("this uproot version cannot set branch titles; units are in provenance")
        yield
        return

    def titled(self: Any, branch_name: str, *args: Any, **kwargs: Any) -> dict:
        datum = original(self, branch_name, *args, **kwargs)
        if branch_name in titles and isinstance(datum, dict) and "fTitle" in datum:
            datum["fTitle"] = titles[branch_name]
        return datum

    ct.Tree._branch_np = titled
    try:
        yield
    finally:
        ct.Tree._branch_np = original


class RootWriter:
    """Streams event fields into a flat TTree."""

    def __init__(self, path: str, attrs: Mapping[str, Any], origin_names: Mapping[int, str],
                 source: str, fields: Mapping[str, tuple[np.dtype, tuple[int, ...], str, str]]):
        import uproot

        self.fields = tuple(fields)
        self.optional_fields = ()
        self._layout = branch_layout(fields)
        self._file = uproot.recreate(path)
        try:
            with _branch_titles({b: v[3] for b, v in self._layout.items()}):
                self._tree = self._file.mktree(
                    "events", {b: v[1] for b, v in self._layout.items()},
                    title=f"sunrecoil {__version__} events (MeV, mm, UTC s since the Unix epoch)")
            prov = {str(k): str(v) for k, v in attrs.items()}
            prov["origin_names"] = "\n".join(f"{k}={v}" for k, v in sorted(origin_names.items()))
            prov["source_file"] = source
            for key, text in prov.items():
                self._file[f"provenance/{key}"] = text
        except BaseException:
            self._file.close()
            raise

    def write(self, chunk: Mapping[str, np.ndarray], first: int) -> None:
        """Append a chunk of events (``first`` is unused: rows are appended in order)."""
        data = {}
        for branch, (name, dtype, comp, _) in self._layout.items():
            col = chunk[name] if comp is None else chunk[name][:, comp]
            data[branch] = np.ascontiguousarray(col, dtype=dtype)
        if next(iter(data.values())).size:
            self._tree.extend(data)

    def close(self) -> None:
        """Finish the file."""
        self._file.close()

    abort = close
