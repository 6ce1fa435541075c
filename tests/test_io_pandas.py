"""EventFile → pandas DataFrames (whole and chunked)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from generator.errors import DataFileError
from generator.io import EventFile, read_events
from generator.pipeline import generate

pd = pytest.importorskip("pandas")


@pytest.fixture(scope="module")
def event_file(small_config, tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("pandas") / "ev.h5"
    generate(small_config, out, n_events=5000, seed=3)
    return out


def test_to_pandas_columns_and_values(event_file: Path):
    ref = read_events(event_file)
    with EventFile(event_file) as ev:
        df = ev.to_pandas()
        assert len(df) == ev.n_events
    for name, a in ref.items():
        if a.ndim == 1:
            np.testing.assert_array_equal(df[name].to_numpy(), a)
            assert df[name].dtype == a.dtype
        else:
            for j, axis in enumerate("xyz"):
                np.testing.assert_array_equal(df[f"{name}_{axis}"].to_numpy(), a[:, j])
    assert "e_dir" not in df.columns
    assert list(df.index[:3]) == [0, 1, 2]


def test_to_pandas_selected_fields_and_range(event_file: Path):
    with EventFile(event_file) as ev:
        df = ev.to_pandas(["e_kinetic", "vertex"], start=100, stop=250)
    assert list(df.columns) == ["e_kinetic", "vertex_x", "vertex_y", "vertex_z"]
    assert df.index[0] == 100 and len(df) == 150


def test_iter_pandas_covers_the_file(event_file: Path):
    with EventFile(event_file) as ev:
        frames = list(ev.iter_pandas(1500, ["e_kinetic", "is_night"]))
        whole = ev.to_pandas(["e_kinetic", "is_night"])
    assert [len(f) for f in frames] == [1500, 1500, 1500, 500]
    pd.testing.assert_frame_equal(pd.concat(frames), whole)


def test_unknown_field_is_a_clear_error(event_file: Path):
    with EventFile(event_file) as ev:
        with pytest.raises(DataFileError, match="no event field"):
            ev.to_pandas(["e_kinetik"])
        with pytest.raises(DataFileError, match="no event field"):
            next(ev.iter_pandas(100, ["e_kinetik"]))
