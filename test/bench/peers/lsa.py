"""Peer for the assignment benchmark: scipy.optimize.linear_sum_assignment.

Usage: /usr/bin/python3 lsa.py REPEATS MATRIX.csv [MATRIX.csv ...]
Each MATRIX.csv holds one square cost matrix (comma-separated, no header,
written by test/bench/cases/assignment.ts). For each, the solver runs REPEATS
times, timed inside Python with time.perf_counter (start-up and reading the
file excluded). Prints one JSON object: versions and, per file, the times in
milliseconds and the optimal total cost.
"""
import json
import sys
import time

import numpy as np
import scipy
from scipy.optimize import linear_sum_assignment


def main() -> None:
    repeats = int(sys.argv[1])
    out = {"python": sys.version.split()[0], "numpy": np.__version__, "scipy": scipy.__version__, "matrices": []}
    for path in sys.argv[2:]:
        cost = np.loadtxt(path, delimiter=",", dtype=np.float64, ndmin=2)
        times = []
        total = None
        for _ in range(repeats):
            t0 = time.perf_counter()
            rows, cols = linear_sum_assignment(cost)
            times.append((time.perf_counter() - t0) * 1000.0)
            total = float(cost[rows, cols].sum())
        out["matrices"].append({"file": path, "shape": list(cost.shape), "times_ms": times, "total": total})
    json.dump(out, sys.stdout)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
