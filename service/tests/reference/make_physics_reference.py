#!/usr/bin/env python3
"""Reference values for the physics tests, computed with an independent library (mpmath,
scipy) and stored beside this script as physics_reference.json. The Rust tests read the JSON
with include_str!; this script is not needed at test time.

    python3 -m venv /tmp/rw-venv && /tmp/rw-venv/bin/pip install mpmath scipy
    /tmp/rw-venv/bin/python service/tests/reference/make_physics_reference.py

All tables and level systems below are invented for testing (demo data, not measurements).
"""
import json
import os

import mpmath as mp
import numpy as np
import scipy
from scipy.interpolate import PchipInterpolator

mp.mp.dps = 40

# CODATA 2018 (the same values as proto/src/constants.rs)
H = mp.mpf("6.62607015e-34")
K_B = mp.mpf("1.380649e-23")
C_LIGHT = mp.mpf("299792458")
R_INF = mp.mpf("10973731.568160")
KELVIN_PER_RYDBERG = H * C_LIGHT * R_INF / K_B


def f(x):
    """mpf -> float for JSON."""
    return float(x)


# ---------------------------------------------------------------- exponential integrals
def exponential_integrals():
    xs = ["1e-12", "1e-6", "1e-3", "0.01", "0.1", "0.3", "0.5", "0.9", "0.999999", "1",
          "1.000001", "1.1", "1.5", "2", "3", "5", "7.5", "10", "20", "30", "50", "100",
          "300", "700", "800", "1e4", "1e8", "1e15"]
    out = []
    for s in xs:
        x = mp.mpf(s)
        row = {"x": f(x)}
        for n in (1, 2, 3, 5):
            en = mp.expint(n, x)
            row[f"e{n}_scaled"] = f(mp.exp(x) * en)
            row[f"e{n}"] = f(en) if en > mp.mpf("1e-300") else None
        out.append(row)
    return out


# ---------------------------------------------------------------- Maxwellian averages
TABLES = [
    {"name": "forbidden", "kind": 2, "gf": None, "below": "constant", "delta_e_ry": 0.2,
     "energies_ry": [0.0, 0.05, 0.1, 0.3, 0.8, 2.0, 5.0],
     "omega": [1.2, 1.5, 1.3, 1.1, 1.0, 0.95, 0.9]},
    {"name": "allowed_with_gf", "kind": 1, "gf": 0.5, "below": "constant", "delta_e_ry": 0.5,
     "energies_ry": [0.01, 0.1, 0.5, 1.5, 4.0],
     "omega": [2.0, 2.5, 3.5, 5.0, 7.0]},
    {"name": "allowed_no_gf", "kind": 1, "gf": None, "below": "constant", "delta_e_ry": 0.5,
     "energies_ry": [0.01, 0.1, 0.5, 1.5, 4.0],
     "omega": [2.0, 2.5, 3.5, 5.0, 7.0]},
    {"name": "spin_change_linear_threshold", "kind": 3, "gf": None, "below": "linear",
     "delta_e_ry": 0.3,
     "energies_ry": [0.05, 0.2, 0.6, 1.0, 3.0],
     "omega": [0.3, 0.25, 0.15, 0.08, 0.02]},
    {"name": "weak_allowed_stiff_spacing", "kind": 4, "gf": 0.01, "below": "constant",
     "delta_e_ry": 1.0,
     "energies_ry": [1e-6, 1.0000001e-6, 2e-3, 0.5, 50.0, 50.0 + 1e-7, 400.0],
     "omega": [0.05, 0.06, 0.04, 0.07, 0.3, 0.31, 0.4]},
]
TEMPERATURES_K = [1e2, 1e3, 1e4, 3e4, 1e5, 1e6, 1e7, 1e8]


def omega_model(t, e_f):
    """The model the Rust code integrates: linear between points, threshold rule, tail."""
    es = [mp.mpf(v) for v in t["energies_ry"]]
    ws = [mp.mpf(v) for v in t["omega"]]
    de = mp.mpf(t["delta_e_ry"])
    if e_f <= es[0]:
        if t["below"] == "linear" and es[0] > 0:
            return ws[0] * e_f / es[0]
        return ws[0]
    if e_f >= es[-1]:
        ratio_last = 1 + es[-1] / de
        if t["kind"] == 2:
            return ws[-1]
        if t["kind"] == 3:
            return ws[-1] * ((es[-1] + de) / (e_f + de)) ** 2
        if t["gf"] is not None:
            slope = 4 * mp.mpf(t["gf"]) / de
            offset = ws[-1] - slope * mp.log(ratio_last)
        else:
            slope = ws[-1] / mp.log(ratio_last)
            offset = 0
        return slope * mp.log(1 + e_f / de) + offset
    for i in range(len(es) - 1):
        if es[i] <= e_f <= es[i + 1]:
            s = (e_f - es[i]) / (es[i + 1] - es[i])
            return ws[i] * (1 - s) + ws[i + 1] * s
    raise AssertionError


def maxwell_average(t, t_k):
    kt = mp.mpf(t_k) / KELVIN_PER_RYDBERG
    pts = [mp.mpf(0)] + [mp.mpf(e) / kt for e in t["energies_ry"] if e > 0]
    total = mp.mpf(0)
    for a, b in zip(pts[:-1], pts[1:]):
        total += mp.quad(lambda x: omega_model(t, x * kt) * mp.exp(-x), [a, b])
    last = pts[-1]
    total += mp.quad(lambda x: omega_model(t, x * kt) * mp.exp(-x),
                     [last, last + 1, last + 10, last + 100, mp.inf])
    return total


def maxwell_tables():
    out = []
    for t in TABLES:
        row = dict(t)
        row["temperatures_k"] = TEMPERATURES_K
        row["upsilon"] = [f(maxwell_average(t, tk)) for tk in TEMPERATURES_K]
        out.append(row)
    return out


def bethe_from_threshold():
    """Omega = A ln(E_i/dE) from threshold: Upsilon = A e^a E1(a), a = dE/kT."""
    out = []
    for de, gf in [(0.1, 0.3), (1.0, 2.0), (5.0, 0.05)]:
        for tk in TEMPERATURES_K:
            a = mp.mpf(de) * KELVIN_PER_RYDBERG / mp.mpf(tk)
            slope = 4 * mp.mpf(gf) / mp.mpf(de)
            out.append({"delta_e_ry": de, "gf": gf, "t_k": tk,
                        "upsilon": f(slope * mp.exp(a) * mp.e1(a))})
    return out


# ---------------------------------------------------------------- Van Regemorter
def ion_join(bethe):
    """The smooth p-norm join (p = 4) of the Bethe form and the 0.2 ion floor."""
    return (bethe ** 4 + mp.mpf("0.2") ** 4) ** (mp.mpf(1) / 4)


def van_regemorter():
    ys = [1e-3, 0.01, 0.02, 0.04, 0.1, 0.2, 0.4, 1.0, 2.0, 4.0, 10.0, 100.0]
    p = []
    for y in ys:
        bethe = mp.sqrt(3) / (2 * mp.pi) * mp.exp(y) * mp.e1(y)
        p.append({"y": y, "neutral": f(bethe), "ion": f(ion_join(bethe))})
    ups = []
    for gf, de, tk in [(0.3, 0.7, 1e4), (1.2, 0.1, 5e3), (0.05, 2.0, 1e6)]:
        y = mp.mpf(de) * KELVIN_PER_RYDBERG / mp.mpf(tk)
        bethe = mp.sqrt(3) / (2 * mp.pi) * mp.exp(y) * mp.e1(y)
        pre = 8 * mp.pi / mp.sqrt(3) * mp.mpf(gf) / mp.mpf(de)
        ups.append({"gf": gf, "delta_e_ry": de, "t_k": tk,
                    "neutral": f(pre * bethe), "ion": f(pre * ion_join(bethe))})
    return {"gaunt_factor": p, "upsilon": ups}


# ---------------------------------------------------------------- PCHIP (scipy)
def pchip():
    x = [0.0, 0.1, 0.15, 0.4, 0.55, 0.8, 0.95, 1.0]
    y = [1.0, 1.3, 1.25, 0.6, 0.6, 2.0, 2.2, 2.1]
    interp = PchipInterpolator(np.array(x), np.array(y))
    xe = list(np.linspace(0.0, 1.0, 41)) + [0.123456, 0.987654]
    return {"x": x, "y": y, "x_eval": [float(v) for v in xe],
            "y_eval": [float(v) for v in interp(np.array(xe))]}


# ---------------------------------------------------------------- populations
def five_level_system():
    """Invented 5-level ion with forbidden-line A values and one fast decay."""
    prefactor = H * H / ((2 * mp.pi * mp.mpf("9.1093837015e-31")) ** mp.mpf(1.5)) \
        / mp.sqrt(K_B) * mp.mpf(10) ** 6
    t_e = mp.mpf(1e4)
    energies_k = [0.0, 2.3e4, 4.1e4, 6.0e4, 1.5e5]
    g = [9.0, 5.0, 1.0, 5.0, 3.0]
    radiative = [(1, 0, 2.0e-2), (2, 0, 3.0e-1), (2, 1, 1.6), (3, 0, 4.0e-3), (3, 1, 1.0e-1),
                 (3, 2, 5.0e-2), (4, 0, 2.0e8), (4, 3, 1.0e3)]
    upsilons = {(1, 0): 2.1, (2, 0): 0.25, (2, 1): 0.3, (3, 0): 0.6, (3, 1): 1.2, (3, 2): 0.1,
                (4, 0): 3.5, (4, 1): 0.8, (4, 2): 0.2, (4, 3): 0.5}
    collisional = []
    for (u, l), ups in upsilons.items():
        q_ul = prefactor * ups / (g[u] * mp.sqrt(t_e))
        q_lu = (mp.mpf(g[u]) / g[l]) * q_ul * mp.exp(-(mp.mpf(energies_k[u]) - energies_k[l]) / t_e)
        collisional.append((u, l, q_lu, q_ul))
    return t_e, energies_k, g, radiative, collisional


def solve_mp(n, radiative, collisional, ne):
    ne = mp.mpf(ne)
    rate = mp.zeros(n, n)  # rate[j, k] from j to k
    for u, l, a in radiative:
        rate[u, l] += mp.mpf(a)
    for u, l, q_lu, q_ul in collisional:
        rate[l, u] += ne * q_lu
        rate[u, l] += ne * q_ul
    m = mp.zeros(n, n)
    b = mp.zeros(n, 1)
    for k in range(n):
        m[0, k] = 1
    b[0] = 1
    for j in range(1, n):
        for k in range(n):
            if k == j:
                m[j, j] = -sum(rate[j, kk] for kk in range(n))
            else:
                m[j, k] = rate[k, j]
    return mp.lu_solve(m, b)


def populations():
    t_e, energies_k, g, radiative, collisional = five_level_system()
    densities = [1.0, 1e2, 1e4, 1e6, 1e8, 1e12, 1e16, 1e20]
    sols = []
    for ne in densities:
        x = solve_mp(5, radiative, collisional, ne)
        sols.append({"ne_cm3": ne, "fractions": [f(v) for v in x]})
    return {
        "t_k": f(t_e), "energies_k": energies_k, "g": g,
        "radiative": [{"upper": u, "lower": l, "a_s": a} for u, l, a in radiative],
        "collisional": [{"upper": u, "lower": l, "excitation_cm3_s": f(q_lu),
                         "deexcitation_cm3_s": f(q_ul)} for u, l, q_lu, q_ul in collisional],
        "solutions": sols,
    }


def main():
    data = {
        "generator": "make_physics_reference.py",
        "mpmath_version": mp.__version__,
        "scipy_version": scipy.__version__,
        "note": "tables and level systems are invented test data",
        "kelvin_per_rydberg": f(KELVIN_PER_RYDBERG),
        "exponential_integrals": exponential_integrals(),
        "maxwell_tables": maxwell_tables(),
        "bethe_from_threshold": bethe_from_threshold(),
        "van_regemorter": van_regemorter(),
        "pchip": pchip(),
        "populations": populations(),
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "physics_reference.json")
    with open(path, "w") as fh:
        json.dump(data, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
