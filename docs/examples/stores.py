"""Write sales.parquet: an invented long table of six series for docs/scale.md.

Two families (bulbs, tools) of products, each sold in two or three stores: one
row per product, store and week, made from the demo's history (the invented
Fernhollow chain, written by ``evcal demo --out demo-output``) with each series'
own size and noise (seeded). Run ``python stores.py`` beside ``demo-output/``.
"""

import numpy as np
import pandas as pd

demo = pd.read_csv("demo-output/fernhollow-history.csv")
rng = np.random.default_rng(7)
series = [
    ("bulbs", "P0041", "S07", 0.30),
    ("bulbs", "P0041", "S12", 0.20),
    ("bulbs", "P0042", "S07", 0.15),
    ("tools", "P0077", "S07", 0.10),
    ("tools", "P0077", "S12", 0.12),
    ("tools", "P0078", "S12", 0.08),
]
parts = []
for family, product, store, share in series:
    noise = rng.lognormal(0.0, 0.04, len(demo))
    value = np.round(demo["value"].to_numpy() * share * noise)
    parts.append(
        pd.DataFrame(
            {"family": family, "product": product, "store": store, "date": demo["date"], "value": value}
        )
    )
pd.concat(parts, ignore_index=True).to_parquet("sales.parquet", index=False)
