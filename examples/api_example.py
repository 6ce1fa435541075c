"""Generate a small ⁸B sample through the Python API and look at the day/night split.

Runs from any folder, with the package installed (``pip install .``) or from a checkout::

    python examples/api_example.py

The configuration is the shipped ``water_cherenkov`` example; the file is written to
``outputs/api_example.h5`` under the current folder.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

try:
    import generator  # noqa: F401 - installed package
except ImportError:  # a checkout without installation: use the package next to this file
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from generator.config import load_config
from generator.examples import example_path
from generator.io import EventFile
from generator.pipeline import generate


def main() -> None:
    """Generate 50 000 events of the water example and print a few fractions."""
    cfg = load_config(example_path("water_cherenkov"))
    out = Path("outputs")
    out.mkdir(exist_ok=True)
    summary = generate(cfg, out / "api_example.h5", n_events=50_000, seed=2031, force=True)
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
