"""Invented demo data: a small clinic follow-up with four visits per subject.

Everything here is made up: 36 fictional subjects (18 who went on to develop a
fictional condition, 18 who did not), each seen at 4 visits, with 10 invented
measurements per visit. Every subject has a personal baseline that shifts all of
their measurements, so the four rows of one subject look alike. The outcome is
fixed per subject. Three measurements carry a modest signal; the rest are noise.

Because the rows of one subject are so alike, a split that puts one visit of a
subject in training and another in test would let a model recognise the subject
instead of learning the outcome; data.groups: subject keeps that from happening.

Run:  python recipes/repeated_visits/make_data.py   (writes data/repeated_visits.csv)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261203
N_SUBJECTS = 36
N_VISITS = 4
N_FEATURES = 10


def make(
    seed: int = SEED,
    n_subjects: int = N_SUBJECTS,
    n_visits: int = N_VISITS,
    n_features: int = N_FEATURES,
) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    outcome = np.array([1] * (n_subjects // 2) + [0] * (n_subjects - n_subjects // 2))
    rng.shuffle(outcome)
    # A personal baseline per subject and measurement: large, so rows of one subject are alike.
    baseline = rng.normal(0.0, 1.5, size=(n_subjects, n_features))
    # A modest outcome effect on three measurements.
    effect = np.zeros(n_features)
    effect[[0, 2, 5]] = [0.9, -0.8, 0.7]
    rows = []
    for s in range(n_subjects):
        for v in range(n_visits):
            noise = rng.normal(0.0, 0.6, n_features)
            x = baseline[s] + effect * (2 * outcome[s] - 1) + noise
            rows.append([f"subj_{s:02d}", v + 1, *x.round(4), outcome[s]])
    cols = [
        "subject",
        "visit",
        *[f"measure_{i:02d}" for i in range(n_features)],
        "developed_condition",
    ]
    return pd.DataFrame(rows, columns=cols)


if __name__ == "__main__":
    out = Path(__file__).resolve().parent / "data" / "repeated_visits.csv"
    out.parent.mkdir(exist_ok=True)
    make().to_csv(out, index=False)
    print(f"wrote {out}")
