"""Invented demo data: a wide assay panel on a handful of lab samples, with no signal at all.

Everything here is made up: 60 fictional lab samples (30 marked "responder",
30 "non-responder") and 2000 fictional assay read-outs per sample. The labels are
assigned at random, independently of every read-out, so no model can do better
than chance on new samples. The point of the recipe is to show that the honest
estimate says so, even with 2000 features to choose from.

Run:  python recipes/wide_panel/make_data.py   (writes data/wide_panel.csv)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261202
N_PER_CLASS = 30
N_FEATURES = 2000


def make(
    seed: int = SEED, n_per_class: int = N_PER_CLASS, n_features: int = N_FEATURES
) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    n = 2 * n_per_class
    # Read-outs: log-normal-ish intensities with a per-assay level and spread, no link to the label.
    level = rng.normal(5.0, 1.0, n_features)
    spread = rng.uniform(0.3, 1.2, n_features)
    values = level + spread * rng.normal(size=(n, n_features))
    df = pd.DataFrame(
        values.round(4), columns=[f"assay_{i:04d}" for i in range(n_features)]
    )
    labels = np.array([1] * n_per_class + [0] * n_per_class)
    rng.shuffle(labels)  # pure noise: the label is a coin toss with a fixed 30/30 split
    df.insert(0, "sample", [f"S{i:03d}" for i in range(n)])
    df["responder"] = labels
    return df


if __name__ == "__main__":
    out = Path(__file__).resolve().parent / "data" / "wide_panel.csv"
    out.parent.mkdir(exist_ok=True)
    make().to_csv(out, index=False)
    print(f"wrote {out}")
