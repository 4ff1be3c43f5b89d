"""Invented demo data: six inspectors judge photos of glazed tiles; some tiles are borderline.

Everything here is made up. A fictional ceramics workshop scans 220 glazed tiles
(six read-outs per tile from its surface scanner) and has six inspectors label a
photo of each tile "sound" or "flawed". The inspectors differ in strictness: one
flags more tiles than the others, one fewer. About a third of the tiles are
borderline: whether their glaze counts as flawed depends on a faint crazing that
the scanner does not measure, so on those tiles the inspectors' calls are close
to coin tosses (tilted by each inspector's strictness). Each inspector skipped a
few tiles, so some ratings are missing.

The target of the study is each tile's majority call. On clear tiles it follows
the scanner read-outs; on borderline tiles it cannot be predicted from them.

Run:  python recipes/glaze_inspection/make_data.py   (writes data/tiles.csv)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20260412
N_TILES = 220
SHARE_BORDERLINE = 0.33
# inspector -> (chance to flag a sound tile, chance to miss a flawed tile,
#               chance to call a borderline tile flawed)
INSPECTORS = {
    "insp_ash": (0.03, 0.03, 0.50),
    "insp_bea": (0.10, 0.01, 0.65),  # strict
    "insp_cal": (0.01, 0.10, 0.35),  # lenient
    "insp_dot": (0.04, 0.04, 0.50),
    "insp_eun": (0.03, 0.05, 0.45),
    "insp_fox": (0.05, 0.03, 0.55),
}
SKIPPED = 0.06  # share of tiles each inspector did not rate


def make(seed: int = SEED, n: int = N_TILES) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    gloss = rng.normal(80, 8, n)
    rough = rng.gamma(4.0, 0.5, n)
    pinholes = rng.poisson(2.0, n).astype(float)
    crawl = rng.beta(1.5, 20, n) * 100
    hue = rng.normal(0, 1.5, n)
    thick = rng.normal(0.9, 0.12, n)
    # A flaw score the scanner sees: rough, pitted, crawled, dull glaze.
    score = (
        0.9 * (rough - 2.0)
        + 0.5 * (pinholes - 2.0)
        + 0.15 * (crawl - 7.0)
        - 0.08 * (gloss - 80.0)
        + rng.normal(0, 0.4, n)
    )
    flawed = score > 0
    borderline = rng.random(n) < SHARE_BORDERLINE
    table = pd.DataFrame(
        {
            "tile": [f"T{i:04d}" for i in range(n)],
            "gloss_units": gloss.round(1),
            "roughness_um": rough.round(2),
            "pinholes_per_cm2": pinholes,
            "crawl_area_pct": crawl.round(2),
            "hue_shift": hue.round(2),
            "thickness_mm": thick.round(3),
        }
    )
    for name, (false_flag, miss, borderline_flag) in INSPECTORS.items():
        flip = np.where(flawed, rng.random(n) < miss, rng.random(n) < false_flag)
        call = flawed ^ flip
        call = np.where(borderline, rng.random(n) < borderline_flag, call)
        labels = np.where(call, "flawed", "sound").astype(object)
        labels[rng.random(n) < SKIPPED] = None
        table[name] = labels
    # every tile keeps at least one rating
    rated = table[list(INSPECTORS)].notna().any(axis=1)
    table.loc[~rated, "insp_ash"] = np.where(flawed[~rated], "flawed", "sound")
    return table


if __name__ == "__main__":
    out = Path(__file__).resolve().parent / "data" / "tiles.csv"
    out.parent.mkdir(exist_ok=True)
    make().to_csv(out, index=False)
    print(f"wrote {out}")
