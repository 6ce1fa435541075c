"""Generate a small ⁸B sample through the Python API and look at the day/night split.

Run from the repository root::

    python examples/api_example.py
"""

from __future__ import annotations

import numpy as np

from generator.config import load_config
from generator.io import EventFile
from generator.pipeline import generate


def main() -> None:
    cfg = load_config("configs/water_cherenkov.toml")
    summary = generate(cfg, "outputs/api_example.h5", n_events=50_000, seed=2031, force=True)
    print(f"expected events for the exposure: {summary.expected_events:.1f}")
    with EventFile(summary.path) as ev:
        data = ev.read(["e_kinetic", "is_night", "nu_pdg", "cos_sun"])
    night = data["is_night"] == 1
    print(f"night fraction of events: {night.mean():.4f}")
    print(f"nu_e fraction (day/night): {np.mean(data['nu_pdg'][~night] == 12):.4f} / "
          f"{np.mean(data['nu_pdg'][night] == 12):.4f}")
    print(f"mean cos to Sun: {data['cos_sun'].mean():.4f}")


if __name__ == "__main__":
    main()
