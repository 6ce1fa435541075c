"""The reader treats event files as untrusted: inconsistent or foreign files are refused."""

from __future__ import annotations

import shutil
from pathlib import Path

import h5py
import numpy as np
import pytest
from conftest import make_config

from generator.errors import DataFileError
from generator.io import EventFile
from generator.pipeline import generate


@pytest.fixture(scope="module")
def good(tmp_path_factory) -> Path:
    cfg = make_config({"sources": {"include": ["8B"]},
                       "run": {"events": 3000, "chunk_size": 3000, "seed": 2},
                       "output": {"compression": "gzip"}})
    return generate(cfg, tmp_path_factory.mktemp("rd") / "good.h5").path


def _copy(good, tmp_path) -> Path:
    p = tmp_path / "f.h5"
    shutil.copy(good, p)
    return p


def _refused(path, match):
    with pytest.raises(DataFileError, match=match) as err:
        EventFile(path)
    assert "\n" not in str(err.value)


def test_good_file_opens(good):
    with EventFile(good) as ev:
        assert ev.n_events == 3000
        assert set(ev.table("sources")) >= {"name", "code", "flux", "expected_events"}


def test_foreign_file_with_events_group(tmp_path):
    p = tmp_path / "foreign.h5"
    with h5py.File(p, "w") as f:
        f.create_dataset("events/x", data=np.arange(3))
    _refused(p, "not a sunrecoil event file")


def test_unequal_lengths(good, tmp_path):
    p = _copy(good, tmp_path)
    with h5py.File(p, "a") as f:
        f["events/e_kinetic"].resize(10, axis=0)
    _refused(p, "different lengths")


def test_n_events_mismatch(good, tmp_path):
    p = _copy(good, tmp_path)
    with h5py.File(p, "a") as f:
        f.attrs["n_events"] = 5
    _refused(p, "n_events")


def test_unknown_layout(good, tmp_path):
    p = _copy(good, tmp_path)
    with h5py.File(p, "a") as f:
        f.attrs["layout_version"] = "999"
    _refused(p, "layout_version")


def test_missing_attribute(good, tmp_path):
    p = _copy(good, tmp_path)
    with h5py.File(p, "a") as f:
        del f.attrs["seed_entropy"]
    _refused(p, "seed_entropy")


def test_checksum_mismatch_names_the_field(good, tmp_path):
    """Flip bytes inside the stored chunk of one field: Fletcher-32 catches it."""
    p = _copy(good, tmp_path)
    with h5py.File(p, "r") as f:
        info = f["events/e_kinetic"].id.get_chunk_info(0)
    with open(p, "r+b") as fh:
        fh.seek(info.byte_offset + info.size // 2)
        b = fh.read(4)
        fh.seek(info.byte_offset + info.size // 2)
        fh.write(bytes(x ^ 0xFF for x in b))
    with EventFile(p) as ev, pytest.raises(DataFileError, match="checksum mismatch in "
                                                                 "events/e_kinetic"):
        ev.read(["e_kinetic"])


def test_unknown_table_and_field(good):
    with EventFile(good) as ev:
        with pytest.raises(DataFileError, match="no table"):
            ev.table("nothing/here")
        with pytest.raises(DataFileError, match="no event field"):
            ev.read(["bogus"])
