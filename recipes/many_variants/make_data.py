"""Invented demo data: leaf spectra of orchard trees and next season's blight.

Everything here is made up: 120 fictional apple trees, 12 reflectance bands measured
on their leaves in late summer, and whether the tree showed blight the next season
(about 40% did). Two of the bands carry a weak signal; the other ten are noise.

Run:  python recipes/many_variants/make_data.py   (writes data/orchard.csv)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261202
N = 120


def make(seed: int = SEED, n: int = N) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    bands = rng.normal(size=(n, 12))
    risk = 0.8 * bands[:, 2] - 0.6 * bands[:, 6] - 0.4
    blight = (rng.uniform(size=n) < 1 / (1 + np.exp(-risk))).astype(int)
    df = pd.DataFrame(bands.round(4), columns=[f"band_{i:02d}" for i in range(1, 13)])
    df.insert(0, "tree", [f"T{i:04d}" for i in range(n)])
    df["blight_next_season"] = blight
    return df


if __name__ == "__main__":
    out = Path(__file__).resolve().parent / "data" / "orchard.csv"
    out.parent.mkdir(exist_ok=True)
    make().to_csv(out, index=False)
    print(f"wrote {out}")
