"""Regenerate the SYNTHETIC 'measured' data of the compactgen demo scenario (not measured data).

    python examples/data/make_data.py

writes, next to this script, from the wafer truth card truth_pmtj35.toml:
  rv_bias.csv            resistance versus bias, P and AP states
  rh_loops_slow.csv      three R-H loops at 10 mT/s
  rh_loops_fast.csv      three R-H loops at 10 T/s
  switching.csv          switched counts out of 400 pulses, both directions, thermal and precessional
and, from the domain-wall track truth card truth_dwtrack.toml (dw-mtj),
  wall/wall_velocity_current.csv, wall/wall_velocity_field.csv
The seed is fixed, so the files are reproducible.
"""
from __future__ import annotations

from pathlib import Path

from compactgen.jobs.calibrate.synthetic import make_stt_data, make_wall_data
from compactgen.model.card import load_card

HERE = Path(__file__).resolve().parent

if __name__ == "__main__":
    truth = load_card(HERE / "truth_pmtj35.toml")
    files = make_stt_data(truth, HERE, seed=2026, source="examples/data/truth_pmtj35.toml")
    track = load_card(HERE / "truth_dwtrack.toml")
    files += make_wall_data(track, HERE / "wall", seed=2026, source="examples/data/truth_dwtrack.toml")
    for f in files:
        print(f"wrote {f.relative_to(HERE.parent.parent)}")
