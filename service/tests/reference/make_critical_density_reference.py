#!/usr/bin/env python3
"""Critical densities of the real-ion test data at 1e4 K, computed independently of the Rust
code from the data files (tomllib) and CODATA 2018 constants (mpmath), counting downward
rates only (common practice, no source; Osterbrock & Ferland 2006, eq. 3.30, from memory,
count every collisional exit instead, which the server serves beside it):

    n_c(i) = sum_{j<i} A_ij / sum_{j<i} q_ij,   q_ij = C Upsilon_ij / (g_i sqrt(T)),
    C = h^2 / ((2 pi m_e)^(3/2) k^(1/2))

with Upsilon at 1e4 K read from the tables (1e4 K is a tabulated temperature of every
table), or, for the transitions given by the semi-classical estimate, from its closed form
as documented in service/src/physics/approximations.rs: Upsilon = s f(kT + dE) / f(dE),
f(E) = r^2 E/Ry + 2 Z r, r = 1.5 (Z + 1) Ry / dE (Bohr radii), Z the ion charge. 0 for a level with no radiative decay, null (+inf) for one with no downward
collisional rate. Writes critical_density_reference.json beside this script:

    python3 service/tests/reference/make_critical_density_reference.py
"""
import json
import os
import tomllib

import mpmath as mp

mp.mp.dps = 40
H = mp.mpf("6.62607015e-34")
K_B = mp.mpf("1.380649e-23")
M_E = mp.mpf("9.1093837015e-31")
C_SI = H**2 / ((2 * mp.pi * M_E) ** mp.mpf(1.5) * mp.sqrt(K_B))  # m^3 s^-1 K^1/2
C_CGS = C_SI * mp.mpf(10) ** 6
C_LIGHT = mp.mpf("299792458")
R_INF_CM = mp.mpf("10973731.568160") / 100  # cm^-1
KELVIN_PER_RYDBERG = H * C_LIGHT * R_INF_CM * 100 / K_B
T = mp.mpf(10000)

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data", "real-ions")


def upsilon_at(collision, t, energies_cm1, ion_charge):
    if collision.get("estimate") == "coulomb-focusing":
        de_ry = (energies_cm1[collision["upper"]] - energies_cm1[collision["lower"]]) / R_INF_CM
        r = mp.mpf("1.5") * (ion_charge + 1) / de_ry
        shape = lambda e: r * r * e + 2 * ion_charge * r
        s = mp.mpf(collision.get("strength", 1.0))
        return s * shape(t / KELVIN_PER_RYDBERG + de_ry) / shape(de_ry)
    temps = collision["temperatures"]
    assert collision.get("temperature_unit", "K") == "K"
    return mp.mpf(collision["upsilon"][temps.index(float(t))])


def species_critical_densities(path):
    with open(path, "rb") as f:
        d = tomllib.load(f)
    weights = {lv["index"]: mp.mpf(lv["weight"]) for lv in d["level"]}
    assert d.get("units", {}).get("energy", "cm-1") == "cm-1"
    assert all("energy_unit" not in lv for lv in d["level"])
    energies = {lv["index"]: mp.mpf(lv["energy"]) for lv in d["level"]}
    charge = d["species"]["ion_charge"]
    n = len(weights)
    out = []
    for i in range(1, n + 1):
        a = sum((mp.mpf(r["a_per_s"]) for r in d.get("radiative", []) if r["upper"] == i), mp.mpf(0))
        q = sum(
            (C_CGS * upsilon_at(c, T, energies, charge) / (weights[i] * mp.sqrt(T))
             for c in d.get("collision", []) if c["upper"] == i),
            mp.mpf(0),
        )
        if a == 0:
            out.append(0.0)
        elif q == 0:
            out.append(None)
        else:
            out.append(float(a / q))
    return d["species"]["name"], out


def main():
    result = {"temperature_k": float(T), "prefactor_cm3_s_k_half": float(C_CGS), "species": {}}
    for name in sorted(os.listdir(DATA)):
        if name.endswith(".toml") and name != "dataset.toml":
            species, values = species_critical_densities(os.path.join(DATA, name))
            result["species"][species] = values
    with open(os.path.join(HERE, "critical_density_reference.json"), "w") as f:
        json.dump(result, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
