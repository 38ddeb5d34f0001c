#!/usr/bin/env python3
"""Outside reference for the margin sketch (src/sketch): NumPy's exact quantiles and SciPy's KS statistic.

Usage: gen_sketch.py OUT_DIR  -> writes OUT_DIR/sketch_reference.json

The samples are not stored. Both this script and test/unit/sketch/samples.ts make them from the same
counter-based generator, with integer operations and comparisons only (plus one product, which IEEE 754
rounds alike everywhere), so the two agree bit for bit; the fixture carries a few sample values and
NumPy's quantiles so the test can tell if they ever stop agreeing.

Generator: word c of stream `key` is fmix32((c * 0x9E3779B9 + key) mod 2^32) (MurmurHash3's finaliser);
uniform j = ((word(2j) >> 5) * 2^26 + (word(2j+1) >> 6)) / 2^53.
Shapes (n = 100,000 each, two streams per shape):
  uniform  U[0, 1)
  beta82   Beta(8, 2), as the second largest of 9 uniforms (an order statistic)
  discrete atoms 0 (30%), 1 (25%), 0.2, 0.5, 0.8 (5% each), 0.95 (1%); else v*v, v uniform (29%)
"""
import json
import math
import os
import platform
import sys

import numpy as np
import scipy
from scipy import stats

N = 100_000
QS = [0.001, 0.01, 0.1, 0.5, 0.9, 0.99, 0.999]
STREAMS = {"uniform": [101, 102], "beta82": [201, 202], "discrete": [301, 302]}
DISCRETE_ATOMS = [(0.0, 0.3), (1.0, 0.55), (0.2, 0.6), (0.5, 0.65), (0.8, 0.7), (0.95, 0.71)]
KS_PAIRS = [
    ("uniform/101", "uniform/102"),
    ("beta82/201", "beta82/202"),
    ("discrete/301", "discrete/302"),
    ("uniform/101", "beta82/201"),
    ("discrete/301", "uniform/101"),
    ("discrete/301", "beta82/201"),
]


def fmix32(h):
    h = h ^ (h >> np.uint32(16))
    h = h * np.uint32(0x85EBCA6B)
    h = h ^ (h >> np.uint32(13))
    h = h * np.uint32(0xC2B2AE35)
    h = h ^ (h >> np.uint32(16))
    return h


def words(key, counters):
    c = counters.astype(np.uint32)
    return fmix32(c * np.uint32(0x9E3779B9) + np.uint32(key))


def uniforms(key, count):
    j = np.arange(count, dtype=np.uint64)
    a = words(key, 2 * j) >> np.uint32(5)
    b = words(key, 2 * j + 1) >> np.uint32(6)
    return (a.astype(np.float64) * 67108864.0 + b.astype(np.float64)) / 9007199254740992.0


def samples(shape, key):
    if shape == "uniform":
        return uniforms(key, N)
    if shape == "beta82":
        u = uniforms(key, 9 * N).reshape(N, 9)
        return np.sort(u, axis=1)[:, -2]
    u2 = uniforms(key, 2 * N).reshape(N, 2)
    u, v = u2[:, 0], u2[:, 1]
    out = v * v
    chosen = np.zeros(N, dtype=bool)
    for value, up_to in DISCRETE_ATOMS:
        pick = (~chosen) & (u < up_to)
        out[pick] = value
        chosen |= pick
    return out


def main():
    out_dir = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    made = {}
    streams = []
    for shape, keys in STREAMS.items():
        for key in keys:
            x = samples(shape, key)
            made[f"{shape}/{key}"] = x
            s = np.sort(x)
            # numpy.quantile(method='inverted_cdf'): the smallest sample value x with F(x) >= q.
            qv = np.quantile(x, QS, method="inverted_cdf")
            streams.append({
                "shape": shape,
                "key": key,
                "head": [float(v) for v in x[:4]],
                "fsum": math.fsum(x.tolist()),
                "quantiles": [float(v) for v in qv],
                # Rank interval [F(x-), F(x)] of each quantile, by searchsorted on the sorted sample.
                "rankBelow": [float(np.searchsorted(s, v, side="left") / N) for v in qv],
                "rankAtOrBelow": [float(np.searchsorted(s, v, side="right") / N) for v in qv],
            })
    ks = []
    for a, b in KS_PAIRS:
        # scipy.stats.ks_2samp: the two-sample statistic D = sup |F_a - F_b| (exact for the samples).
        r = stats.ks_2samp(made[a], made[b])
        ks.append({"a": a, "b": b, "statistic": float(r.statistic)})
    doc = {
        "generatedWith": {"python": platform.python_version(), "numpy": np.__version__, "scipy": scipy.__version__},
        "generator": "fmix32 counter streams, see test/reference/gen_sketch.py and test/unit/sketch/samples.ts",
        "n": N,
        "q": QS,
        "quantileMethod": "numpy.quantile(method='inverted_cdf')",
        "streams": streams,
        "ks": ks,
    }
    with open(os.path.join(out_dir, "sketch_reference.json"), "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
