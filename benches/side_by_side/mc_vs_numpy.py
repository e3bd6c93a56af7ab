#!/usr/bin/env python3
"""Side-by-side timing of propagation of distributions: the whole
`incertus eval examples/models/mc_five_inputs.toml --mc N` process against
numpy's compute time alone for the same computation (drawing the five
inputs, evaluating the model, sorting, both coverage intervals), run
alternately, several rounds, so that both see the same machine load.

The numpy side reads the same model file with tomllib and draws from the
same distributions (normal, rectangular, triangular, scaled and shifted t
for the Type A series, arc sine), evaluates the same formula with numpy
array operations, sorts with np.sort and finds the intervals of
JCGM 101:2008, 7.7 with vectorised index arithmetic. Its start-up, imports
and file reading are not timed; the incertus figure is the wall time of the
whole process (start-up, parsing, first-order evaluation, Monte Carlo,
report).

Usage (from the repository root; needs numpy from PyPI):
    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE \\
        python3 benches/side_by_side/mc_vs_numpy.py [--rounds 7] [--trials 1000000]
    ... --scaling    also times incertus alone from 10^4 to 10^8 trials
"""
import argparse
import math
import os
import statistics
import subprocess
import time
import tomllib

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
MODEL = os.path.join(ROOT, "examples", "models", "mc_five_inputs.toml")


def numpy_run(model, n, p, seed):
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    i = model["inputs"]
    a = i["a"]["value"] + i["a"]["standard_uncertainty"] * rng.standard_normal(n)
    b = i["b"]["value"] + i["b"]["half_width"] * (2.0 * rng.random(n) - 1.0)
    c0, cw = i["c"]["value"], i["c"]["half_width"]
    c = rng.triangular(c0 - cw, c0, c0 + cw, n)
    obs = np.array(i["d"]["observations"])
    k = len(obs)
    d = obs.mean() + obs.std(ddof=1) / math.sqrt(k) * rng.standard_t(k - 1, n)
    e = i["e"]["value"] + i["e"]["half_width"] * np.sin(2.0 * np.pi * rng.random(n))
    y = a * np.exp(-b / c) + np.sqrt(d**2 + e**2) / (1 + a * b)
    mean = y.mean()
    sd = y.std(ddof=1)
    s = np.sort(y)
    q = int(p * n) if (p * n).is_integer() else int(math.floor(p * n + 0.5))
    r = (n - q) // 2 if (n - q) % 2 == 0 else (n - q + 1) // 2
    sym = (s[r - 1], s[r + q - 1])
    widths = s[q:] - s[: n - q]
    j = int(np.argmin(widths))
    short = (s[j], s[j + q])
    return time.perf_counter() - t0, mean, sd, sym, short


def incertus_run(exe, n, threads=None):
    args = [exe, "eval", MODEL, "--mc", str(n), "--format", "json"]
    if threads:
        args += ["--threads", str(threads)]
    t0 = time.perf_counter()
    out = subprocess.run(args, check=True, capture_output=True, text=True).stdout
    return time.perf_counter() - t0, out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--rounds", type=int, default=7)
    ap.add_argument("--trials", type=int, default=1_000_000)
    ap.add_argument("--scaling", action="store_true")
    args = ap.parse_args()
    subprocess.run(["cargo", "build", "--release", "--quiet"], cwd=ROOT, check=True)
    exe = os.path.join(ROOT, "target", "release", "incertus")
    with open(MODEL, "rb") as fh:
        model = tomllib.load(fh)
    import json

    ratios, ts_rust, ts_np = [], [], []
    for k in range(args.rounds):
        tr, out = incertus_run(exe, args.trials)
        tn, mean, sd, sym, short = numpy_run(model, args.trials, 0.95, k)
        mc = json.loads(out)["results"][0]["monte_carlo"]
        # Same distributions, different random numbers: agreement within a
        # few standard errors of the mean and of the standard deviation.
        assert abs(mc["value"] - mean) < 6 * sd / math.sqrt(args.trials), (mc["value"], mean)
        assert abs(mc["standard_uncertainty"] / sd - 1) < 6 / math.sqrt(2 * args.trials), (mc["standard_uncertainty"], sd)
        ts_rust.append(tr)
        ts_np.append(tn)
        ratios.append(tn / tr)
    print(f"model: {os.path.relpath(MODEL, ROOT)}, {args.trials} trials, numpy {np.__version__}, {os.cpu_count()} cores")
    print(f"incertus, whole process : {statistics.median(ts_rust) * 1e3:8.1f} ms (median of {args.rounds})")
    print(f"numpy, compute only     : {statistics.median(ts_np) * 1e3:8.1f} ms")
    print(f"ratio numpy/incertus, median of {args.rounds} alternating rounds: {statistics.median(ratios):.2f}"
          f"  (range {min(ratios):.2f} to {max(ratios):.2f})")
    if args.scaling:
        print("scaling of the whole incertus process (median of 3):")
        for n in [10**4, 10**5, 10**6, 10**7, 10**8]:
            ts = sorted(incertus_run(exe, n)[0] for _ in range(3))
            print(f"  {n:>10} trials: {ts[1]:8.3f} s   {ts[1] / n * 1e9:6.1f} ns per trial")


if __name__ == "__main__":
    main()
