"""`sunrecoil check` finds deliberately damaged files (flipped bytes, truncation, edits)."""

from __future__ import annotations

import shutil
from pathlib import Path

import h5py
import numpy as np
import pytest
from conftest import make_config

from generator.cli import main
from generator.io.check import check_file
from generator.pipeline import generate


@pytest.fixture(scope="module")
def good(tmp_path_factory) -> Path:
    cfg = make_config({"sources": {"include": ["8B", "hep"]},
                       "run": {"events": 20000, "chunk_size": 8192, "seed": 4}})
    return generate(cfg, tmp_path_factory.mktemp("chk") / "good.h5").path


def _copy(good, tmp_path) -> Path:
    p = tmp_path / "f.h5"
    shutil.copy(good, p)
    return p


def test_good_file_passes(good, capsys):
    assert check_file(good) == []
    assert main(["check", str(good)]) == 0
    assert "ok" in capsys.readouterr().out


def test_flipped_bytes_in_a_chunk(good, tmp_path, capsys):
    p = _copy(good, tmp_path)
    with h5py.File(p) as f:
        info = f["events/nu_energy"].id.get_chunk_info(1)
    with open(p, "r+b") as fh:
        fh.seek(info.byte_offset + 10)
        fh.write(b"\x00\xff\x00\xff")
    problems = check_file(p)
    assert any("checksum mismatch in events/nu_energy" in x for x in problems), problems
    assert main(["check", str(p)]) == 1
    capsys.readouterr()


def test_truncated_file(good, tmp_path, capsys):
    p = _copy(good, tmp_path)
    raw = p.read_bytes()
    p.write_bytes(raw[: len(raw) * 2 // 3])
    assert main(["check", str(p)]) in (1, 2)
    assert "ok" not in capsys.readouterr().out


def test_missing_attribute(good, tmp_path):
    p = _copy(good, tmp_path)
    with h5py.File(p, "a") as f:
        del f.attrs["config_toml"]
    assert any("config_toml" in x for x in check_file(p))


def test_tampered_weights_and_units(good, tmp_path):
    p = _copy(good, tmp_path)
    with h5py.File(p, "a") as f:
        w = f["events/weight"]
        w[:10] = w[:10] * 2.0
        f["events/e_kinetic"].attrs["units"] = "keV"
    problems = check_file(p)
    assert any("sum of weights" in x for x in problems), problems
    assert any("units 'keV'" in x for x in problems), problems


def test_bad_codes(good, tmp_path):
    p = _copy(good, tmp_path)
    with h5py.File(p, "a") as f:
        f["events/nu_pdg"][:3] = np.int16(13)
        f["events/origin"][:2] = np.int16(77)
    problems = check_file(p)
    assert any("unknown nu_pdg" in x for x in problems)
    assert any("origin codes" in x for x in problems)


def test_not_hdf5(tmp_path, capsys):
    p = tmp_path / "text.h5"
    p.write_text("hello")
    assert main(["check", str(p)]) == 2
    capsys.readouterr()
