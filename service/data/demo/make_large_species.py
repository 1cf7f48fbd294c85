#!/usr/bin/env python3
"""Writes the INVENTED 34-level demo species "Mk II" (the fictional element Mockium).

Nothing here is measured or computed from atomic structure: the numbers are made up to have
plausible magnitudes (A from 1e-3 to 1e9 s^-1, effective collision strengths 0.01-10, level
energies up to ~1e5 cm^-1) so that the service has a large species to exercise. For allowed
lines the invented numbers are made consistent with each other, as real data would be: A
follows from f_lu through f_lu = (g_u/g_l) * A * eps0 m_e c^3 / (2 pi e^2 nu^2), and the
Upsilon(T) and Omega(E) tables have the Bethe high-energy limit set by f_lu (Van Regemorter
shape), so that Burgess & Tully scaling with its oscillator-strength limit point fits them.

Usage (from any folder):
    python3 make_large_species.py            # writes demo/mk-ii.toml and demo-v2/mk-ii.toml
The demo-v2 copy differs in a few numbers (one level energy, one A value, one upsilon), so that
two versions can be compared; the allowed-line A, f and collision values that follow from
that level energy move with it.
Deterministic: a fixed linear congruential generator, no random module.
"""
import math
import os

HERE = os.path.dirname(os.path.abspath(__file__))

# CODATA 2018 (SI), as in proto/src/constants.rs.
EPS0 = 8.8541878128e-12
M_E = 9.1093837015e-31
C = 299792458.0
E_CH = 1.602176634e-19

TEMPERATURES_K = [1000.0, 2000.0, 5000.0, 1.0e4, 2.0e4, 5.0e4, 1.0e5, 2.0e5]
SCATTERED_RY = [0.0, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0]
RY_CM1 = 109737.31568160  # R_inf in cm^-1 (CODATA 2018)
K_PER_RY = 157887.51      # Rydberg energy / k in K (CODATA 2018)


def e1(y):
    """Exponential integral E1(y), y > 0 (series below 1, continued fraction above)."""
    if y < 1.0:
        total, term = 0.0, 1.0
        for k in range(1, 40):
            term *= -y / k
            total -= term / k
        return -0.5772156649015329 - math.log(y) + total
    frac = 0.0
    for k in range(60, 0, -1):
        frac = k * k / (y + 2 * k + 1 - frac)
    return math.exp(-y) / (y + 1 - frac)


def gaunt_ion(y):
    """Van Regemorter's effective Gaunt factor for ions: Bethe form joined to a 0.2 floor."""
    bethe = math.sqrt(3) / (2 * math.pi) * math.exp(y) * e1(y)
    return (bethe**4 + 0.2**4) ** 0.25


def allowed_upsilon(g_lower, f, de_cm1, t_k):
    """Upsilon with the Bethe high-temperature limit of an allowed line (Van Regemorter shape),
    so that invented allowed data agree with their oscillator strength."""
    de_ry = de_cm1 / RY_CM1
    return 8 * math.pi / math.sqrt(3) * g_lower * f / de_ry * gaunt_ion(de_ry * K_PER_RY / t_k)


class Lcg:
    """Numerical Recipes 32-bit LCG; uniform floats in [0, 1)."""

    def __init__(self, seed):
        self.state = seed & 0xFFFFFFFF

    def uniform(self):
        self.state = (1664525 * self.state + 1013904223) & 0xFFFFFFFF
        return self.state / 2.0**32

    def between(self, lo, hi):
        return lo + (hi - lo) * self.uniform()

    def log_between(self, lo, hi):
        return math.exp(self.between(math.log(lo), math.log(hi)))


def sig(x, digits=4):
    """Round to `digits` significant digits and print compactly."""
    if x == 0:
        return "0.0"
    s = f"{x:.{digits - 1}e}"
    mant, exp = s.split("e")
    exp = int(exp)
    if -3 <= exp <= 5:
        v = float(s)
        out = f"{v:.{max(digits - 1 - exp, 1)}f}"
        return out
    return f"{mant}e{exp}"


# Invented terms: (label, parity, multiplicity, J values, term energy cm^-1, fine-structure step cm^-1)
TERMS = [
    ("5p 2P", "odd", 2, [0.5, 1.5], 0.0, 4210.0),
    ("5p2 4P", "even", 4, [0.5, 1.5, 2.5], 41250.0, 910.0),
    ("5p2 2D", "even", 2, [1.5, 2.5], 47530.0, 380.0),
    ("5p2 2S", "even", 2, [0.5], 53020.0, 0.0),
    ("5p2 2P", "even", 2, [0.5, 1.5], 56870.0, 1320.0),
    ("6s 2S", "even", 2, [0.5], 61440.0, 0.0),
    ("5d 2D", "even", 2, [1.5, 2.5], 68110.0, 560.0),
    ("6p 2P", "odd", 2, [0.5, 1.5], 74390.0, 1720.0),
    ("5d2 4F", "odd", 4, [1.5, 2.5, 3.5, 4.5], 79850.0, 640.0),
    ("5d2 4P", "odd", 4, [0.5, 1.5, 2.5], 84120.0, 450.0),
    ("7s 2S", "even", 2, [0.5], 86930.0, 0.0),
    ("6d 2D", "even", 2, [1.5, 2.5], 89240.0, 310.0),
    ("5d2 2F", "odd", 2, [2.5, 3.5], 91870.0, 520.0),
    ("5d2 2G", "odd", 2, [3.5, 4.5], 94110.0, 260.0),
    ("8s 2S", "even", 2, [0.5], 96480.0, 0.0),
    ("7p 2P", "odd", 2, [0.5, 1.5], 98020.0, 690.0),
    ("5d2 2D", "odd", 2, [1.5, 2.5], 99310.0, 240.0),
]


def j_text(j):
    return f"{int(2 * j)}/2" if j != int(j) else f"{int(j)}"


def build_levels(variant):
    levels = []
    for label, parity, mult, js, base, step in TERMS:
        for k, j in enumerate(js):
            levels.append({
                "label": f"{label}{j_text(j)}",
                "parity": parity,
                "mult": mult,
                "j": j,
                "g": int(2 * j + 1),
                "energy": round(base + k * step, 1),
            })
    levels.sort(key=lambda l: l["energy"])
    if variant == "1.1.0":
        levels[5]["energy"] = round(levels[5]["energy"] + 3.2, 1)
    for i, l in enumerate(levels):
        l["index"] = i + 1
    return levels


def oscillator_strength(upper, lower, a_per_s):
    nu = (upper["energy"] - lower["energy"]) * 100.0 * C  # Hz
    return (upper["g"] / lower["g"]) * a_per_s * EPS0 * M_E * C**3 / (2 * math.pi * E_CH**2 * nu**2)


def dipole_allowed(u, l):
    dj = abs(u["j"] - l["j"])
    return u["parity"] != l["parity"] and dj <= 1 and not (u["j"] == 0 and l["j"] == 0)


def build_radiative(levels, rng, variant):
    lines = []
    for u in levels:
        for l in levels:
            if l["energy"] >= u["energy"]:
                continue
            if dipole_allowed(u, l):
                # pick Upsilon(1e4 K) (strong: same multiplicity), derive f from the Bethe-limit
                # shape and A from f; keep A <= 1e9 s^-1 and Upsilon <= 10 up to 2e5 K
                strong = u["mult"] == l["mult"]
                target = rng.log_between(0.5, 4.0) if strong else rng.log_between(0.02, 0.3)
                de = u["energy"] - l["energy"]
                f = target / allowed_upsilon(l["g"], 1.0, de, 1.0e4)
                f = min(f, 9.5 / allowed_upsilon(l["g"], 1.0, de, TEMPERATURES_K[-1]))
                a = f / oscillator_strength(u, l, 1.0)
                if a > 1.0e9:
                    a = rng.log_between(3e8, 1e9)
                    f = oscillator_strength(u, l, a)
                lines.append((u, l, a, f))
            elif u["parity"] == l["parity"] and abs(u["j"] - l["j"]) <= 2:
                # forbidden (magnetic dipole / electric quadrupole): only some are listed
                if rng.uniform() < 0.35:
                    lines.append((u, l, rng.log_between(1e-3, 1e2), None))
    if variant == "1.1.0":
        u, l, a, f = lines[3]
        lines[3] = (u, l, a * 1.05, None if f is None else f * 1.05)
    return lines


def upsilon_table(kind, rng, u, l, f):
    """Smooth invented Upsilon(T) shapes with the right high-temperature behaviour for each
    Burgess & Tully type; each stays within 0.01-10 without clipping."""
    t4 = [t / 1.0e4 for t in TEMPERATURES_K]
    if kind in ("allowed", "weak-allowed"):
        de = u["energy"] - l["energy"]
        return [allowed_upsilon(l["g"], f, de, t) * (1 + 0.15 / (1 + t / 2.0e4)) for t in TEMPERATURES_K]
    if kind == "forbidden":
        scale = rng.log_between(0.05, 3.0)
        slope = rng.between(-0.05, 0.08)
        return [scale * (1 + slope * math.log10(x * 10)) for x in t4]
    scale = rng.log_between(0.05, 0.5)  # spin-change: falls as 1/T at high temperature
    return [scale / (1 + 0.2 * x) for x in t4]


def omega_table(kind, rng, u, l, f):
    """Smooth invented Omega(E_f) with the right high-energy behaviour for each type."""
    de_ry = (u["energy"] - l["energy"]) / RY_CM1
    if kind in ("allowed", "weak-allowed"):
        pre = 8 * math.pi / math.sqrt(3) * l["g"] * f / de_ry
        return [pre * (0.2 + math.sqrt(3) / (2 * math.pi) * math.log(1 + e / de_ry)) for e in SCATTERED_RY]
    base = rng.log_between(0.05, 3.0)
    if kind == "forbidden":
        return [base * (1 + 0.1 * e / (1 + e)) for e in SCATTERED_RY]
    return [base / (1 + e / de_ry) ** 2 for e in SCATTERED_RY]


def collision_kind(u, l):
    if dipole_allowed(u, l):
        return "allowed" if u["mult"] == l["mult"] else "weak-allowed"
    return "forbidden" if u["mult"] == l["mult"] else "spin-change"


def build_collisions(levels, lines, rng, variant):
    f_of = {(u["index"], l["index"]): f for u, l, _, f in lines}
    blocks = []
    for u in levels:
        for l in levels:
            if l["energy"] >= u["energy"]:
                continue
            f = f_of.get((u["index"], l["index"]))
            kind = collision_kind(u, l)
            roll = rng.uniform()
            block = {"upper": u["index"], "lower": l["index"], "type": kind}
            if kind == "allowed" and roll < 0.25:
                block["estimate"] = "van-regemorter"
            elif kind in ("forbidden", "spin-change") and roll < 0.08:
                block["estimate"] = "coulomb-focusing"
                block["strength"] = round(rng.between(0.3, 1.5), 2)
            elif roll > 0.9:
                block["omega"] = omega_table(kind, rng, u, l, f)
            else:
                block["upsilon"] = upsilon_table(kind, rng, u, l, f)
            blocks.append(block)
    if variant == "1.1.0":
        for b in blocks:
            if "upsilon" in b:
                b["upsilon"][3] *= 1.03
                break
    return blocks


def render(variant):
    rng = Lcg(20240611)
    levels = build_levels(variant)
    lines = build_radiative(levels, rng, variant)
    collisions = build_collisions(levels, lines, rng, variant)
    out = []
    out.append("# INVENTED DATA for the ratewell demo: the element Mockium (Mk) does not exist.")
    out.append("# Every number below is made up with plausible magnitudes; none is measured or computed")
    out.append("# from atomic structure. Do not use for science.")
    out.append(f"# Generated by make_large_species.py (dataset version {variant}); edit the script, not this file.")
    out.append("")
    out.append("[species]")
    out.append('name = "Mk II"')
    out.append('element = "Mk"')
    out.append("nuclear_charge = 150")
    out.append("ion_charge = 1")
    out.append('source = "INVENTED: generated by make_large_species.py for the ratewell demo"')
    out.append("")
    out.append("[units]")
    out.append('energy = "cm-1"')
    out.append('temperature = "K"')
    out.append('collision_energy = "Ry"')
    out.append("")
    out.append("[sources]")
    out.append('invented = "INVENTED numbers for the ratewell demo (make_large_species.py); not real atomic data"')
    for l in levels:
        out.append("")
        out.append("[[level]]")
        out.append(f"index = {l['index']}")
        out.append(f'label = "{l["label"]}"')
        out.append(f"weight = {l['g']}")
        out.append(f"energy = {l['energy']}")
        out.append('source = "@invented"')
    for u, l, a, f in lines:
        out.append("")
        out.append("[[radiative]]")
        out.append(f"upper = {u['index']}")
        out.append(f"lower = {l['index']}")
        out.append(f"a_per_s = {sig(a)}")
        if f is not None:
            out.append(f"oscillator_strength = {sig(f)}")
        out.append('source = "@invented"')
    for b in collisions:
        out.append("")
        out.append("[[collision]]")
        out.append(f"upper = {b['upper']}")
        out.append(f"lower = {b['lower']}")
        out.append(f'type = "{b["type"]}"')
        if "upsilon" in b:
            out.append("temperatures = [" + ", ".join(sig(t) for t in TEMPERATURES_K) + "]")
            out.append("upsilon = [" + ", ".join(sig(v) for v in b["upsilon"]) + "]")
        elif "omega" in b:
            out.append("energies = [" + ", ".join(sig(e) for e in SCATTERED_RY) + "]")
            out.append('energy_kind = "scattered"')
            out.append("omega = [" + ", ".join(sig(v) for v in b["omega"]) + "]")
        else:
            out.append(f'estimate = "{b["estimate"]}"')
            if "strength" in b:
                out.append(f"strength = {b['strength']}")
        out.append('source = "@invented"')
    return "\n".join(out) + "\n"


def main():
    targets = [(os.path.join(HERE, "mk-ii.toml"), "1.0.0"),
               (os.path.join(HERE, "..", "demo-v2", "mk-ii.toml"), "1.1.0")]
    for path, variant in targets:
        with open(path, "w") as fh:
            fh.write(render(variant))
        print(f"wrote {os.path.normpath(path)}")


if __name__ == "__main__":
    main()
