#!/usr/bin/env python3
"""Reference values for tests/it/fleet.rs, computed with scipy (version printed first).

Run: python3 scripts/fleet-reference.py   (needs scipy; the Rust tests do not).
"""
import numpy as np
import scipy
from scipy import stats, special, optimize

print("scipy", scipy.__version__, "numpy", np.__version__)

x = np.array([13.22, 9.41, 8.58, 7.98, 4.12, 16.1, 5.62, 2.28, 9.69, 28.2, 13.84, 5.62,
              5.26, 6.91, 8.92, 9.07, 9.83, 1.86, 12.66, 5.44])
c, loc, s = stats.weibull_min.fit(x, floc=0)
print("complete fit (default optimizer): shape %.12g scale %.12g" % (c, s))

# scipy's default optimizer is Nelder-Mead (optimize.fmin) with xtol 1e-4, so its figures
# stop about 5e-6 short of the maximum. The same fit with the optimizer's tolerances tightened:
def tight(func, x0, args=(), disp=0):
    return optimize.fmin(func, x0, args=args, xtol=1e-13, ftol=1e-15, maxiter=100000,
                         maxfun=100000, disp=0)

c, loc, s = stats.weibull_min.fit(x, floc=0, optimizer=tight)
print("complete fit (tight optimizer): shape %.12g scale %.12g" % (c, s))

# Anderson-Darling A^2 against scipy's fitted cdf
z = np.sort(x)
n = len(z)
F = stats.weibull_min.cdf(z, c, scale=s)
i = np.arange(1, n + 1)
a2 = -n - np.sum((2 * i - 1) * (np.log(F) + np.log1p(-F[::-1]))) / n
print("A2 %.12g" % a2)

# observed information by finite differences of scipy's log-density, at the fit
def nll(p, data_f, data_c):
    m, th = p
    return -(np.sum(stats.weibull_min.logpdf(data_f, m, scale=th)) +
             np.sum(stats.weibull_min.logsf(data_c, m, scale=th)))

def wald(p, data_f, data_c):
    h = 1e-4
    H = np.zeros((2, 2))
    for a in range(2):
        for b in range(2):
            def f(da, db):
                q = np.array(p, dtype=float)
                q[a] += da * h * p[a]
                q[b] += db * h * p[b]
                return nll(q, data_f, data_c)
            H[a, b] = (f(1, 1) - f(1, -1) - f(-1, 1) + f(-1, -1)) / (4 * h * h * p[a] * p[b])
    V = np.linalg.inv(H)
    out = []
    for lev in (0.90, 0.95):
        zq = stats.norm.ppf(0.5 + lev / 2)
        for k in range(2):
            se = np.sqrt(V[k, k]) / p[k]
            out.append((lev, k, p[k] * np.exp(-zq * se), p[k] * np.exp(zq * se)))
    return out

for lev, k, lo, hi in wald((c, s), x, np.array([])):
    print("wald complete level %.2f %s [%.10g, %.10g]" % (lev, "shape" if k == 0 else "scale", lo, hi))

# censored: survivors of a proof test (invented lab data)
fails = np.array([212.0, 245.5, 263.1, 281.7, 290.2, 301.4, 318.9, 322.0, 347.6, 365.3, 388.8, 402.1])
surv = np.array([300.0, 300.0, 300.0, 350.0, 350.0, 420.0])
data = stats.CensoredData(uncensored=fails, right=surv)
cc, _, sc = stats.weibull_min.fit(data, floc=0)
print("censored fit (default optimizer): shape %.12g scale %.12g" % (cc, sc))
cc, _, sc = stats.weibull_min.fit(data, floc=0, optimizer=tight)
print("censored fit (tight optimizer): shape %.12g scale %.12g" % (cc, sc))
for lev, k, lo, hi in wald((cc, sc), fails, surv):
    print("wald censored level %.2f %s [%.10g, %.10g]" % (lev, "shape" if k == 0 else "scale", lo, hi))

# competing populations: edge (E) and surface (S) origins, fit E with S censored
comp = [(55.1, 'E'), (61.0, 'S'), (63.4, 'E'), (70.2, 'E'), (72.8, 'S'), (75.5, 'E'),
        (80.9, 'S'), (84.0, 'E'), (86.3, 'E'), (90.7, 'S'), (93.1, 'E'), (97.4, 'S'),
        (101.2, 'E'), (108.8, 'S'), (115.0, 'S')]
ef = np.array([v for v, l in comp if l == 'E'])
ec = np.array([v for v, l in comp if l != 'E'])
ce, _, se_ = stats.weibull_min.fit(stats.CensoredData(uncensored=ef, right=ec), floc=0)
print("competing fit E (default optimizer): shape %.12g scale %.12g" % (ce, se_))
ce, _, se_ = stats.weibull_min.fit(stats.CensoredData(uncensored=ef, right=ec), floc=0,
                                   optimizer=tight)
print("competing fit E (tight optimizer): shape %.12g scale %.12g" % (ce, se_))

# Poisson exact (Garwood) intervals via chi-square quantiles
for k in (0, 1, 5, 10, 37, 1000):
    lo = 0.0 if k == 0 else stats.chi2.ppf(0.025, 2 * k) / 2
    hi = stats.chi2.ppf(0.975, 2 * k + 2) / 2
    print("poisson %d [%.12g, %.12g]" % (k, lo, hi))

# special functions
for a, xx in ((0.5, 0.3), (3.0, 2.5), (10.0, 12.0), (250.0, 240.0), (1e5, 1.001e5)):
    print("gammainc P(%g,%g) = %.15g  Q = %.15g" % (a, xx, special.gammainc(a, xx), special.gammaincc(a, xx)))
for a, b, xx in ((2.0, 3.0, 0.4), (0.5, 0.5, 0.2), (40.0, 60.0, 0.45), (4.0, 997.0, 0.002)):
    print("betainc I(%g,%g,%g) = %.15g" % (a, b, xx, special.betainc(a, b, xx)))

# exact conditional test: group 9 events / 120 pane-years vs rest 14 / 900 pane-years
k1, e1, k0, e0 = 9, 120.0, 14, 900.0
n = k1 + k0
p0 = e1 / (e1 + e0)
bt = stats.binomtest(k1, n, p0, alternative='greater')
cp = stats.binomtest(k1, n).proportion_ci(0.95, method='exact')
up = bt.pvalue
down = stats.binomtest(k1, n, p0, alternative='less').pvalue
rr = lambda p: p / (1 - p) * e0 / e1
print("rate ratio %.12g ci [%.12g, %.12g] p_above %.12g p_two(central) %.12g" %
      ((k1 / e1) / (k0 / e0), rr(cp.low), rr(cp.high), up, min(1, 2 * min(up, down))))

# Poisson regression slope (monthly counts, days offset) by direct maximisation
y = np.array([3, 1, 4, 2, 5, 3, 6, 4, 7, 5, 8, 9], dtype=float)
days = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=float)
t = (np.arange(12) - 5.5) / 12.0
def pnll(b):
    eta = b[0] + b[1] * t + np.log(days)
    return -np.sum(y * eta - np.exp(eta))
res = optimize.minimize(pnll, [np.log(y.sum() / days.sum()), 0.0], method='Newton-CG',
                        jac=lambda b: -np.array([np.sum(y - np.exp(b[0] + b[1]*t + np.log(days))),
                                                 np.sum(t * (y - np.exp(b[0] + b[1]*t + np.log(days))))]),
                        options={'xtol': 1e-14})
b = res.x
mu = np.exp(b[0] + b[1] * t + np.log(days))
dev = 2 * np.sum(np.where(y > 0, y * np.log(y / mu), 0) - (y - mu))
mu0 = days * y.sum() / days.sum()
dev0 = 2 * np.sum(np.where(y > 0, y * np.log(y / mu0), 0) - (y - mu0))
print("poisson regression slope %.12g LR %.12g p %.12g" % (b[1], dev0 - dev, stats.chi2.sf(dev0 - dev, 1)))
