"""Exports: HepMC3 ASCII and flat ROOT trees, read back and compared with the HDF5 truth.

Physics checks: four-momentum conservation and mass shells of ν e⁻ → ν e⁻ on an electron at
rest (PDG Review of Particle Physics, "Kinematics", two-body scattering), the recoil angle
cos θ = (E + m)/E · √(T/(T + 2m)) (Bahcall, *Neutrino Astrophysics*, 1989, ch. 8), electron and
α masses from CODATA (scipy.constants). Number formatting: 17 significant decimal digits
identify a binary64 number and 9 a binary32 (IEEE 754-2008, §5.12.2).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import h5py
import hdf5plugin  # noqa: F401  (registers the Blosc filter for h5py)
import numpy as np
import pytest
from conftest import make_config
from scipy.constants import physical_constants

from generator.cli import main
from generator.export import export_file
from generator.export.textformat import join, render
from generator.io import EventFile, read_events
from generator.pipeline import generate

pyhepmc = pytest.importorskip("pyhepmc")
uproot = pytest.importorskip("uproot")

M_E = physical_constants["electron mass energy equivalent in MeV"][0]  # CODATA
M_ALPHA = physical_constants["alpha particle mass energy equivalent in MeV"][0]  # CODATA


@pytest.fixture(scope="session")
def event_file(tmp_path_factory) -> Path:
    cfg = make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-03-01T00:00:00Z"},
        "interaction": {"threshold_mev": 0.3},
        "run": {"chunk_size": 1000},
    })
    out = tmp_path_factory.mktemp("export") / "events.h5"
    generate(cfg, out, n_events=2500, seed=20310101)
    return out


@pytest.fixture(scope="session")
def mixed_file(event_file: Path, tmp_path_factory) -> Path:
    """The event file with every 7th event turned into a background decay (origin ≥ 100).

    Stands in for files with backgrounds: nu_pdg 0, NaN neutrino fields, and the stage fields
    ``particle`` (e⁻, e⁺, α, γ) and ``gamma_energy`` of the shared interface.
    """
    out = tmp_path_factory.mktemp("mixed") / "mixed.h5"
    shutil.copy(event_file, out)
    with h5py.File(out, "r+") as f:
        ev = f["events"]
        n = ev["origin"].shape[0]
        bkg = np.arange(0, n, 7)
        origin = ev["origin"][:]
        origin[bkg] = np.where(bkg % 2 == 0, 101, 102)
        ev["origin"][:] = origin
        codes = np.append(ev["origin"].attrs["codes"], [101, 102]).astype(np.int16)
        names = [*[x.decode() if isinstance(x, bytes) else x
                   for x in ev["origin"].attrs["names"]], "210Po", "214Bi"]
        ev["origin"].attrs["codes"] = codes
        ev["origin"].attrs["names"] = np.array(names, dtype=h5py.string_dtype())
        for name in ("nu_pdg",):
            a = ev[name][:]
            a[bkg] = 0
            ev[name][:] = a
        for name in ("nu_energy", "nu_dir"):
            a = ev[name][:]
            a[bkg] = np.nan
            ev[name][:] = a
        particle = np.full(n, 11, dtype=np.int32)
        particle[bkg] = np.array([11, -11, 1000020040, 22])[np.arange(bkg.size) % 4]
        gamma = np.zeros(n, dtype=np.float32)
        gamma[bkg] = np.where(particle[bkg] == -11, 1.022, np.where(particle[bkg] == 22, 0.6, 0))
        for name, data, units in (("particle", particle, ""), ("gamma_energy", gamma, "MeV")):
            if name in ev:
                ev[name][:] = data.astype(ev[name].dtype)
            else:
                ev.create_dataset(name, data=data)
                ev[name].attrs.update(units=units, description=f"{name} (test stand-in)")
    return out


def _read_hepmc3(path: Path) -> list:
    events = []
    with pyhepmc.open(str(path)) as f:
        for e in f:
            parts = [(p.pid, p.status, np.array(list(p.momentum)), p.generated_mass)
                     for p in e.particles]
            events.append({
                "number": e.event_number, "weights": list(e.weights),
                "units": (e.momentum_unit, e.length_unit), "particles": parts,
                "vertices": [np.array(list(v.position)) for v in e.vertices],
                "pos": np.array(list(e.event_pos())),
                "attrs": {k: str(e.attributes[k]) for k in e.attributes},
                "run": e.run_info,
            })
    return events


@pytest.fixture(scope="session")
def hepmc3_signal(event_file: Path, tmp_path_factory) -> tuple[Path, list]:
    out = tmp_path_factory.mktemp("hep") / "events.hepmc3"
    summary = export_file(event_file, out, "hepmc3", chunk_size=700)
    assert summary.n_events == 2500
    return out, _read_hepmc3(out)


def test_hepmc3_signal_records_match_truth(event_file, hepmc3_signal):
    _, events = hepmc3_signal
    t = read_events(event_file)
    assert len(events) == 2500
    for i, e in enumerate(events):
        assert e["number"] == i
        assert e["units"] == (pyhepmc.Units.MEV, pyhepmc.Units.MM)
        assert e["weights"] == [float(t["weight"][i])]
        (p1, s1, k1, _), (p2, s2, k2, m2), (p3, s3, k3, _), (p4, s4, k4, m4) = e["particles"]
        assert (p1, p2, p3, p4) == (t["nu_pdg"][i], 11, t["nu_pdg"][i], 11)
        assert (s1, s2, s3, s4) == (4, 4, 1, 1)
        assert m2 == m4 == M_E
        # HepMC3 momenta are (px, py, pz, E)
        assert k1[3] == np.float64(t["nu_energy"][i])
        assert np.allclose(k1[:3] / k1[3], t["nu_dir"][i], atol=2e-7)
        np.testing.assert_array_equal(k2, [0, 0, 0, M_E])
        assert abs((k4[3] - M_E) - t["e_kinetic"][i]) <= 2e-7 * t["e_kinetic"][i] + 1e-12
        e_dir = t["e_dir"][i].astype(np.float64)
        cos_angle = np.dot(k4[:3], e_dir) / (np.linalg.norm(k4[:3]) * np.linalg.norm(e_dir))
        # moved onto the exact cone: a change of the order of float32 rounding (measured
        # ≤ 8e-7 rad on 20 000 events; bound common practice, no source)
        assert np.arccos(min(1.0, cos_angle)) < 1e-5
        (vtx,) = e["vertices"]
        assert np.array_equal(vtx[:3].astype(np.float32), t["vertex"][i]) and vtx[3] == 0.0
        assert np.array_equal(e["pos"], vtx)
        assert float(e["attrs"]["time_utc"]) == t["time_utc"][i]
        assert int(e["attrs"]["origin"]) == t["origin"][i]
        assert int(e["attrs"]["is_night"]) == t["is_night"][i]
        assert np.float32(float(e["attrs"]["cos_sun"])) == t["cos_sun"][i]


def test_hepmc3_energy_momentum_balance(hepmc3_signal):
    """Σp_in = Σp_out to 1e-9 relative and all particles on their mass shells (PDG kinematics)."""
    _, events = hepmc3_signal
    worst_balance = worst_shell = 0.0
    bad = []
    for e in events:
        k = [p[2] for p in e["particles"]]
        scale = k[0][3]
        imbalance = np.max(np.abs(k[0] + k[1] - k[2] - k[3])) / scale
        shell_nu = abs(k[2][3] ** 2 - k[2][:3] @ k[2][:3]) / scale**2
        shell_e = abs(k[3][3] ** 2 - k[3][:3] @ k[3][:3] - M_E**2) / scale**2
        worst_balance = max(worst_balance, imbalance)
        worst_shell = max(worst_shell, shell_nu, shell_e)
        if imbalance > 1e-9 or shell_nu > 1e-9 or shell_e > 1e-9:
            bad.append(e["number"])
    assert not bad, f"events violating balance or mass shell: {bad[:20]}"
    assert worst_balance < 1e-9 and worst_shell < 1e-9


def test_hepmc3_recoil_angle_is_two_body(hepmc3_signal):
    """cos θ between ν and e⁻ equals (E + m)/E · √(T/(T + 2m)) (Bahcall 1989, ch. 8)."""
    _, events = hepmc3_signal
    for e in events:
        k_nu, k_e = e["particles"][0][2], e["particles"][3][2]
        big_e, t = k_nu[3], k_e[3] - M_E
        expected = (big_e + M_E) / big_e * np.sqrt(t / (t + 2 * M_E))
        got = k_nu[:3] @ k_e[:3] / (np.linalg.norm(k_nu[:3]) * np.linalg.norm(k_e[:3]))
        assert abs(got - min(expected, 1.0)) < 1e-9


def test_hepmc3_run_info(hepmc3_signal):
    _, events = hepmc3_signal
    run = events[0]["run"]
    assert run.weight_names == ["weight"]
    assert run.tools[0].name == "sunrecoil"
    attrs = {k: str(run.attributes[k]) for k in run.attributes}
    assert "5=8B" in attrs["origin_names"]
    assert "time_utc" in attrs["time_convention"]


def test_hepmc3_chunking_does_not_change_the_text(event_file, hepmc3_signal, tmp_path):
    out = tmp_path / "one_chunk.hepmc3"
    export_file(event_file, out, "hepmc3", chunk_size=100_000)
    assert out.read_bytes() == hepmc3_signal[0].read_bytes()


def test_hepmc3_background_events(mixed_file, tmp_path):
    out = tmp_path / "mixed.hepmc3"
    export_file(mixed_file, out, "hepmc3", chunk_size=600)
    events = _read_hepmc3(out)
    t = read_events(mixed_file)
    assert len(events) == t["origin"].size
    masses = {11: M_E, -11: M_E, 1000020040: M_ALPHA, 22: 0.0}
    for i, e in enumerate(events):
        assert e["number"] == i
        if t["origin"][i] < 100:
            assert len(e["particles"]) == 4 and len(e["vertices"]) == 1
            continue
        # one primary leaving the root vertex, placed at the decay point
        ((pid, status, k, mass),) = e["particles"]
        assert e["vertices"] == []
        assert pid == t["particle"][i] and status == 1 and mass == masses[pid]
        assert np.array_equal(e["pos"][:3].astype(np.float32), t["vertex"][i])
        kinetic = t["e_kinetic"][i] + (t["gamma_energy"][i] if pid == 22 else 0.0)
        assert abs((k[3] - mass) - kinetic) <= 1e-6 * kinetic + 1e-9
        assert abs(k[3] ** 2 - k[:3] @ k[:3] - mass**2) <= 1e-9 * k[3] ** 2
        assert np.float32(float(e["attrs"]["gamma_energy"])) == t["gamma_energy"][i]
        assert int(e["attrs"]["origin"]) == t["origin"][i]


def test_text_format_round_trip_and_printf_layout():
    """17 digits read back to the same float64, 9 digits to the same float32 (IEEE 754 §5.12.2)."""
    rng = np.random.default_rng(7)
    x = np.concatenate([rng.standard_normal(20000) * 10.0 ** rng.integers(-300, 300, 20000),
                        10.0 ** np.arange(-300, 301),
                        [0.0, 1.0, 0.1, 5e-324, 1.7976931348623157e308, 9.99999999999999e22, -2.5]])
    text = join(render("%.16e\n", [x])).decode()
    assert np.array_equal(np.array(text.split(), dtype=np.float64), x)
    y = (rng.standard_normal(20000) * 10.0 ** rng.integers(-30, 30, 20000)).astype(np.float32)
    text9 = join(render("%.8e\n", [y.astype(np.float64)])).decode()
    assert np.array_equal(np.array(text9.split(), dtype=np.float32), y)
    assert text9 == "%.8e\n" * y.size % tuple(y.astype(np.float64).tolist())  # printf layout
    ints = np.array([0, 7, -12, 1000020040, -1000020040, 123456789012])
    got = join(render("P %d x\n", [ints])).decode()
    assert got == "".join(f"P {v} x\n" for v in ints.tolist())


def test_root_tree_matches_truth(mixed_file, tmp_path):
    out = tmp_path / "events.root"
    export_file(mixed_file, out, "root", chunk_size=900)
    t = read_events(mixed_file)
    with uproot.open(out) as f:
        tree = f["events"]
        assert tree.num_entries == t["origin"].size
        arrays = tree.arrays(library="np")
        titles = {b.name: b.title for b in tree.branches}
        with EventFile(mixed_file) as ev:
            for name in ev.fields:
                if t[name].ndim == 1:
                    np.testing.assert_array_equal(arrays[name], t[name])
                    assert arrays[name].dtype == t[name].dtype
                    assert titles[name].endswith(f"[{ev.units(name)}]")
                else:
                    for j, axis in enumerate("xyz"):
                        np.testing.assert_array_equal(arrays[f"{name}_{axis}"], t[name][:, j])
                        assert f"[{ev.units(name)}]" in titles[f"{name}_{axis}"]
        assert titles["e_kinetic"] == "recoil-electron kinetic energy [MeV]"
        assert titles["vertex_x"] == "interaction vertex, x component [mm]"
        assert str(f["provenance/seed_entropy"]) == "20310101"
        assert "101=210Po" in str(f["provenance/origin_names"])


# --- command line and errors -------------------------------------------------------------

def _cli(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "generator", *args], cwd=cwd,
                          env=dict(os.environ), capture_output=True, text=True, timeout=300)


def test_cli_export_both_formats(event_file, tmp_path):
    repo = Path(__file__).resolve().parents[1]
    for fmt in ("hepmc3", "root"):
        out = tmp_path / f"e.{fmt}"
        r = _cli("export", str(event_file), "--format", fmt, "-o", str(out), cwd=repo)
        assert r.returncode == 0, r.stderr
        assert "wrote 2500 events" in r.stdout and out.stat().st_size > 10_000


def test_cli_export_errors_write_nothing(event_file, tmp_path, capsys, monkeypatch):
    out = tmp_path / "x.hepmc3"
    with pytest.raises(SystemExit) as exc:
        main(["export", str(event_file), "--format", "lhef", "-o", str(out)])
    assert exc.value.code == 2 and "invalid choice" in capsys.readouterr().err
    text = tmp_path / "notes.h5"
    text.write_text("not hdf5\n")
    assert main(["export", str(text), "--format", "hepmc3", "-o", str(out)]) == 2
    assert "not a readable HDF5 file" in capsys.readouterr().err
    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w") as f:
        f["data"] = np.arange(3)
    assert main(["export", str(foreign), "--format", "root", "-o", str(out)]) == 2
    assert "not a sunrecoil event file" in capsys.readouterr().err
    assert main(["export", str(event_file), "--format", "hepmc3", "-o", str(event_file),
                 "--force"]) == 2
    assert "is the input file" in capsys.readouterr().err
    assert not out.exists()
    out.write_text("keep me")
    assert main(["export", str(event_file), "--format", "hepmc3", "-o", str(out)]) == 2
    assert "--force" in capsys.readouterr().err and out.read_text() == "keep me"
    monkeypatch.setitem(sys.modules, "uproot", None)  # as if the extra were not installed
    root_out = tmp_path / "x.root"
    assert main(["export", str(event_file), "--format", "root", "-o", str(root_out)]) == 2
    assert "pip install 'sunrecoil[root]'" in capsys.readouterr().err
    assert not root_out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["foreign.h5", "notes.h5", "x.hepmc3"]
