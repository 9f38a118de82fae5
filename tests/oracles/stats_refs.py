#!/usr/bin/env python3
"""Reference values for ripline's bench-statistics tests.

Standalone provenance script: CI does not run it. The values pasted into
tests/bench_statistics.rs and src/estimate/uncertainty.rs come from its output.

[1] Cramer-Rao bounds for one real sinusoid A cos(w n + phi) in white Gaussian
    noise of variance s2, n = 0..N-1, all of A, w, phi unknown (Rife & Boorstyn
    1974; Kay 1993 vol. 1, example 3.14):
        var(A)   >= 2 s2 / N
        var(w)   >= 24 s2 / (A^2 N (N^2 - 1))
        var(phi) >= 4 s2 (2N - 1) / (A^2 N (N + 1))
    (Kay writes the last two with eta = A^2/(2 s2): 12/(eta N (N^2-1)) and
    2(2N-1)/(eta N (N+1)); recalled from memory, so checked here) against the
    inverse of the exact Fisher matrix built with mpmath (mpmath.matrix,
    mpmath.inverse) for the test's case, with a constant (unknown mean) as a
    fourth parameter, as ripline's model has one. The tests use the exact
    values.
[2] Normal coverage of +-1 and +-2 standard deviations: mpmath.erf(k/sqrt(2)).
[4] The wave speed of a bench's reference line with `speed_of_sound:
    from_fluid`: c = sqrt(B_eff/rho), 1/B_eff = 1/B + 1/B_wall, for a 12 mm
    bore with a 2 mm steel wall (E = 206 GPa, nu = 0.3; the 16 x 2 mm tube),
    B = 1.6 GPa, rho = 870: thick wall (Lame) 1/B_wall = (2/E)((ro^2 + ri^2)/
    (ro^2 - ri^2) + nu), thin wall (Korteweg) D/(E e); mpmath.sqrt.
[5] The first six normal deviates of `Rng::new(42)` (src/estimate/rng.rs): the
    generator transcribed here (SplitMix64 seeding, xoshiro256**, uniforms
    ((x >> 11) + 1) * 2^-53), the Box-Muller transform of the same doubles
    with mpmath at 30 digits: sqrt(-2 ln u1) * (cos, sin)(fl(tau * u2)).
[3] chi-square quantiles: x with mpmath.gammainc(nu/2, 0, x/2, regularized=True)
    = p (mpmath.findroot); the normal quantile sqrt(2)*mpmath.erfinv(2p - 1).

Run:  python3 tests/oracles/stats_refs.py
"""
import math

import mpmath as mp

mp.mp.dps = 30
print("mpmath", mp.__version__)

# [1] the test's tone: fs = 1000 Hz, f = 47.3 Hz, N = 1000, A = 1, phi = 0.7, sigma = 0.1
fs, f, N, A, phi, s = mp.mpf(1000), mp.mpf("47.3"), 1000, mp.mpf(1), mp.mpf("0.7"), mp.mpf("0.1")
w = 2 * mp.pi * f / fs
# parameters (A, w, phi, d); model A cos(w n + phi) + d
I = mp.matrix(4, 4)
for n in range(N):
    c, sn = mp.cos(w * n + phi), mp.sin(w * n + phi)
    g = [c, -A * n * sn, -A * sn, mp.mpf(1)]
    for i in range(4):
        for j in range(4):
            I[i, j] += g[i] * g[j]
I = I / s**2
C = mp.inverse(I)
crb_A = 2 * s**2 / N
crb_w = 24 * s**2 / (A**2 * N * (N**2 - 1))
crb_phi = 4 * s**2 * (2 * N - 1) / (A**2 * N * (N + 1))
print("[1] N =", N)
print("  var(A)   Fisher", mp.nstr(C[0, 0], 16), " closed form", mp.nstr(crb_A, 16))
print("  var(w)   Fisher", mp.nstr(C[1, 1], 16), " closed form", mp.nstr(crb_w, 16))
print("  var(phi) Fisher", mp.nstr(C[2, 2], 16), " closed form", mp.nstr(crb_phi, 16))
print("  std(A)  ", mp.nstr(mp.sqrt(C[0, 0]), 16))
print("  std(f) Hz", mp.nstr(mp.sqrt(C[1, 1]) * fs / (2 * mp.pi), 16))
print("  std(phi)", mp.nstr(mp.sqrt(C[2, 2]), 16))

# [2]
for k in (1, 2):
    print("[2] P(|Z| <=", k, ") =", mp.nstr(mp.erf(k / mp.sqrt(2)), 16))

# [3]
z = mp.sqrt(2) * mp.erfinv(mp.mpf("0.99"))
print("[3] z(0.995) =", mp.nstr(z, 17))
for nu in (10, 40, 80, 300):
    for p in ("0.005", "0.995"):
        x = mp.findroot(lambda x: mp.gammainc(mp.mpf(nu) / 2, 0, x / 2, regularized=True) - mp.mpf(p), nu)
        print("  chi2", nu, p, mp.nstr(mp.re(x), 16))

# [4]
B, rho, E, nu, D, e = mp.mpf("1.6e9"), mp.mpf(870), mp.mpf("206e9"), mp.mpf("0.3"), mp.mpf("0.012"), mp.mpf("0.002")
ri, ro = D / 2, D / 2 + e
for name, cw in (("thick", 2 / E * ((ro**2 + ri**2) / (ro**2 - ri**2) + nu)), ("thin", D / (E * e))):
    print("[4]", name, "c =", mp.nstr(mp.sqrt(1 / (1 / B + cw) / rho), 16))

# [5]
M64 = (1 << 64) - 1


def splitmix_seed(seed):
    x, out = seed, []
    for _ in range(4):
        x = (x + 0x9E3779B97F4A7C15) & M64
        z = x
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M64
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M64
        out.append(z ^ (z >> 31))
    return out


def rotl(v, k):
    return ((v << k) | (v >> (64 - k))) & M64


def xoshiro(s):
    while True:
        result = (rotl((s[1] * 5) & M64, 7) * 9) & M64
        t = (s[1] << 17) & M64
        s[2] ^= s[0]
        s[3] ^= s[1]
        s[1] ^= s[2]
        s[0] ^= s[3]
        s[2] ^= t
        s[3] = rotl(s[3], 45)
        yield result


gen = xoshiro(splitmix_seed(42))
uniform = lambda: ((next(gen) >> 11) + 1) * 2.0**-53
deviates = []
for _ in range(3):
    u1 = uniform()
    u2 = uniform()
    r = mp.sqrt(-2 * mp.log(mp.mpf(u1)))
    angle = mp.mpf(math.tau * u2)  # the double product, as the Rust code forms it
    deviates += [r * mp.cos(angle), r * mp.sin(angle)]
print("[5]", ", ".join(mp.nstr(d, 17) for d in deviates))
