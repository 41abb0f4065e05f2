#!/usr/bin/env python3
"""Recomputes the computed rows of check-values.md (same folder) with numpy and scipy only.

Each check prints its row id, the value computed here and the value the page quotes, and the
script exits 1 if any differs by more than the quoted precision. Statistical values are
computed from their definitions (beta, chi-square and binomial quantiles), not by calling a
statistics package's ready-made interval, so they are a second route to the page's numbers.

    python3 docs/reference/check_values.py        # needs: pip install numpy scipy
"""
import sys
from math import comb, erf, exp, log, log10, pi, sqrt, tan, atan

import numpy as np
from scipy import integrate, optimize, special, stats

C = 299_792_458.0
FAILED = []


def check(row, got, quoted, tol):
    """Compares one computed value with the quoted one (absolute tolerance)."""
    ok = abs(got - quoted) <= tol
    print(f"{'ok ' if ok else 'BAD'} {row:10s} computed {got:.10g}  quoted {quoted}")
    if not ok:
        FAILED.append(row)


# --- radar, people, nuisances (pc rows) ------------------------------------------------
carriers = [2.45e9, 5.8e9, 10.525e9, 24.125e9]
for f0, lam_mm, fd in zip(carriers, [122.364, 51.688, 28.484, 12.427],
                          [16.345, 38.693, 70.215, 160.945]):
    check("pc1", C / f0 * 1e3, lam_mm, 5e-4)
    check("pc2", 2 * f0 / C, fd, 5e-4)
check("pc3", 2 * 0.44704 * 10.525e9 / C, 31.39, 5e-3)
for f0, q in zip(carriers, [30.59, 12.92, 7.12, 3.11]):
    check("pc4", C / f0 / 4 * 1e3, q, 5e-3)
check("pc5", C / 2.45e9 / 2 * 1e3, 61.18, 5e-3)
g = 10 ** 0.6
pr_w = 1e-2 * g * g * (C / 5.8e9) ** 2 * 1.0 / ((4 * pi) ** 3 * 5.0 ** 4)
check("pc7", 10 * log10(pr_w * 1e3), -64.67, 5e-3)
check("pc8", (5.0 / 2.0) ** 2, 6.25, 1e-12)
c_torso = 0.288 * 1.8 / 2
check("pc10", pi * c_torso ** 2, 0.2111, 5e-5)
check("pc10", pi * 0.15 ** 4 / c_torso ** 2, 0.02367, 5e-6)
rl = 1.346  # relative cycle length at RV = 1
check("pc11", rl, 1.3460, 5e-5)
check("pc11", 0.752 * rl - 0.143, 0.8692, 5e-5)
check("pc11", 0.252 * rl - 0.143, 0.1962, 5e-5)
h_t = 0.491 * 1.8
rv = 1.584
d_c = 1.346 * sqrt(rv) / rv
check("pc12", rv * h_t, 1.400, 5e-4)
check("pc12", d_c, 1.0695, 5e-5)
check("pc12", 120 / d_c, 112.2, 5e-2)
check("pc12", 1.346 * sqrt(rv) * h_t, 1.497, 5e-4)
m = 4 * pi * 2.5e-3 / (C / 24.125e9)
check("pc15", m, 2.528, 5e-4)
check("pc15", special.jv(1, m), 0.4900, 5e-5)
check("pc15", special.jv(2, m), 0.4499, 5e-5)
for length, f in [(0.25, 0.997), (0.5, 0.7048), (1.0, 0.498), (2.0, 0.352)]:
    check("pc17", sqrt(9.80665 / length) / (2 * pi), f, 5e-4 if f != 0.7048 else 5e-5)
tip = 2 * pi * 20 * 0.15
check("pc18", tip, 18.85, 5e-3)
check("pc18", 2 * tip / (C / 5.8e9), 729.4, 5e-2)
check("pc18", (C / 5.8e9) / (0.15 * 2 * pi * 20) * 1e3, 2.7, 5e-2)
v_drop = 9.65 - 10.3 * exp(-0.6 * 2.0)
check("pc19", v_drop, 6.55, 5e-3)
check("pc19", 2 * v_drop * 10.525e9 / C, 459.7, 5e-2)
check("pc20", 1 / (100 * 1024e-6), 9.766, 5e-4)
k_b = 1.380649e-23
check("pc21", 10 * log10(k_b * 290 * 1e3), -173.98, 5e-3)
check("pc21", sqrt(4 * k_b * 290 * 1e3) * 1e9, 4.002, 5e-4)
check("pc22", 10 * log10(1.5 * 2 ** 24), 74.0, 5e-2)
check("pc22", 3.3 / 4096 * 1e3, 0.806, 5e-4)
k = tan(pi * 100 / 1000)
check("pc23", k / (1 + k), 0.2452373, 5e-8)
check("pc23", (k - 1) / (k + 1), -0.5095254, 5e-8)
b0 = k / (1 + k)
z = np.exp(1j * pi * 100 / 500)
h = b0 * (1 + 1 / z) / (1 + (k - 1) / (k + 1) / z)
check("pc23", 20 * log10(abs(h)), -3.0103, 5e-5)
for e_v_per_m, eirp in [(0.5, 18.75), (2.5, 32.73)]:
    check("pc24", 10 * log10(e_v_per_m ** 2 * 9 / 30 * 1e3), eirp, 5e-3)
taps = [1.0]
for n in range(1, 5):
    taps.append(taps[-1] * (n - 1 + 0.5) / n)
for got, q in zip(taps, [1, 0.5, 0.375, 0.3125, 0.2734375]):
    check("pc26", got, q, 1e-12)
check("pc27", 10 * log10(4 * np.sin(2 * pi * 10 * 5 / C) ** 2), -113.6, 5e-2)
check("pc28", log(0.5) / log(np.cos(np.radians(40))), 2.601, 5e-4)
n80 = log(0.5) / log(np.cos(np.radians(40)))
for level_db, q in [(-3, 28.88), (-10, 50.04)]:
    check("pc29", np.degrees(np.arccos((10 ** (level_db / 20)) ** (1 / n80))), q, 5e-3)
check("pc29", sqrt(np.cos(np.radians(30)) ** n80), 0.829, 5e-4)

# --- detectors (cv1-cv15) ----------------------------------------------------------------
gamma_r = stats.chi2.isf(1e-3, 16)
check("cv1", gamma_r, 39.252355, 5e-7)
check("cv1", stats.ncx2.sf(gamma_r, 16, 16), 0.216690, 5e-7)
gamma_c = stats.gamma.isf(1e-3, 16)
check("cv2", gamma_c, 31.243610, 5e-7)
check("cv2", stats.ncx2.sf(2 * gamma_c, 32, 32), 0.518075, 5e-7)
check("cv3", stats.ncx2.sf(-2 * log(1e-6), 2, 20), 0.248049, 5e-7)
check("cv4", (stats.norm.isf(1e-6) - stats.norm.isf(0.9)) ** 2, 36.420934, 5e-6)
check("cv4", stats.norm.sf(stats.norm.isf(1e-3) - 4), 0.818527, 5e-7)
a_, b_ = log(0.62 / 1e-6), log(0.9 / 0.1)
check("cv5", (6.2 + 4.54 / sqrt(1.44)) * log10(a_ + 0.12 * a_ * b_ + 1.7 * b_), 13.1145, 5e-5)
t1 = stats.gamma.isf(1e-6, 1)
exact = optimize.brentq(lambda s: stats.ncx2.sf(2 * t1, 2, 2 * s) - 0.9, 1e-3, 1e5)
check("cv5", 10 * log10(exact), 13.1835, 5e-5)
check("cv6", 10 * log10(log(1e-6) / log(0.9) - 1), 21.1436, 5e-5)
ca = lambda n, pfa: n * (pfa ** (-1 / n) - 1)
for n, pfa, q in [(16, 1e-3, 8.638824), (24, 1e-6, 18.678706), (32, 1e-4, 10.672686)]:
    check("cv7", ca(n, pfa), q, 5e-7)
    check("cv7", stats.f.sf(ca(n, pfa), 2, 2 * n), pfa, pfa * 1e-9)
s15 = 10 ** 1.5
alpha24 = ca(24, 1e-6)
check("cv8", (1 + alpha24 / (24 * (1 + s15))) ** -24, 0.567881, 5e-7)
check("cv8", 1e-6 ** (1 / (1 + s15)), 0.654756, 5e-7)
check("cv8", stats.ncf.sf(alpha24, 2, 48, 2 * s15), 0.949928, 5e-7)
for n, q in zip([8, 16, 24, 32, 64], [4.269, 2.007, 1.309, 0.971, 0.477]):
    s_req = ((0.9 / 1e-6) ** (1 / n) - 1) / (1 - 0.9 ** (1 / n))
    check("cv9", 10 * log10(s_req / (log(1e-6) / log(0.9) - 1)), q, 5e-4)
os_pfa = lambda t, n, k: float(np.prod([(n - i) / (n - i + t) for i in range(k)]))
for pfa, q in [(1e-3, 6.502431), (1e-4, 9.340805), (1e-6, 16.293288)]:
    check("cv11", optimize.brentq(lambda t: os_pfa(t, 24, 18) - pfa, 1e-6, 1e6), q, 5e-7)
check("cv12", os_pfa(6.857, 20, 15), 9.98724e-4, 5e-10)
t_os = optimize.brentq(lambda t: os_pfa(t, 24, 18) - 1e-6, 1e-6, 1e6)
check("cv13", os_pfa(t_os / 101, 24, 18), 0.808600, 5e-7)
so = lambda t, n: 2 * sum(comb(n - 1 + k, k) * (2 + t) ** (-(n + k)) for k in range(n))
go = lambda t, n: 2 * (1 + t) ** (-n) - so(t, n)
check("cv14", optimize.brentq(lambda t: go(t, 8) - 1e-4, 1e-6, 1e6), 1.358871, 5e-7)
check("cv14", optimize.brentq(lambda t: so(t, 8) - 1e-4, 1e-6, 1e6), 2.444585, 5e-7)
t_br = stats.f.isf(1e-3, 16, 64)
check("cv15", t_br, 2.978561, 5e-7)
check("cv15", stats.f.sf(t_br / 2, 16, 64), 0.131750, 5e-7)

# --- statistics and scoring (cv16-cv25, x- rows) ------------------------------------------
pos = np.array([0.9, 0.8, 0.7, 0.7, 0.55, 0.5])
neg = np.array([0.7, 0.6, 0.5, 0.4, 0.3, 0.2, 0.1])
u = sum((p > q) + 0.5 * (p == q) for p in pos for q in neg)
check("cv16", u / 42, 0.8690476190, 5e-11)
check("cv16", stats.mannwhitneyu(pos, neg).statistic, 36.5, 0)
# ROC by the tie-aware sweep, then the area up to 0.3 and the interpolated Pd at 0.1.
thresholds = sorted(set(np.r_[pos, neg]), reverse=True)
fpr = [0.0] + [np.mean(neg >= t) for t in thresholds]
tpr = [0.0] + [np.mean(pos >= t) for t in thresholds]
# The vertices up to 0.3 (vertical steps kept), closed by the point interpolated at 0.3.
k3 = sum(x <= 0.3 for x in fpr)
x0, x1, y0, y1 = fpr[k3 - 1], fpr[k3], tpr[k3 - 1], tpr[k3]
raw = np.trapezoid(tpr[:k3] + [y0 + (y1 - y0) * (0.3 - x0) / (x1 - x0)], fpr[:k3] + [0.3])
check("cv17", raw, 0.178690, 5e-7)
check("cv17", 0.5 * (1 + (raw - 0.3 ** 2 / 2) / (0.3 - 0.3 ** 2 / 2)), 0.762138, 5e-7)
check("cv17", np.interp(0.1, fpr, tpr), 0.566667, 5e-7)
check("cv18", 11 / 12, 0.916667, 5e-7)
check("cv18", 0.5 * (1 + erf(1 / 2)), 0.760250, 5e-7)
energy_auc = integrate.quad(lambda t: stats.ncx2.sf(t, 16, 16) * stats.chi2.pdf(t, 16),
                            0, np.inf, limit=200)[0]
check("cv18", energy_auc, 0.930854, 5e-7)
a9 = 0.9
q1, q2 = a9 / (2 - a9), 2 * a9 * a9 / (1 + a9)
check("cv19", sqrt((a9 * (1 - a9) + 99 * (q1 - a9 ** 2) + 99 * (q2 - a9 ** 2)) / 1e4),
      0.022629, 5e-7)


def wilson(k, n, z=stats.norm.isf(0.025)):
    p = k / n
    mid, half = p + z * z / (2 * n), z * sqrt(p * (1 - p) / n + z * z / (4 * n * n))
    return (mid - half) / (1 + z * z / n), (mid + half) / (1 + z * z / n)


cp = (stats.beta.ppf(0.025, 3, 998), stats.beta.ppf(0.975, 4, 997))
jeffreys = stats.beta.ppf([0.025, 0.975], 3.5, 997.5)
for got, q in zip([*wilson(3, 1000), *cp, *jeffreys],
                  [0.001021, 0.008783, 0.000619, 0.008742, 0.000846, 0.007984]):
    check("cv20", got, q, 5e-7)
for got, q in zip([*wilson(4, 5), stats.beta.ppf(0.025, 4, 2), stats.beta.ppf(0.975, 5, 1)],
                  [0.375535, 0.963776, 0.283582, 0.994949]):
    check("cv20", got, q, 5e-7)
check("cv21", 1 - 0.05 ** (1 / 1000), 0.0029912, 5e-8)
garwood = lambda k, t: ((stats.chi2.ppf(0.025, 2 * k) / 2 if k else 0.0) / t,
                        stats.chi2.ppf(0.975, 2 * k + 2) / 2 / t)
for got, q in zip([*garwood(0, 10), *garwood(2, 10)], [0.0, 0.368888, 0.024221, 0.722469]):
    check("cv22", got, q, 5e-7)
for k_fa, q in [(0, 29.96), (1, 47.44), (2, 62.96)]:
    check("cv22", stats.chi2.ppf(0.95, 2 * k_fa + 2) / 2 / 0.1, q, 5e-3)
cond = lambda kc, kb, rho: stats.binom.sf(kc - 1, kc + kb, rho / (rho + 1))
check("cv23", cond(15, 5, 1.0), 0.020695, 5e-7)
check("cv23", cond(40, 20, 1.0), 0.006745, 5e-7)
check("cv23", cond(40, 20, 1.25), 0.053309, 5e-7)
lo = stats.beta.ppf(0.05, 40, 21)
check("cv23", lo / (1 - lo), 1.239814, 5e-7)
exposure_h = (3600 - 118.5) / 3600
check("cv24", exposure_h, 0.967083, 5e-7)
check("cv24", 4 / exposure_h, 4.136148, 5e-6)
for got, q in zip(garwood(4, exposure_h), [1.126961, 10.590182]):
    check("cv24", got, q, 5e-6)
check("cv25", 20 / (5 * 20 - 1 + 1 / 1e-3) * 3600, 65.514, 5e-4)
for got, q in zip(stats.beta(10, 9991).ppf([0.05, 0.95]), [5.43e-4, 1.570e-3]):
    check("cv25", got, q, 5e-6)


def power(l1, l2, hours, alpha=0.01):
    mu, total = (l1 + l2) * hours, 0.0
    for n in range(int(mu + 12 * sqrt(mu) + 20)):
        xs = np.arange(n + 1)
        reject = xs[stats.binom.sf(xs - 1, n, 0.5) <= alpha]
        if len(reject):
            total += stats.poisson.pmf(n, mu) * stats.binom.sf(reject[0] - 1, n, l2 / (l1 + l2))
    return total


for hours, q in [(10, 0.2466), (20, 0.5610), (30, 0.7804), (50, 0.9586)]:
    check("x-power", power(1, 2, hours), q, 5e-5)
check("x-power", power(1, 1, 10), 0.00547, 5e-6)
r = max(r for r in range(1, 11) if stats.binom.cdf(r - 1, 20, 0.5) <= 0.025)
check("x-median", r, 6, 0)
check("x-median", stats.binom.cdf(14, 20, 0.5) - stats.binom.cdf(5, 20, 0.5), 0.958611, 5e-7)
window = 0.5 - 0.5 * np.cos(2 * pi * np.arange(256) / 256)
rho = np.sum(window ** 2 * np.exp(-2j * pi * np.arange(256) / 256)) / np.sum(window ** 2)
check("x-hann", abs(rho) ** 2, 4 / 9, 1e-12)

lo, hi = stats.gamma.ppf([0.025, 0.975], 2)
check("x-gamma2", lo, 0.242209, 5e-7)
check("x-gamma2", hi, 5.571643, 5e-7)

print(f"{len(FAILED)} mismatch(es)" + (": " + ", ".join(FAILED) if FAILED else ""))
sys.exit(1 if FAILED else 0)
