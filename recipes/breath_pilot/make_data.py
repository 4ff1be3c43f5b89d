"""Invented demo data: a pilot study of night-time breathing sounds on a respiratory ward.

Everything here is made up: 180 fictional patients on three fictional wards
(north, east, garden), 24 acoustic features per patient computed from one night's
recording, a few clinical covariates, and whether the patient needed breathing
support within 48 hours. Four of the acoustic features carry a weak signal; the
rest are noise; about 3% of the values are missing, as recordings drop out.

Run:  python recipes/breath_pilot/make_data.py   (writes data/breath_pilot.csv)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261201
N = 180


def make(seed: int = SEED, n: int = N) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    ward = rng.choice(["north", "east", "garden"], size=n, p=[0.4, 0.35, 0.25])
    age = rng.normal(67, 11, n).round()
    acoustic = rng.normal(size=(n, 24))
    risk = (
        0.9 * acoustic[:, 0]
        - 0.7 * acoustic[:, 3]
        + 0.6 * acoustic[:, 7]
        + 0.5 * acoustic[:, 11]
    )
    risk += 0.03 * (age - 67)
    p = 1 / (1 + np.exp(-(risk - 0.4)))
    support = (rng.uniform(size=n) < p).astype(int)
    df = pd.DataFrame(acoustic.round(4), columns=[f"sound_{i:02d}" for i in range(24)])
    mask = rng.uniform(size=df.shape) < 0.03
    df = df.mask(mask)
    df.insert(0, "patient", [f"P{i:04d}" for i in range(n)])
    df.insert(1, "ward", ward)
    df.insert(2, "age", age)
    df["needed_support"] = support
    return df


if __name__ == "__main__":
    out = Path(__file__).resolve().parent / "data" / "breath_pilot.csv"
    out.parent.mkdir(exist_ok=True)
    make().to_csv(out, index=False)
    print(f"wrote {out}")
