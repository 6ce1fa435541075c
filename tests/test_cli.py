"""The command-line interface, run in subprocesses as a user would."""

from __future__ import annotations

import os
import subprocess
import sys
import tomllib
from pathlib import Path

import h5py
import hdf5plugin  # noqa: F401  (registers the Blosc filter for h5py)
import numpy as np
import pytest

from generator.io.schema import EVENT_FIELDS

PROVENANCE_KEYS = (
    "tool_version", "layout_version", "config_toml", "seed_entropy", "seed_scheme",
    "created_utc", "n_events", "expected_events", "weight_per_event",
    "expected_events_per_live_day", "live_seconds", "mean_inverse_r2", "target_electrons",
    "frame", "chunk_size", "stages_absent",
)


def run_cli(*args: str, cwd: Path, timeout: float = 600) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    return subprocess.run([sys.executable, "-m", "generator", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=timeout)


def sunrecoil_exe() -> str:
    exe = Path(sys.executable).parent / "sunrecoil"
    return str(exe) if exe.exists() else ""


def test_generate_default_and_read_back(tmp_path: Path):
    exe = sunrecoil_exe()
    cmd = [exe] if exe else [sys.executable, "-m", "generator"]
    r = subprocess.run([*cmd, "generate", "--events", "3000", "--seed", "5", "--quiet"],
                       cwd=tmp_path, capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stderr
    out = tmp_path / "outputs" / "sunrecoil_events.h5"
    assert out.exists()
    with h5py.File(out, "r") as f:
        ev = f["events"]
        for fld in EVENT_FIELDS:
            ds = ev[fld.name]
            assert ds.shape == (3000, *fld.shape)
            assert ds.dtype == np.dtype(fld.dtype)
            assert "units" in ds.attrs and "description" in ds.attrs
            assert ds.fletcher32
        for k in PROVENANCE_KEYS:
            assert k in f.attrs, k
        assert int(f.attrs["n_events"]) == 3000
        assert f.attrs["seed_entropy"] == "5"
        cfg_text = f.attrs["config_toml"]
        assert tomllib.loads(cfg_text)["detector"]["medium"] == "water"
        assert ev["e_kinetic"].attrs["units"] == "MeV"
        assert ev["vertex"].attrs["units"] == "mm"
        assert ev["time_utc"].attrs["units"] == "s"
        assert set(ev["origin"].attrs["codes"]) <= set(range(1, 20))
        # default threshold of the embedded configuration
        assert ev["e_kinetic"][:].min() >= 3.5
    r2 = run_cli("inspect", str(out), cwd=tmp_path)
    assert r2.returncode == 0, r2.stderr
    assert "8B" in r2.stdout and "events: 3000" in r2.stdout


def test_refuses_overwrite_without_force(tmp_path: Path):
    out = tmp_path / "ev.h5"
    out.write_bytes(b"keep me")
    r = run_cli("generate", "--events", "10", "-o", str(out), "--quiet", cwd=tmp_path)
    assert r.returncode == 2
    assert "exists" in r.stderr
    assert out.read_bytes() == b"keep me"
    r = run_cli("generate", "--events", "10", "-o", str(out), "--quiet", "--force", "--seed",
                "1", cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    with h5py.File(out, "r") as f:
        assert f.attrs["n_events"] == 10


@pytest.mark.parametrize("args", [
    ("generate", "--events", "0"),
    ("generate", "--events", "-3"),
    ("generate", "--seed", "-1"),
    ("generate", "missing.toml"),
    ("generate", "bad.toml"),
    ("generate", "--bogus"),
    ("frobnicate",),
    ("config", "show", "bad.toml"),
    ("inspect", "not_a_file.h5"),
])
def test_bad_input_exits_2_and_writes_nothing(tmp_path: Path, args: tuple[str, ...]):
    (tmp_path / "bad.toml").write_text('[sources]\ninclude = ["pp", "nope"]\n')
    before = set(tmp_path.rglob("*"))
    r = run_cli(*args, "-o", str(tmp_path / "o.h5"), cwd=tmp_path) if args[0] == "generate" \
        else run_cli(*args, cwd=tmp_path)
    assert r.returncode == 2, (r.returncode, r.stderr)
    assert "error" in r.stderr
    assert set(tmp_path.rglob("*")) == before


def test_bad_run_list_exits_2(tmp_path: Path):
    (tmp_path / "runs.csv").write_text(
        "start_utc,stop_utc\n2031-01-02T00:00:00Z,2031-01-01T00:00:00Z\n")
    (tmp_path / "c.toml").write_text('[exposure]\nrun_list = "runs.csv"\n')
    r = run_cli("generate", "c.toml", "-o", "o.h5", "--events", "5", cwd=tmp_path)
    assert r.returncode == 2, r.stderr
    assert "runs.csv" in r.stderr
    assert not (tmp_path / "o.h5").exists()


def test_config_show_prints_effective_toml(tmp_path: Path):
    r = run_cli("config", "show", cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    data = tomllib.loads(r.stdout)
    assert data["detector"]["medium"] == "water"
    (tmp_path / "c.toml").write_text('[detector]\nmedium = "lab"\n')
    r = run_cli("config", "show", "c.toml", cwd=tmp_path)
    assert tomllib.loads(r.stdout)["detector"]["medium"] == "lab"


@pytest.mark.parametrize("args", [(), ("generate",), ("config",), ("config", "show"),
                                  ("inspect",)])
def test_help_everywhere(tmp_path: Path, args: tuple[str, ...]):
    r = run_cli(*args, "--help", cwd=tmp_path)
    assert r.returncode == 0
    assert "usage:" in r.stdout


@pytest.mark.parametrize(("table", "problem"), [
    ("1.0 0.5\n0.5 0.7\n2.0 0.1\n", "increasing"),
    ("0.5 0.5\n1.0 -0.7\n2.0 0.1\n", "negative"),
    ("0.5 0.5\n1.0 nan\n2.0 0.1\n", "finite"),
    ("0.5 0.5 3\n1.0 0.7\n", ""),
    ("", ""),
])
def test_malformed_custom_spectrum_exits_2(tmp_path: Path, table: str, problem: str):
    (tmp_path / "spec.txt").write_text(table)
    (tmp_path / "c.toml").write_text(
        '[sources]\ninclude = ["8B"]\n[[sources.custom]]\nname = "mine"\n'
        'spectrum_file = "spec.txt"\nflux = 1e6\n')
    r = run_cli("generate", "c.toml", "-o", "o.h5", "--events", "5", cwd=tmp_path)
    assert r.returncode == 2, r.stderr
    assert "spec.txt" in r.stderr
    assert problem in r.stderr
    assert not (tmp_path / "o.h5").exists()


def test_custom_source_generates(tmp_path: Path):
    (tmp_path / "spec.txt").write_text("# energy_MeV density\n4.0 0.0\n6.0 1.0\n8.0 0.0\n")
    (tmp_path / "c.toml").write_text(
        '[sources]\ninclude = ["8B"]\n[[sources.custom]]\nname = "mine"\n'
        'spectrum_file = "spec.txt"\nflux = 1e7\n')
    r = run_cli("generate", "c.toml", "-o", "o.h5", "--events", "2000", "--seed", "4",
                "--quiet", cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    with h5py.File(tmp_path / "o.h5", "r") as f:
        names = [n.decode() if isinstance(n, bytes) else n
                 for n in f["events/origin"].attrs["names"]]
        assert names == ["8B", "mine"]
        e = f["events/nu_energy"][:][f["events/origin"][:] == 9]
        assert e.size > 0 and e.min() >= 4.0 and e.max() <= 8.0


#: Heavy modules a warm start of the quick commands must not import (issue #12 start-up).
_HEAVY = ("h5py", "scipy.constants", "scipy.special", "scipy.interpolate", "scipy.integrate")


@pytest.mark.parametrize("argv", [["--help"], ["config", "show"]])
def test_quick_commands_import_no_heavy_modules(argv, tmp_path):
    """``--help`` and ``config show`` need neither h5py nor a scipy submodule (warm cache)."""
    script = ("import sys\nfrom generator.cli import main\ntry:\n    main(sys.argv[1:])\n"
              "except SystemExit:\n    pass\n"
              f"print('HEAVY', [m for m in {_HEAVY!r} if m in sys.modules], file=sys.stderr)\n")
    env = {**os.environ, "SUNRECOIL_CACHE": str(tmp_path)}
    for _ in range(2):                      # the first run fills the cache (constants)
        r = subprocess.run([sys.executable, "-c", script, *argv], capture_output=True,
                           text=True, env=env, timeout=120)
    assert r.returncode == 0, r.stderr
    assert "HEAVY []" in r.stderr, r.stderr
