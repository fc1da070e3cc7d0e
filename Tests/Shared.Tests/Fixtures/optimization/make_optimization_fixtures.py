#!/usr/bin/python3
"""Regenerates the optimisation fixtures of Tests/Shared.Tests/Optimization from SciPy.

Run with Debian's python3-scipy (scipy 1.10.1, numpy 1.24):  /usr/bin/python3 make_optimization_fixtures.py
Writes, next to this script:
  log_expected_improvement.json   ln h(z), h(z) = z*Phi(z) + phi(z), the expected improvement of a standard normal
                                  over a threshold z above its mean (EI = sigma * h((best - mean) / sigma)), for z from
                                  -1000 to 8: scipy.stats.norm for z > -1, and for z <= -1 the form
                                  h(z) = phi(z) * (1 - x * sqrt(pi/2) * erfcx(x / sqrt(2))), x = -z, with
                                  scipy.special.erfcx and log1p, so no factor underflows.
"""
import json
import math
import os

import numpy as np
import scipy
from scipy.special import erfcx
from scipy.stats import norm

HERE = os.path.dirname(os.path.abspath(__file__))


def log_h(z):
    if z > -1:
        return math.log(z * norm.cdf(z) + norm.pdf(z))
    x = -z
    return -x * x / 2 - 0.5 * math.log(2 * math.pi) + math.log1p(-x * math.sqrt(math.pi / 2) * erfcx(x / math.sqrt(2)))


def main():
    zs = [8, 3, 1, 0.5, 0, -0.5, -0.999, -1, -1.001, -2, -3.7, -5, -8, -12, -20, -24.99, -25.01, -30, -37.5, -40, -60,
          -100, -300, -1000]
    payload = {
        "generator": f"make_optimization_fixtures.py with scipy {scipy.__version__}, numpy {np.__version__}",
        "cases": [{"z": z, "logH": log_h(z)} for z in zs],
    }
    with open(os.path.join(HERE, "log_expected_improvement.json"), "w") as f:
        json.dump(payload, f, indent=None, separators=(",", ":"))
        f.write("\n")


if __name__ == "__main__":
    main()
