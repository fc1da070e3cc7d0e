#!/usr/bin/python3
"""Regenerates the design fixtures of Tests/Shared.Tests/Doe from SciPy.

Run with Debian's python3-scipy (scipy 1.10.1, numpy 1.24):  /usr/bin/python3 make_doe_fixtures.py
Writes, next to this script:
  sobol_unscrambled.json   scipy.stats.qmc.Sobol(d=10, scramble=False).random(1024)
  discrepancy_cd.json      scipy.stats.qmc.discrepancy(sample, method="CD") for several samples
  lhs_random_cd.json       smallest pairwise distance of scipy's LatinHypercube(optimization="random-cd")
                           for n=20, k=5 and n=50, k=8 over seeds 0..10, with the median
"""
import json
import os

import numpy as np
import scipy
from scipy.spatial.distance import pdist
from scipy.stats import qmc

HERE = os.path.dirname(os.path.abspath(__file__))


def write(name, payload):
    payload = {"generator": f"make_doe_fixtures.py with scipy {scipy.__version__}, numpy {np.__version__}", **payload}
    with open(os.path.join(HERE, name), "w") as f:
        json.dump(payload, f, indent=None, separators=(",", ":"))
        f.write("\n")


def main():
    sobol = qmc.Sobol(d=10, scramble=False).random(1024)
    write("sobol_unscrambled.json", {"dimensions": 10, "points": sobol.tolist()})

    rng = np.random.default_rng(20240601)
    samples = [
        ("sobol 1024 x 10", sobol),
        ("sobol 64 x 3", qmc.Sobol(d=3, scramble=False).random(64)),
        ("uniform 30 x 3", rng.random((30, 3))),
        ("uniform 10 x 2", rng.random((10, 2))),
        ("latin hypercube 50 x 6", qmc.LatinHypercube(d=6, seed=7).random(50)),
    ]
    write("discrepancy_cd.json", {"samples": [
        {"name": name, "points": s.tolist(), "cd": float(qmc.discrepancy(s, method="CD"))} for name, s in samples]})

    cases = []
    for n, k in [(20, 5), (50, 8)]:
        distances = []
        for seed in range(11):
            s = qmc.LatinHypercube(d=k, optimization="random-cd", seed=seed).random(n)
            distances.append(float(pdist(s).min()))
        cases.append({"runs": n, "dimensions": k, "seeds": list(range(11)),
                      "minDistanceUnitCube": distances, "median": float(np.median(distances))})
    write("lhs_random_cd.json", {"cases": cases})


if __name__ == "__main__":
    main()
