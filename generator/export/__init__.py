"""Exports of event files for downstream simulation: HepMC3 ASCII and flat ROOT trees.

``export_file(src, out, fmt)`` streams the event file through
:meth:`generator.io.EventFile.iter_chunks` into a format writer (one module per format:
:mod:`.hepmc3`, :mod:`.root`), into a temporary file beside the target that replaces the
target only when the export is complete. Memory stays bounded by the chunk size.

Example::

    from generator.export import export_file
    export_file("outputs/events.h5", "outputs/events.hepmc3", "hepmc3")
"""

from __future__ import annotations

import contextlib
import importlib
import os
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from ..errors import DataFileError, InputError
from ..io.lock import temp_path_for
from ..io.preflight import check_target

if TYPE_CHECKING:
    from ..io.reader import EventFile
from .records import REQUIRED_FIELDS

__all__ = ["FORMATS", "ExportSummary", "export_file", "require_extra"]

#: Export formats: name → (module that writes it, Python package needed, pip extra).
FORMATS: dict[str, tuple[str, str | None, str]] = {
    "hepmc3": ("hepmc3", None, "hepmc3"),
    "root": ("root", "uproot", "root"),
}

#: Default events per chunk of an export (bounded memory: ~25 MB of HepMC3 text).
DEFAULT_CHUNK = 1 << 14


@dataclass(frozen=True)
class ExportSummary:
    """What an export wrote."""

    path: Path
    format: str
    n_events: int


def require_extra(package: str, extra: str, what: str) -> None:
    """Raise :class:`InputError` naming the pip extra when ``package`` is not importable."""
    try:
        importlib.import_module(package)
    except ImportError:
        raise InputError(f"{what} needs the Python package {package!r}; install it with "
                         f"pip install 'sunrecoil[{extra}]'") from None


def _field_info(ev: EventFile) -> dict:
    info = {}
    for name in ev.fields:
        ds = ev.events[name]
        desc = ds.attrs.get("description", "")
        info[name] = (ds.dtype, ds.shape[1:], ev.units(name) if "units" in ds.attrs else "",
                      desc.decode() if isinstance(desc, bytes) else str(desc))
    return info


def export_file(src: str | os.PathLike[str], out: str | os.PathLike[str], fmt: str, *,
                force: bool = False, chunk_size: int = DEFAULT_CHUNK,
                progress: Callable[[int], None] | None = None) -> ExportSummary:
    """Export an event file to another format.

    Parameters
    ----------
    src : path
        sunrecoil HDF5 event file.
    out : path
        Output file; replaced only with ``force``.
    fmt : str
        One of :data:`FORMATS` (``"hepmc3"``, ``"root"``).
    force : bool
        Replace an existing output file.
    chunk_size : int
        Events read and written per step (memory bound).
    progress : callable, optional
        Called with the number of events after each chunk.

    Returns
    -------
    ExportSummary

    Raises
    ------
    InputError
        Unknown format, missing optional package, unreadable or non-sunrecoil input,
        existing output without ``force``; nothing is written.
    """
    if fmt not in FORMATS:
        raise InputError(f"export format {str(fmt)[:40]!r} is not known; use one of "
                         f"{sorted(FORMATS)}")
    if not isinstance(chunk_size, int) or chunk_size < 1:
        raise InputError(f"chunk size {chunk_size!r} is not allowed; give a positive integer")
    module, package, extra = FORMATS[fmt]
    if package is not None:
        require_extra(package, extra, f"the {fmt} export")
    out = Path(out)
    from ..io.reader import EventFile  # h5py: not needed to list the formats (``--help``)

    with EventFile(src) as ev:
        missing = [f for f in REQUIRED_FIELDS if f not in ev.fields]
        if missing:
            raise DataFileError(f"{str(src)!r}: event field(s) {missing} missing; not a "
                                "complete sunrecoil event file")
        if out.exists() and os.path.samefile(out, src):
            raise InputError(f"output {str(out)!r} is the input file; choose another path")
        check_target(out, force)
        mod = importlib.import_module(f"{__name__}.{module}")
        tmp = temp_path_for(out)
        args = (str(tmp), ev.attrs, ev.origin_names, Path(src).name)
        writer = (mod.RootWriter(*args, _field_info(ev)) if fmt == "root"
                  else mod.HepMC3Writer(*args))
        try:
            fields = [*writer.fields, *(f for f in writer.optional_fields if f in ev.fields)]
            first = 0
            for chunk in ev.iter_chunks(chunk_size, fields):
                writer.write(chunk, first)
                first += len(chunk["origin"])
                if progress is not None:
                    progress(len(chunk["origin"]))
            writer.close()
            os.replace(tmp, out)
        except BaseException:
            with contextlib.suppress(Exception):
                writer.abort()
            tmp.unlink(missing_ok=True)
            raise
    return ExportSummary(out, fmt, first)
