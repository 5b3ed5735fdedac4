"""Write the databases of docs/history-files.md from the demo's (invented) history.

sales.db (SQLite, table weekly_sales: week_ending, units), sales.duckdb (DuckDB,
table sales: store, day, units, for two invented stores) and
exports/sales-2020-2022.parquet, exports/sales-2023-2026.parquet (date, value).
Run ``python databases.py`` beside ``demo-output/`` (``evcal demo --out demo-output``).
"""

import sqlite3
from pathlib import Path

import duckdb
import pandas as pd

demo = pd.read_csv("demo-output/fernhollow-history.csv")
with sqlite3.connect("sales.db") as con:
    demo.rename(columns={"date": "week_ending", "value": "units"}).to_sql("weekly_sales", con, index=False)
shares = (("S07", 0.6), ("S12", 0.4))
stores = pd.concat([demo.assign(store=s, value=(demo["value"] * f).round()) for s, f in shares])
stores = stores.rename(columns={"date": "day", "value": "units"})[["store", "day", "units"]]
with duckdb.connect("sales.duckdb") as con:
    con.execute("CREATE TABLE sales AS SELECT store, CAST(day AS DATE) AS day, units FROM stores")
Path("exports").mkdir(exist_ok=True)
demo[demo["date"] < "2023"].to_parquet("exports/sales-2020-2022.parquet", index=False)
demo[demo["date"] >= "2023"].to_parquet("exports/sales-2023-2026.parquet", index=False)
