"""The README's example of the weft Python package, on invented data: 40 neighbourhood
bakeries observed over 12 months; loaves sold fall by 40 per unit of price and rise by
3 per oven hour, plus a level of each bakery's own. Run:
WEFT_LIBRARY=build/cabi/libweft.so.0 PYTHONPATH=cabi/python python3 cabi/python/example.py"""
import numpy as np
import pandas as pd

import weft

rng = np.random.default_rng(5)
bakery = np.repeat([f"bakery {i:02d}" for i in range(40)], 12)
month = np.tile(pd.date_range("2025-01-01", periods=12, freq="MS"), 40)
price = rng.uniform(2.0, 4.0, size=480)
oven_hours = rng.uniform(20, 60, size=480)
loaves = (300 - 40 * price + 3 * oven_hours + np.repeat(rng.normal(0, 30, 40), 12)
          + rng.normal(0, 10, 480))
frame = pd.DataFrame({"bakery": bakery, "month": month, "loaves": loaves,
                      "price": price, "oven_hours": oven_hours})

result = weft.fit(frame, outcome="loaves", regressors=["price", "oven_hours"],
                  unit="bakery", period="month", model="fd periods cluster")
print(result.coefficients.loc[["price", "oven_hours"]].to_string())
print("df:", result.summary["df of t, F and intervals"])
test = result.joint(["price", "oven_hours"])
print(f"joint F {test.f:.6g} on ({test.f_df1:g}, {test.f_df2:g}), p {test.f_p:.3g}")
frame["residual"] = result.residuals  # NaN on each bakery's first month (fd)
print("rows without a residual:", int(frame["residual"].isna().sum()))
