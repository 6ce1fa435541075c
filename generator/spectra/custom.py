"""User-supplied neutrino spectra from a two-column text table.

File format: one row per line, ``energy_MeV  density`` separated by whitespace or a comma;
blank lines and lines starting with ``#`` are ignored. The density may have any
normalisation; it is linear between rows and normalised to unit area.
"""

from __future__ import annotations

import math
import os
import re

import numpy as np

from generator.errors import DataFileError
from generator.spectra.spectrum import Spectrum
from generator.userfiles import MAX_TABLE_ROWS, clip, read_user_text

__all__ = ["load_custom_spectrum"]

_SPLIT = re.compile(r"[,\s]+")


def load_custom_spectrum(path: str | os.PathLike[str], name: str) -> Spectrum:
    """Read and validate a two-column spectrum table.

    Parameters
    ----------
    path : str or os.PathLike
        Text file with rows ``energy [MeV], density [any unit per MeV]``.
    name : str
        Name given to the spectrum (non-empty).

    Returns
    -------
    Spectrum
        Continuous spectrum (no lines), pdf normalised to 1 over the table range.

    Raises
    ------
    generator.errors.DataFileError
        File unreadable; fewer than 2 rows; a row without exactly two numeric columns;
        non-finite values; energies not strictly increasing or negative; negative density;
        non-positive integral; empty name. The message names the file, the line and the
        problem.
    """
    if not isinstance(name, str) or not name.strip():
        raise DataFileError(f"custom spectrum {clip(os.fspath(path))}: name must be non-empty")
    where = f"custom spectrum file {clip(os.fspath(path))}"
    text = read_user_text(path, "custom spectrum file")
    energies: list[float] = []
    density: list[float] = []
    for lineno, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        fields = [f for f in _SPLIT.split(line) if f]
        if len(fields) != 2:
            raise DataFileError(
                f"{where}, line {lineno}: expected 2 columns (energy MeV, density), got "
                f"{len(fields)}"
            )
        try:
            e, d = float(fields[0]), float(fields[1])
        except ValueError:
            raise DataFileError(f"{where}, line {lineno}: non-numeric value") from None
        if not (math.isfinite(e) and math.isfinite(d)):
            raise DataFileError(f"{where}, line {lineno}: non-finite value (NaN/inf)")
        if e < 0.0:
            raise DataFileError(f"{where}, line {lineno}: negative energy {e} MeV")
        if d < 0.0:
            raise DataFileError(f"{where}, line {lineno}: negative density {d}")
        if energies and e <= energies[-1]:
            raise DataFileError(
                f"{where}, line {lineno}: energies must be strictly increasing "
                f"({e} after {energies[-1]})"
            )
        energies.append(e)
        density.append(d)
        if len(energies) > MAX_TABLE_ROWS:
            raise DataFileError(f"{where}: more than {MAX_TABLE_ROWS} data rows")
    if len(energies) < 2:
        raise DataFileError(f"{where}: need at least 2 data rows, found {len(energies)}")
    e_arr = np.asarray(energies)
    d_arr = np.asarray(density)
    area = float(np.sum(0.5 * np.diff(e_arr) * (d_arr[:-1] + d_arr[1:])))
    if not area > 0.0:
        raise DataFileError(f"{where}: density integrates to {area}; must be > 0")
    return Spectrum(name, e_arr, d_arr)
