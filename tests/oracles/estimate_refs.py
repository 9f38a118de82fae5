#!/usr/bin/env python3
"""Reference values for ripline's bench-estimation tests (methods.md section 6d).

Standalone provenance script: CI does not run it. The values pasted into
tests/estimate.rs come from its output.

The synthetic bench of methods.md 6d, computed independently of ripline with
mpmath at mp.dps = 30 (mpmath.besselj for the laminar viscous factor,
mpmath.tanh/cosh/sinh for the line, plain complex algebra for the Norton
source), and cross-checked with numpy (numpy.linalg.lstsq for the
three-transducer decomposition).

Conventions: e^{+j w t}, peak phasors, SI, Re(Gamma) >= 0, Zc = Z'/Gamma,
x measured from the pump outlet, flow positive from the pump into the line.

Run:  python3 tests/oracles/estimate_refs.py
"""
import mpmath as mp
import numpy as np

mp.mp.dps = 30
J = mp.mpc(0, 1)

r, rho, nu, c0 = mp.mpf("0.005"), mp.mpf(870), mp.mpf("32e-6"), mp.mpf(1350)
A = mp.pi * r**2
Z0 = rho * c0 / A
L = mp.mpf(3)
xs = [mp.mpf("0.25"), mp.mpf("0.58"), mp.mpf("1.05")]
Cs, Rleak, Qs = mp.mpf("6.25e-14"), mp.mpf("1.2e12"), mp.mpf("1e-5")
RL1, RL2 = mp.mpf("6e10"), mp.mpf("1.5e10")


def line(f):
    """Gamma, Zc of the laminar line (methods.md 2.3), mpmath.besselj."""
    w = 2 * mp.pi * f
    alpha = mp.sqrt(-J * w / nu) * r
    F = 2 * mp.besselj(1, alpha) / (alpha * mp.besselj(0, alpha))
    g = (1 - F) ** mp.mpf("-0.5")
    gamma = J * w / c0 * g
    if mp.re(gamma) < 0:
        gamma = -gamma
    zser = J * w * rho / (A * (1 - F))
    return gamma, zser / gamma


def zs(f):
    w = 2 * mp.pi * f
    return 1 / (J * w * Cs + 1 / Rleak)


def state_at(gamma, zc, p0, q0, x):
    """[P(x); Q(x)] from the outlet state by the inverse transfer matrix."""
    c, s = mp.cosh(gamma * x), mp.sinh(gamma * x)
    return c * p0 - zc * s * q0, -s / zc * p0 + c * q0


def pump_run(f, RL):
    gamma, zc = line(f)
    t = mp.tanh(gamma * L)
    zin = zc * (RL + zc * t) / (zc + RL * t)
    p0 = Qs / (1 / zs(f) + 1 / zin)
    q0 = p0 / zin
    return gamma, zc, p0, q0


def show(name, z):
    z = mp.mpc(z)
    print("%-28s (%s, %s)" % (name, mp.nstr(z.real, 16), mp.nstr(z.imag, 16)))


print("mpmath", mp.__version__, "numpy", np.__version__)
print("\n[1] 225 Hz, load R_L1 = 6e10 at x = L: mpmath.besselj, mpmath.tanh")
gamma, zc, p0, q0 = pump_run(225, RL1)
show("Gamma", gamma)
show("Zc", zc)
show("Zs", zs(225))
show("P0", p0)
show("Q0", q0)
p1 = [state_at(gamma, zc, p0, q0, x)[0] for x in xs]
for x, p in zip(xs, p1):
    show("P(%s)" % x, p)
print("phase speed", mp.nstr(2 * mp.pi * 225 / mp.im(gamma), 10))

print("\n[2] 225 Hz, load R_L2 = 1.5e10")
_, _, p02, q02 = pump_run(225, RL2)
show("P0", p02)
show("Q0", q02)
p2 = [state_at(gamma, zc, p02, q02, x)[0] for x in xs]
for x, p in zip(xs, p2):
    show("P(%s)" % x, p)
ys = -(q0 - q02) / (p0 - p02)
show("two-system Qs", q0 + ys * p0)
show("two-system Zs", 1 / ys)

print("\n[3] numpy.linalg.lstsq decomposition of [1] (3 transducers)")
M = np.array([[complex(mp.exp(-gamma * x)), complex(mp.exp(gamma * x))] for x in xs])
fg = np.linalg.lstsq(M, np.array([complex(p) for p in p1]), rcond=None)[0]
print("P0", fg[0] + fg[1], " Q0", (fg[0] - fg[1]) / complex(zc))

print("\n[4] 240 Hz, secondary flow 1e-5 injected at x = L (R_L1 there), pump passive")
gamma, zc = line(240)
z_s = zs(240)
t = mp.tanh(gamma * L)
z_pump_side = zc * (z_s + zc * t) / (zc + z_s * t)  # seen from x = L towards the pump
pL = mp.mpf("1e-5") / (1 / RL1 + 1 / z_pump_side)
# state at x = L: flow in the +x sense arriving at L is -pL/z_pump_side
qL = -pL / z_pump_side
c, s = mp.cosh(gamma * L), mp.sinh(gamma * L)
p0s, q0s = c * pL + zc * s * qL, s / zc * pL + c * qL
show("Gamma", gamma)
show("Zc", zc)
show("P0", p0s)
show("Q0", q0s)
for x in xs:
    show("P(%s)" % x, state_at(gamma, zc, p0s, q0s, x)[0])
F, G = (p0s + zc * q0s) / 2, (p0s - zc * q0s) / 2
show("R_s = F/G", F / G)
show("Zs = -P0/Q0", -p0s / q0s)
show("Zs (model)", z_s)
