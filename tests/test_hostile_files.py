"""Untrusted HDF5 files given to every command that reads event files (issue 12).

Each damaged or foreign file must end with the tool's own one-line error (exit 1 for a damaged
file found while reading, 2 for a file refused at open), never a traceback, and leave no output
behind. The damages: a text file, a truncated file, a dataset of the wrong type, a missing
dataset, a group in place of a dataset, and a dataset that declares 10¹² rows (a few kB on
disk; reading it whole would need 4 TB).
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import h5py
import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]
DAMAGES = ["text", "truncated", "wrong_type", "missing", "group", "huge_shape"]


@pytest.fixture(scope="module")
def good(tmp_path_factory):
    d = tmp_path_factory.mktemp("hostile_files")
    cfg = d / "small.toml"
    cfg.write_text('[exposure]\nstart_utc = "2031-01-01T00:00:00Z"\n'
                   'stop_utc = "2031-01-08T00:00:00Z"\n[sources]\ninclude = ["8B", "7Be"]\n'
                   '[interaction]\nthreshold_mev = 0.5\n[response]\nenabled = false\n',
                   "utf-8")
    out = d / "good.h5"
    r = subprocess.run([sys.executable, "-m", "generator", "generate", str(cfg), "-o", str(out),
                        "--events", "3000", "--seed", "5", "--quiet"], capture_output=True,
                       text=True, cwd=ROOT)
    assert r.returncode == 0, r.stderr
    return out, cfg


def _damage(good: Path, kind: str, folder: Path) -> Path:
    bad = folder / f"{kind}.h5"
    if kind == "text":
        bad.write_text("time_utc,origin\n1,2\n", "utf-8")
        return bad
    shutil.copyfile(good, bad)
    if kind == "truncated":
        data = good.read_bytes()
        bad.write_bytes(data[: len(data) // 2])
        return bad
    with h5py.File(bad, "r+") as f:
        ev = f["events"]
        attrs = dict(ev["e_kinetic"].attrs)
        if kind == "missing":
            del ev["weight"]
            return bad
        del ev["e_kinetic"]
        if kind == "wrong_type":
            ds = ev.create_dataset("e_kinetic", data=np.array(["x"] * f.attrs["n_events"],
                                                                dtype="S1"))
        elif kind == "group":
            ev.create_group("e_kinetic")
            return bad
        else:                                       # huge_shape
            ds = ev.create_dataset("e_kinetic", shape=(10**12,), dtype="f4",
                                   chunks=(4096,), maxshape=(None,))
        for k, v in attrs.items():
            ds.attrs[k] = v
    return bad


def _commands(bad: Path, cfg: Path, out: Path) -> dict[str, list[str]]:
    alt = cfg.parent / "alt.toml"
    alt.write_text('[sources.scale]\n8B = 1.1\n', "utf-8")
    return {
        "inspect": ["inspect", str(bad)],
        "check": ["check", str(bad)],
        "export": ["export", str(bad), "--format", "hepmc3", "-o", str(out)],
        "merge": ["merge", str(out), str(bad)],
        "reweight": ["reweight", str(bad), str(alt), "-o", str(out)],
        "sensitivity": ["sensitivity", str(cfg), "--templates", str(bad), "--exposures", "7",
                        "--json"],
    }


@pytest.mark.parametrize("kind", DAMAGES)
def test_every_reader_command_refuses_damaged_files_cleanly(good, tmp_path, kind):
    path, cfg = good
    bad = _damage(path, kind, tmp_path)
    for name, argv in _commands(bad, cfg, tmp_path / "out.dat").items():
        r = subprocess.run([sys.executable, "-m", "generator", *argv], capture_output=True,
                           text=True, cwd=ROOT, timeout=120)
        assert r.returncode in (1, 2), (name, kind, r.returncode, r.stderr[-800:])
        assert "Traceback" not in r.stderr + r.stdout, (name, kind, r.stderr[-1500:])
        if name == "check":               # check reports "FILE: problem" lines on stdout
            assert r.stdout.startswith(str(bad)) or r.stderr.startswith("sunrecoil"), \
                (kind, r.stdout, r.stderr)
            assert ": ok" not in r.stdout, (kind, r.stdout)
            continue
        lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
        assert lines and lines[-1].startswith("sunrecoil"), (name, kind, r.stderr[-800:])
        assert len(lines) <= 3, (name, kind, r.stderr[-800:])
        assert not (tmp_path / "out.dat").exists(), (name, kind)
        assert not list(tmp_path.glob("*.tmp")), (name, kind)
