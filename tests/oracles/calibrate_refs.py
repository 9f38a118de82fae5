"""Reference values for the calibration tests (src/calibrate/*, tests/calibrate.rs).

Provenance only: CI does not run this script. Run: python3 tests/oracles/calibrate_refs.py
"""
import numpy as np
import scipy
import scipy.optimize
import scipy.stats

print("numpy", np.__version__, "scipy", scipy.__version__)

# 1. A non-zero-residual least-squares fit of our own data: y = a exp(-b t) + c.
t = 0.25 * np.arange(12)
y = np.array([5.02, 3.96, 3.11, 2.53, 2.02, 1.69, 1.39, 1.18, 1.04, 0.91, 0.83, 0.79])


def res(x):
    return x[0] * np.exp(-x[1] * t) + x[2] - y


sol = scipy.optimize.least_squares(res, [1.0, 1.0, 0.0], method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
print("exp fit x =", [f"{v:.16g}" for v in sol.x])
print("exp fit sum of squares =", f"{2 * sol.cost:.16g}")
