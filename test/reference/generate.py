#!/usr/bin/env python3
"""Regenerate every outside-reference fixture: runs each gen_*.py beside this file.

With --check DIR-less call `generate.py --check`, it writes into a temporary folder instead and compares
each fixture with the committed one, allowing float noise (relative 1e-9, absolute 1e-12), and exits 1 on
any difference. CI runs the check form.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
REL, ABS = 1e-9, 1e-12


def generators():
    return sorted(f for f in os.listdir(HERE) if f.startswith("gen_") and f.endswith(".py"))


def pinned_simd_env():
    """NumPy picks SIMD kernels by CPU at run time, and with AVX-512 its sums round differently in the last
    bits; AdaBoost's trees then break near-ties another way and pick other splits (seen: a few samples'
    decision values move by ~0.01). So the generators run with NumPy's AVX-512 kernels switched off
    (NPY_DISABLE_CPU_FEATURES): the same fixtures on a machine with AVX-512 as on one with AVX2 only."""
    from numpy._core import _multiarray_umath as m

    found = [f for f in m.__cpu_dispatch__ if (f == "X86_V4" or f.startswith("AVX512")) and m.__cpu_features__.get(f)]
    env = dict(os.environ)
    if found:
        env["NPY_DISABLE_CPU_FEATURES"] = " ".join(found)
    return env


def run_all(out_dir):
    env = pinned_simd_env()
    for g in generators():
        subprocess.run([sys.executable, os.path.join(HERE, g), out_dir], check=True, env=env)


def close(a, b, path, problems):
    if isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            problems.append(f"{path}: keys differ: {sorted(set(a) ^ set(b))}")
            return
        for k in a:
            close(a[k], b[k], f"{path}.{k}", problems)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            problems.append(f"{path}: length {len(a)} != {len(b)}")
            return
        for i, (x, y) in enumerate(zip(a, b)):
            close(x, y, f"{path}[{i}]", problems)
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)) and not isinstance(a, bool):
        if not (math.isclose(a, b, rel_tol=REL, abs_tol=ABS) or (math.isnan(a) and math.isnan(b))):
            problems.append(f"{path}: {a} != {b}")
    elif a != b:
        problems.append(f"{path}: {a!r} != {b!r}")


def main():
    if "--check" not in sys.argv:
        run_all(HERE)
        return 0
    with tempfile.TemporaryDirectory() as tmp:
        run_all(tmp)
        problems = []
        fresh = sorted(f for f in os.listdir(tmp) if f.endswith(".json"))
        committed = sorted(f for f in os.listdir(HERE) if f.endswith(".json"))
        if fresh != committed:
            problems.append(f"fixture files differ: made {fresh}, committed {committed}")
        for name in fresh:
            if name not in committed:
                continue
            with open(os.path.join(tmp, name)) as f1, open(os.path.join(HERE, name)) as f2:
                a, b = json.load(f1), json.load(f2)
            # The generator's library versions are recorded, not compared: a newer SciPy may be fine.
            a.pop("generatedWith", None)
            b.pop("generatedWith", None)
            close(a, b, name, problems)
        for p in problems[:50]:
            print("fixture drift:", p)
        print(f"fixtures: {len(fresh)} regenerated, {len(problems)} differences")
        return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
