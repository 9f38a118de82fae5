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

# 2. The normal distribution (src/uncertainty/stats.rs).
import scipy.special
for x in [0.0, 0.5, 1.5, 1.99, 2.0, 3.5, 6.0, -1.0]:
    print(f"erfc({x}) = {scipy.special.erfc(x)!r}")
for p in [0.5, 0.95, 0.975, 0.999, 0.05, 1e-6]:
    print(f"norm.ppf({p}) = {scipy.stats.norm.ppf(p)!r}")
for nu in [3, 20, 100]:
    print(f"chi2.ppf(0.999, {nu}) = {scipy.stats.chi2.ppf(0.999, nu)!r}")

# 3. Bounds of the sum of d² = eᵀC⁻¹e over seeds (tests/calibrate.rs): chi2 with 3N dof.
for dof in [72, 1200]:
    print(f"chi2.ppf(0.001, {dof}) = {scipy.stats.chi2.ppf(0.001, dof):.1f}, chi2.ppf(0.999, {dof}) = {scipy.stats.chi2.ppf(0.999, dof):.1f}")
