"""Everyday frictions a new user meets (inspect, config show, progress, wording)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tomllib
from pathlib import Path

import h5py
import pytest

from generator.io import EventFile

ROOT = Path(__file__).resolve().parents[1]


def run_cli(*args: str, cwd: Path, stderr_tty: bool = False) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    if not stderr_tty:
        return subprocess.run([sys.executable, "-m", "generator", *args], cwd=cwd, env=env,
                              capture_output=True, text=True, timeout=600)
    master, slave = os.openpty()
    proc = subprocess.run([sys.executable, "-m", "generator", *args], cwd=cwd, env=env,
                          stdout=subprocess.PIPE, stderr=slave, text=True, timeout=600)
    os.close(slave)
    chunks = []
    while True:
        try:
            data = os.read(master, 65536)
        except OSError:
            break
        if not data:
            break
        chunks.append(data)
    os.close(master)
    proc.stderr = b"".join(chunks).decode("utf-8", "replace")
    return proc


@pytest.fixture(scope="module")
def event_file(tmp_path_factory) -> Path:
    d = tmp_path_factory.mktemp("use")
    r = run_cli("generate", "-o", "ev.h5", "--events", "4000", "--seed", "9", cwd=d,
                stderr_tty=True)
    assert r.returncode == 0, r.stderr
    (d / "stderr.txt").write_text(r.stderr)
    return d / "ev.h5"


def test_progress_shows_a_table_phase_and_events_per_second(event_file):
    err = (event_file.parent / "stderr.txt").read_text()
    assert "building tables" in err
    assert "events/s" in err
    assert "ev/s" not in err.replace("events/s", "")


def test_inspect_has_units_models_compression_and_expected_per_source(event_file):
    r = run_cli("inspect", str(event_file), cwd=event_file.parent)
    assert r.returncode == 0, r.stderr
    out = r.stdout
    for text in ("MeV", "live days", "flux B16-GS98", "oscillations nufit-6.0",
                 "compression:", "expected", "kt"):
        assert text in out, text
    assert "0.000000000" not in out  # no 15-digit floats


def test_inspect_json(event_file):
    r = run_cli("inspect", "--json", str(event_file), cwd=event_file.parent)
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["schema"] == 1 and d["events"] == 4000
    assert d["sum_of_weights"]["unit"] == "expected events"
    assert sum(v["events"] for v in d["by_origin"].values()) == 4000
    assert all("expected_events" in v for v in d["sources"].values())


def test_config_show_of_an_event_file_prints_its_configuration(event_file):
    r = run_cli("config", "show", str(event_file), cwd=event_file.parent)
    assert r.returncode == 0, r.stderr
    with EventFile(event_file) as ev:
        assert tomllib.loads(r.stdout) == tomllib.loads(ev.attrs["config_toml"])


def test_config_show_checks_data_files(tmp_path):
    (tmp_path / "c.toml").write_text('[exposure]\nrun_list = "missing.csv"\n')
    r = run_cli("config", "show", "c.toml", cwd=tmp_path)
    assert r.returncode == 2
    assert "missing.csv" in r.stderr


def test_warns_about_an_unusual_extension(tmp_path):
    r = run_cli("generate", "-o", "ev.dat", "--events", "200", "--seed", "1", "--quiet",
                cwd=tmp_path)
    assert r.returncode == 0
    assert ".h5" in r.stderr and "WARNING" in r.stderr


def test_wording_and_accessors(event_file):
    with EventFile(event_file) as ev:
        assert isinstance(ev.origin_names, dict)           # a property like its neighbours
        assert "names" in ev.events["origin"].attrs["description"]
        assert "ns" not in ev.attrs["units_convention"].split()
        tables = ev.table("sources")
        assert {"name", "code", "flux"} <= set(tables)
    with h5py.File(event_file) as f:
        assert "trade" not in f["sources/name"].attrs["description"]


def test_examples_are_listed_and_shown(tmp_path):
    r = run_cli("config", "examples", cwd=tmp_path)
    assert r.returncode == 0
    names = [ln.split()[0] for ln in r.stdout.splitlines()]
    assert {"water_cherenkov", "scintillator", "hybrid_wbls"} <= set(names)
    r = run_cli("config", "show", "--example", "hybrid_wbls", cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    run_list = tomllib.loads(r.stdout)["exposure"]["run_list"]
    assert Path(run_list).is_file()
    r = run_cli("config", "show", "--example", "nope", cwd=tmp_path)
    assert r.returncode == 2 and "available" in r.stderr


def test_api_example_runs_from_any_folder(tmp_path):
    env = dict(os.environ)
    env.pop("PYTHONPATH", None)
    r = subprocess.run([sys.executable, str(ROOT / "examples" / "api_example.py")], cwd=tmp_path,
                       env=env, capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stderr
    assert "night fraction" in r.stdout
    assert (tmp_path / "outputs" / "api_example.h5").is_file()
