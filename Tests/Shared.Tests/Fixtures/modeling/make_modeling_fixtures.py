#!/usr/bin/python3
"""Regenerates the modelling fixtures with Debian's python3 (scipy 1.10, scikit-learn 1.2):

    /usr/bin/python3 Tests/Shared.Tests/Fixtures/modeling/make_modeling_fixtures.py

designs.json                  seeded Latin hypercube training designs (scipy.stats.qmc.LatinHypercube) and
                              2,000-point holdout sets (scipy.stats.qmc.Sobol, scramble=False), unit cube.
gp_fixed_hyperparameters.json sklearn GaussianProcessRegressor with optimizer=None: mean, std and log marginal
                              likelihood at given hyper-parameters.
gp_max_likelihood.json        sklearn GaussianProcessRegressor fitted by maximum likelihood with
                              n_restarts_optimizer=5: its holdout RMSE on the same designs.
The test functions are those of the Virtual Library of Simulation Experiments (Surjanovic & Bingham); the C#
tests evaluate them again and check the stored responses.
"""
import json
import os
import warnings

import numpy as np
import scipy
import sklearn
from scipy.stats import qmc
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import RBF, ConstantKernel, Matern

HERE = os.path.dirname(os.path.abspath(__file__))
warnings.filterwarnings("ignore")


def branin(u):
    x1 = -5 + 15 * u[:, 0]
    x2 = 15 * u[:, 1]
    b, c, t = 5.1 / (4 * np.pi ** 2), 5 / np.pi, 1 / (8 * np.pi)
    return (x2 - b * x1 ** 2 + c * x1 - 6) ** 2 + 10 * (1 - t) * np.cos(x1) + 10


ALPHA = np.array([1.0, 1.2, 3.0, 3.2])
A = np.array([[10, 3, 17, 3.5, 1.7, 8], [0.05, 10, 17, 0.1, 8, 14], [3, 3.5, 1.7, 10, 17, 8], [17, 8, 0.05, 10, 0.1, 14]])
P = 1e-4 * np.array([[1312, 1696, 5569, 124, 8283, 5886], [2329, 4135, 8307, 3736, 1004, 9991],
                     [2348, 1451, 3522, 2883, 3047, 6650], [4047, 8828, 8732, 5743, 1091, 381]])


def hartmann6(u):
    inner = np.einsum("ij,nij->ni", A, (u[:, None, :] - P[None, :, :]) ** 2)
    return -(np.exp(-inner) @ ALPHA)


BH_LO = np.array([0.05, 100, 63070, 990, 63.1, 700, 1120, 9855])
BH_HI = np.array([0.15, 50000, 115600, 1110, 116, 820, 1680, 12045])


def borehole(u):
    rw, r, tu, hu, tl, hl, l, kw = (BH_LO + u * (BH_HI - BH_LO)).T
    lr = np.log(r / rw)
    return 2 * np.pi * tu * (hu - hl) / (lr * (1 + 2 * l * tu / (lr * rw * rw * kw) + tu / tl))


FUNCTIONS = {"Branin": (branin, 2), "Hartmann-6": (hartmann6, 6), "Borehole": (borehole, 8)}


def design(name, runs, seed):
    _, d = FUNCTIONS[name]
    return qmc.LatinHypercube(d, seed=seed).random(runs)


def holdout(d):
    return qmc.Sobol(d, scramble=False).random_base2(11)[:2000]


def rows(a):
    return [[float(v) for v in row] for row in np.atleast_2d(a)]


def write(name, content):
    content = {"generatedBy": "make_modeling_fixtures.py", "scipy": scipy.__version__, "sklearn": sklearn.__version__, **content}
    with open(os.path.join(HERE, name), "w") as f:
        json.dump(content, f, indent=1)
        f.write("\n")


# --- training designs (10·k and 20·k runs) and holdout sets ------------------------------------------------
designs = []
for name, (f, d) in FUNCTIONS.items():
    for per in (10, 20):
        runs, seed = per * d, 1000 + per * d
        u = design(name, runs, seed)
        designs.append({"function": name, "runs": runs, "seed": seed, "points": rows(u), "values": [float(v) for v in f(u)]})
write("designs.json", {
    "designs": designs,
    "holdout": {str(d): rows(holdout(d)) for d in sorted({d for _, d in FUNCTIONS.values()})},
})

# --- fixed hyper-parameters ---------------------------------------------------------------------------------
def kernel_of(kind, length_scales, signal):
    c = ConstantKernel(signal, "fixed")
    if kind == "squaredExponential":
        return c * RBF(length_scales, "fixed")
    nu = {"matern32": 1.5, "matern52": 2.5}[kind]
    return c * Matern(length_scales, "fixed", nu=nu)


fixed = []
for case, (name, runs, seed, kind, ls, signal, noise) in {
    "branin-se": ("Branin", 15, 7, "squaredExponential", [0.6, 0.9], 1.3, 1e-8),
    "branin-m32-noise": ("Branin", 15, 7, "matern32", [0.8, 1.7], 0.7, 1e-2),
    "hartmann-m52": ("Hartmann-6", 30, 11, "matern52", [0.9, 1.1, 1.4, 0.7, 1.2, 2.0], 2.1, 1e-6),
    "hartmann-se-noise": ("Hartmann-6", 30, 11, "squaredExponential", [0.5, 0.8, 1.0, 0.6, 0.7, 1.5], 0.9, 0.05),
}.items():
    f, d = FUNCTIONS[name]
    u = design(name, runs, seed)
    y = f(u)
    x = 2 * u - 1
    test = 2 * qmc.LatinHypercube(d, seed=seed + 1).random(25) - 1
    gp = GaussianProcessRegressor(kernel_of(kind, np.array(ls), signal), alpha=noise, normalize_y=True, optimizer=None)
    gp.fit(x, y)
    mean, std = gp.predict(test, return_std=True)
    fixed.append({"case": case, "function": name, "kernel": kind, "lengthScales": ls, "signalVariance": signal,
                  "noiseVariance": noise, "train": rows(x), "values": [float(v) for v in y], "test": rows(test),
                  "mean": [float(v) for v in mean], "std": [float(v) for v in std],
                  "logMarginalLikelihood": float(gp.log_marginal_likelihood_value_)})
write("gp_fixed_hyperparameters.json", {"cases": fixed})

# --- maximum likelihood with restarts -----------------------------------------------------------------------
ml = []
for name, runs in (("Branin", 20), ("Branin", 40), ("Hartmann-6", 60), ("Hartmann-6", 120), ("Borehole", 80), ("Borehole", 160)):
    f, d = FUNCTIONS[name]
    seed = 1000 + runs
    u = design(name, runs, seed)
    y = f(u)
    h = holdout(d)
    for kind in ("squaredExponential", "matern52"):
        base = RBF(np.ones(d), (1e-2, 1e2)) if kind == "squaredExponential" else Matern(np.ones(d), (1e-2, 1e2), nu=2.5)
        gp = GaussianProcessRegressor(ConstantKernel(1.0, (1e-3, 1e3)) * base, alpha=1e-8, normalize_y=True,
                                      n_restarts_optimizer=5, random_state=0)
        gp.fit(2 * u - 1, y)
        truth = f(h)
        rmse = float(np.sqrt(np.mean((gp.predict(2 * h - 1) - truth) ** 2)))
        ml.append({"function": name, "runs": runs, "seed": seed, "kernel": kind, "restarts": 5,
                   "sklearnHoldoutRmse": rmse, "sklearnHoldoutNrmse": rmse / float(truth.max() - truth.min()),
                   "sklearnKernel": str(gp.kernel_),
                   "sklearnLogMarginalLikelihood": float(gp.log_marginal_likelihood_value_)})
write("gp_max_likelihood.json", {"cases": ml})
print("fixtures written to", HERE)
