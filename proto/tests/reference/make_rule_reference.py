"""Independent check of the table evaluation rule: scipy's PchipInterpolator (Fritsch-Carlson
monotone cubic Hermite with Fritsch-Butland slopes and the three-point shape-preserving end
condition) evaluated on the same knots in (log10 T, ln Upsilon) space.

Run:  python3 make_rule_reference.py > rule_reference.json
Needs numpy and scipy (any recent version); the Rust tests only read the stored JSON.
"""
import json
import numpy as np
import scipy
from scipy.interpolate import PchipInterpolator

cases = []
rng = np.random.default_rng(20261202)
shapes = {
    "smooth_rise": lambda x: np.log(0.5 + 0.3 * x),
    "peak_then_fall": lambda x: np.log(2.0 * np.exp(-((x - 4.5) ** 2)) + 0.1),
    "flat_with_step": lambda x: np.log(np.where(x < 4.2, 0.3, 1.7)),
    "random_walk": None,
}
for name, f in shapes.items():
    log10_t_min, step, knots = 3.0, 0.05, 81
    x = log10_t_min + step * np.arange(knots)
    if f is None:
        y = np.cumsum(rng.normal(0.0, 0.05, knots))
    else:
        y = f(x)
    p = PchipInterpolator(x, y)
    xs = np.sort(rng.uniform(x[0], x[-1], 200))
    cases.append({
        "name": name,
        "log10_t_min_k": log10_t_min,
        "log10_t_step": step,
        "ln_upsilon": y.tolist(),
        "eval_log10_t": xs.tolist(),
        "expected_ln_upsilon": p(xs).tolist(),
        "expected_slopes": p.derivative()(x).tolist(),
    })
print(json.dumps({"generator": f"scipy {scipy.__version__} PchipInterpolator", "cases": cases}))
