#!/usr/bin/env python3
"""Side-by-side timing: incertus's compiled tape against numpy on the same
batch evaluation, run alternately in one go so that both see the same
machine load and the ratio holds on a noisy machine.

The computation: the 20-node arithmetic formula of benches/common.rs over
10^6 points, columns filled with 1 + 0.5 sin(i (k + 3) 10^-3). numpy
evaluates the same expression with its vectorised array operations (each
operation one pass over the arrays, with temporaries); the tape evaluates
it in chunks of 256 points, one instruction at a time.

Usage (from the repository root; needs numpy from PyPI):
    python3 benches/side_by_side/tape_vs_numpy.py [--rounds 7] [--points 1000000]
"""
import argparse
import json
import os
import re
import statistics
import subprocess
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))


def arith_formula():
    text = open(os.path.join(ROOT, "benches", "common.rs")).read()
    return re.search(r'ARITH_20: &str = "([^"]+)"', text).group(1)


def names_in_order(formula):
    seen = []
    for tok in re.findall(r"[A-Za-z_][A-Za-z_0-9]*", formula):
        if tok not in seen:
            seen.append(tok)
    return seen


def numpy_best(formula, n, repeats):
    names = names_in_order(formula)
    i = np.arange(n, dtype=np.float64)
    env = {name: 1.0 + 0.5 * np.sin(i * (k + 3) * 1e-3) for k, name in enumerate(names)}
    code = compile(formula.replace("^", "**"), "<formula>", "eval")
    best = float("inf")
    out = None
    for _ in range(repeats):
        t = time.perf_counter()
        out = eval(code, {"__builtins__": {}}, env)
        best = min(best, time.perf_counter() - t)
    return best, float(out.sum())


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--rounds", type=int, default=7)
    ap.add_argument("--points", type=int, default=1_000_000)
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args()
    formula = arith_formula()
    subprocess.run(
        ["cargo", "build", "--release", "--quiet", "--example", "tape_throughput"],
        cwd=ROOT,
        check=True,
    )
    exe = os.path.join(ROOT, "target", "release", "examples", "tape_throughput")
    ratios, rust_times, numpy_times = [], [], []
    for _ in range(args.rounds):
        r = json.loads(
            subprocess.run(
                [exe, formula, str(args.points), str(args.repeats)],
                check=True,
                capture_output=True,
                text=True,
            ).stdout
        )
        t_np, checksum = numpy_best(formula, args.points, args.repeats)
        rel = abs(r["checksum"] - checksum) / abs(checksum)
        assert rel < 1e-12, f"results differ: {r['checksum']} vs {checksum}"
        rust_times.append(r["seconds"])
        numpy_times.append(t_np)
        ratios.append(t_np / r["seconds"])
    nodes = r["nodes"]
    rust = statistics.median(rust_times)
    nump = statistics.median(numpy_times)
    print(f"formula: {formula}  ({nodes} nodes, {args.points} points, numpy {np.__version__})")
    print(f"incertus tape : {rust * 1e3:8.2f} ms  ({nodes * args.points / rust / 1e6:7.0f} M node evaluations/s)")
    print(f"numpy         : {nump * 1e3:8.2f} ms  ({nodes * args.points / nump / 1e6:7.0f} M node evaluations/s)")
    print(f"ratio numpy/tape, median of {args.rounds} alternating rounds: {statistics.median(ratios):.2f}"
          f"  (range {min(ratios):.2f} to {max(ratios):.2f})")


if __name__ == "__main__":
    main()
