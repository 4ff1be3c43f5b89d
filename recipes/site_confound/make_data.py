"""Invented demo data: a voice-recording pilot at three clinics, confounded by clinic.

Everything here is made up: 240 fictional recordings from three fictional clinics
(clinic_a, clinic_b, clinic_c), each with 24 invented acoustic measurements, the
speaker's age, the day of the visit and a fictional outcome ``condition``.

The trap: clinic_a is a referral clinic, so 80% of its recordings come from
people with the condition, against 45% at clinic_b and 12% at clinic_c. Each
clinic records with its own device, and every device leaves its mark on six of
the measurements. No measurement carries anything about the condition itself
within a clinic. A model can still score well - by recognising the clinic.

Two more faults of the kind real tables have: one recording was uploaded twice
under two ids, and a second one was re-exported with rounding differences.

Run:  python recipes/site_confound/make_data.py   (writes data/voice_pilot.csv)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261211
N = 240
N_FEATURES = 24


def make(seed: int = SEED, n: int = N, n_features: int = N_FEATURES) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    clinic = rng.choice(["clinic_a", "clinic_b", "clinic_c"], n, p=[0.35, 0.35, 0.3])
    rate = pd.Series(clinic).map({"clinic_a": 0.8, "clinic_b": 0.45, "clinic_c": 0.12})
    condition = (rng.random(n) < rate.to_numpy()).astype(int)
    X = rng.normal(0.0, 1.0, size=(n, n_features))
    # Each clinic's device shifts six measurements (its mark), nothing else.
    mark = {"clinic_a": 1.2, "clinic_b": 0.0, "clinic_c": -1.2}
    X[:, :6] += pd.Series(clinic).map(mark).to_numpy()[:, None]
    age = rng.normal(52, 12, n).round(0)
    visit_day = rng.integers(1, 366, n)
    frame = pd.DataFrame(
        X.round(4), columns=[f"acoustic_{j:02d}" for j in range(n_features)]
    )
    frame.insert(0, "recording_id", [f"rec_{i:04d}" for i in range(n)])
    frame.insert(1, "clinic", clinic)
    frame.insert(2, "age", age)
    frame.insert(3, "visit_day", visit_day)
    frame["condition"] = condition
    # One recording uploaded twice (a new id, everything else the same) ...
    frame.loc[n - 1, frame.columns[1:]] = frame.loc[17, frame.columns[1:]].to_numpy()
    # ... and one re-exported with rounding differences.
    cols = [f"acoustic_{j:02d}" for j in range(n_features)]
    frame.loc[n - 2, frame.columns[1:]] = frame.loc[42, frame.columns[1:]].to_numpy()
    frame.loc[n - 2, cols] = (frame.loc[42, cols].astype(float) + 0.002).round(3)
    return frame


if __name__ == "__main__":
    out = Path(__file__).resolve().parent / "data" / "voice_pilot.csv"
    out.parent.mkdir(parents=True, exist_ok=True)
    make().to_csv(out, index=False)
    print(f"wrote {out}")
