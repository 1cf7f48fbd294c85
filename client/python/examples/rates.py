"""ratewell from Python: fetch the rate tables of one species once, evaluate them in a loop,
print the stamp. Usage: python rates.py SERVER_URL. The demo dataset is invented."""
import sys

import numpy as np

import ratewell

conn = ratewell.Connection(sys.argv[1] if len(sys.argv) > 1 else "http://127.0.0.1:50051",
                           dataset="demo", time_budget_s=30)
tables = conn.fetch_tables("Mk III")
for key, value in tables.stamp.items():
    print("stamp", key, value)
temperatures = np.geomspace(2e3, 2e5, 10_000)
total = 0.0
for _ in range(50):
    exc, deexc, flags = tables.evaluate(temperatures)
    total += float(deexc[0, 0])
print("rounds 50 values", exc.size, "first q_ul", f"{deexc[0, 0]:.6e}", "cm3/s")
if flags.any():
    print("caution: some values are flagged (approximate or beyond the source data)")
