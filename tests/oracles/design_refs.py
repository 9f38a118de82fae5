"""Reference values for tests/plan_bench.rs: the 2-norm condition number of
the column-equilibrated, row-weighted two-transducer decomposition matrix
diag(sqrt(w)) [[e^{-j k x1}, e^{+j k x1}], [e^{-j k x2}, e^{+j k x2}]]
(lossless line), by mpmath's complex SVD (mpmath 1.3.0, mp.svd_c), beside
the closed form sqrt((1+r)/(1-r)), r = |w1 e^{2jkx1} + w2 e^{2jkx2}|/(w1+w2)
derived by hand in tests/plan_bench.rs.

Run: python3 tests/oracles/design_refs.py
"""
import mpmath as mp

mp.mp.dps = 30


def cond(w1, w2, kx1, kdx):
    kx2 = kx1 + kdx
    m = mp.matrix([[mp.sqrt(w1) * mp.exp(-1j * kx1), mp.sqrt(w1) * mp.exp(1j * kx1)],
                   [mp.sqrt(w2) * mp.exp(-1j * kx2), mp.sqrt(w2) * mp.exp(1j * kx2)]])
    for c in range(2):
        n = mp.sqrt(sum(abs(m[r, c]) ** 2 for r in range(2)))
        for r in range(2):
            m[r, c] /= n
    s = mp.svd_c(m, compute_uv=False)
    return max(s) / min(s)


def closed(w1, w2, kx1, kdx):
    kx2 = kx1 + kdx
    r = abs(w1 * mp.exp(2j * kx1) + w2 * mp.exp(2j * kx2)) / (w1 + w2)
    return mp.sqrt((1 + r) / (1 - r))


for w1, w2, kx1, kdx in [(1, 1, 0.3, mp.pi / 4), (1, 4, 0.3, 0.6 * mp.pi), (2.5, 1, 1.1, 0.93 * mp.pi)]:
    print(w1, w2, kx1, mp.nstr(kdx, 12), mp.nstr(cond(w1, w2, kx1, kdx), 15), mp.nstr(closed(w1, w2, kx1, kdx), 15))
