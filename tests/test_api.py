"""The public API: every public module declares ``__all__`` and every name in it exists.

Also a golden-stream snapshot of the pipeline: a few events of a fixed configuration and seed.
These numbers are a *snapshot* of this implementation (not a physics reference); they change
only when the random stream changes, which must be a deliberate, changelogged decision.
"""

from __future__ import annotations

import importlib

import numpy as np
import pytest
from conftest import make_config

PUBLIC_MODULES = [
    "generator", "generator.config", "generator.constants", "generator.errors",
    "generator.media", "generator.geometry", "generator.spectra", "generator.xsec",
    "generator.radiative", "generator.recoil", "generator.kinematics", "generator.ephemeris",
    "generator.exposure", "generator.solar_model", "generator.oscillation", "generator.earth",
    "generator.pipeline", "generator.io", "generator.io.schema", "generator.io.writer",
    "generator.io.reader", "generator.cli", "generator.summary",
]


@pytest.mark.parametrize("name", PUBLIC_MODULES)
def test_module_declares_all(name: str):
    mod = importlib.import_module(name)
    assert hasattr(mod, "__all__"), name
    missing = [n for n in mod.__all__ if not hasattr(mod, n)]
    assert not missing, (name, missing)


def test_pipeline_api_pinned():
    import generator.pipeline as pl

    assert {"build_plan", "generate", "generate_chunk", "chunk_seed", "RunPlan",
            "SourcePlan", "RunSummary"} <= set(pl.__all__)


def test_golden_stream_snapshot():
    from generator.pipeline import memory_run

    cfg = make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-01-08T00:00:00Z"},
        "sources": {"include": ["8B"]},
        "interaction": {"threshold_mev": 5.0},
        "run": {"chunk_size": 1000},
    })
    sink, _ = memory_run(cfg, 4, seed=20311231)
    ev = sink.arrays()
    got = np.column_stack([ev["time_utc"] - 1.9249920e9, ev["nu_energy"], ev["e_kinetic"],
                           ev["cos_sun"], ev["nu_pdg"]])
    np.testing.assert_allclose(got, GOLDEN, rtol=1e-6, atol=1e-4)


#: columns: time_utc − 1.924992e9 s, nu_energy MeV, e_kinetic MeV, cos_sun, nu_pdg
GOLDEN = np.array([
    [172784.74262285233, 9.263225555419922, 6.698491096496582, 0.9828475713729858, 12.0],
    [53143.139979839325, 7.107884407043457, 6.474745750427246, 0.9961528778076172, 14.0],
    [492107.20162534714, 8.033844947814941, 7.454076766967773, 0.9974249601364136, 12.0],
    [13624.514741659164, 10.022577285766602, 6.253048896789551, 0.9743711948394775, 16.0],
])
