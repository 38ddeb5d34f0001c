#!/usr/bin/env python3
"""Outside reference for src/compare: SciPy and NumPy figures on fixed sample pairs.

Usage: gen_compare.py OUT_DIR   (writes OUT_DIR/compare.json)

Every sample is drawn from a seeded NumPy generator and written out in full, so the TypeScript tests feed
the very same numbers to EmpiricalDistribution. Values are rounded (to 8 decimals, or to a coarse grid
where atoms are the point) so the file stays small and JSON round-trips them exactly.

What each check is, by the SciPy/NumPy function that produced it:
  pairs[].ks_asymp       scipy.stats.ks_2samp(a, b, method="asymp")  statistic, pvalue, location, sign
  pairs[].ks_exact       scipy.stats.ks_2samp(a, b, method="exact")  (small pairs only; recorded, the
                         TypeScript side has no exact two-sample method yet)
  pairs[].wasserstein    scipy.stats.wasserstein_distance(a, b)
  pairs[].quantiles_*    numpy.quantile(x, q, method="inverted_cdf")  (smallest x with F(x) >= q)
  kstwo_sf[]             scipy.stats.kstwo.sf(d, n)  over every branch of the Kolmogorov distribution
  smirnov_sf[]           scipy.special.smirnov(n, d)  (one-sided Kolmogorov-Smirnov survival function)
  wilson[]               scipy.stats.binomtest(k, n).proportion_ci(method="wilson")  (95 %)
"""
import json
import math
import os
import platform
import sys

import numpy as np
import scipy
import scipy.special
import scipy.stats as st

QUANTILES = [0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95]
EXACT_MAX_N = 50  # record method="exact" only where SciPy computes it cheaply


def continuous(rng, n, a, b):
    return np.round(rng.beta(a, b, size=n), 8)


def discrete(rng, n, atom_one):
    """Margins on a 0.1 grid with a share `atom_one` sitting exactly at 1.0: ties everywhere."""
    grid = np.round(rng.integers(0, 10, size=n) / 10, 1)
    at_one = rng.random(n) < atom_one
    return np.where(at_one, 1.0, grid)


def pairs():
    yield "continuous n=5 vs m=5", 101, lambda r: (continuous(r, 5, 2, 5), continuous(r, 5, 2, 3))
    yield "continuous n=30 vs m=30", 102, lambda r: (continuous(r, 30, 2, 5), continuous(r, 30, 3, 4))
    yield "continuous n=30 vs m=45", 103, lambda r: (continuous(r, 30, 5, 2), continuous(r, 45, 4, 2))
    yield "continuous n=3 vs m=1", 104, lambda r: (continuous(r, 3, 2, 2), continuous(r, 1, 2, 2))
    yield "discrete atoms n=5 vs m=30", 105, lambda r: (discrete(r, 5, 0.4), discrete(r, 30, 0.4))
    yield "discrete atoms n=200 vs m=150", 106, lambda r: (discrete(r, 200, 0.4), discrete(r, 150, 0.2))
    yield "discrete atoms n=30 vs m=30", 107, lambda r: (discrete(r, 30, 0.5), discrete(r, 30, 0.1))
    yield "identical n=50", 108, lambda r: (lambda x: (x, x.copy()))(continuous(r, 50, 2, 2))
    yield "disjoint n=30 vs m=20", 109, lambda r: (0.4 * continuous(r, 30, 2, 2), 0.6 + 0.4 * continuous(r, 20, 2, 2))
    yield "continuous n=400 vs m=250", 110, lambda r: (continuous(r, 400, 2, 2), continuous(r, 250, 2, 2))
    yield "continuous n=10000 vs m=10000", 111, lambda r: (continuous(r, 10_000, 2, 2), continuous(r, 10_000, 2.1, 2))


def finite_or_none(x):
    x = float(x)
    return None if math.isnan(x) else x


def ks(a, b, method):
    r = st.ks_2samp(a, b, method=method)
    return {
        "statistic": float(r.statistic),
        "pvalue": finite_or_none(r.pvalue),
        "location": float(r.statistic_location),
        "sign": int(r.statistic_sign),
    }


def pair_record(name, seed, make):
    a, b = make(np.random.default_rng(seed))
    rec = {
        "name": name,
        "seed": seed,
        "a": [float(x) for x in a],
        "b": [float(x) for x in b],
        "ks_asymp": ks(a, b, "asymp"),
        "wasserstein": float(st.wasserstein_distance(a, b)),
        "quantiles": QUANTILES,
        "quantiles_a": [float(x) for x in np.quantile(a, QUANTILES, method="inverted_cdf")],
        "quantiles_b": [float(x) for x in np.quantile(b, QUANTILES, method="inverted_cdf")],
    }
    if max(len(a), len(b)) <= EXACT_MAX_N:
        rec["ks_exact"] = ks(a, b, "exact")
    return rec


def kstwo_grid():
    """(n, d) points that land in each branch SciPy's kstwo takes (Simard and L'Ecuyer's selection)."""
    out = []
    for n in [1, 2, 3, 5, 10, 30, 100, 140, 141, 200, 1000, 5000, 100_000, 100_001, 1_000_000]:
        ds = {0.6 / n, 0.9 / n, 1.0 / n, 1.5 / n, 0.5, 0.55, 0.7, 0.95, 1 - 0.5 / n, 1 - 1.5 / n}
        for c in [0.2, 0.35, 0.5, 0.7, 0.8, 0.87, 1.0, 1.2, 1.36, 1.5, 1.63, 1.8, 2.0, 2.2, 3.0, 5.0, 19.3]:
            ds.add(c / math.sqrt(n))
        for c in [0.5, 1.0, 1.4, 2.0]:  # around n * d**1.5 = 1.4, SciPy's Durbin / Pelz-Good switch
            ds.add((c / n) ** (2 / 3))
        for d in sorted(ds):
            if 0 < d < 1:
                out.append({"n": n, "d": d, "sf": float(st.kstwo.sf(d, n))})
    return out


def smirnov_grid():
    out = []
    for n in [1, 2, 5, 10, 50, 141, 1000, 5000, 100_000]:
        for c in [0.3, 0.8, 1.2, 2.0, 3.0]:
            d = c / math.sqrt(n)
            if d < 1:
                out.append({"n": n, "d": d, "sf": float(scipy.special.smirnov(n, d))})
        for d in [0.5, 0.75, 0.99]:
            out.append({"n": n, "d": d, "sf": float(scipy.special.smirnov(n, d))})
    return out


def wilson():
    out = []
    for k, n in [(0, 1), (1, 1), (0, 5), (5, 5), (0, 10), (3, 10), (10, 10), (1, 100), (50, 100),
                 (7, 1000), (999, 1000), (12_345, 1_000_000)]:
        ci = st.binomtest(k, n).proportion_ci(method="wilson")
        out.append({"k": k, "n": n, "low": float(ci.low), "high": float(ci.high)})
    return out


def main():
    out_dir = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    doc = {
        "generatedWith": {
            "script": "test/reference/gen_compare.py",
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scipy": scipy.__version__,
        },
        "pairs": [pair_record(name, seed, make) for name, seed, make in pairs()],
        "kstwo_sf": kstwo_grid(),
        "smirnov_sf": smirnov_grid(),
        "wilson": wilson(),
    }
    with open(os.path.join(out_dir, "compare.json"), "w") as f:
        json.dump(doc, f, separators=(",", ":"), allow_nan=False)
        f.write("\n")


if __name__ == "__main__":
    main()
