"""reweight gives the same side file for any number of ratio threads (stream stability)."""

from __future__ import annotations

import h5py
import numpy as np
from test_reweight import _cfg

import generator.pipeline as pipeline
from generator.pipeline import generate
from generator.reweight import reweight


def test_side_file_independent_of_thread_count(tmp_path, monkeypatch):
    path = tmp_path / "a.h5"
    generate(_cfg(), path, n_events=30_000, seed=11)
    alt = _cfg(oscillation={"sin2_theta12": 0.25}, interaction={"corrections": "tree"})
    out = {}
    for threads in (1, 2, 3):
        monkeypatch.setattr(pipeline, "default_threads", lambda t=threads: t)
        s = reweight(path, alt, tmp_path / f"w{threads}.h5", chunk_size=4096)
        with h5py.File(s.path, "r") as f:
            out[threads] = (f["weights/ratio"][()], f["weights/weight"][()], s.weight_sum,
                            s.weight_sum_mc_error)
    for t in (2, 3):
        assert np.array_equal(out[1][0], out[t][0]) and np.array_equal(out[1][1], out[t][1])
        assert out[1][2] == out[t][2] and out[1][3] == out[t][3]
