"""Reference values for test/metrics/shortfall.test.ts (SciPy 1.17.1, NumPy 2.4.6).

Run: python3 test/reference/shortfall_scipy.py

Normal model (methods.md, "Shortfall rules"), with scipy.stats.norm:
  average     P = norm.cdf(q, loc=mu, scale=sigma/sqrt(h))
  cumulative  P = norm.cdf(q, loc=mu*h, scale=sigma*sqrt(h))
  every_year  P = 1 - (1 - norm.cdf(q, loc=mu, scale=sigma))**h
              (as -expm1(h*log1p(-p)) so tiny values keep their digits)
  quantile    norm.ppf(1 - c, loc=mu, scale=sigma/sqrt(h)) and
              norm.ppf(1 - c, loc=mu*h, scale=sigma*sqrt(h))
Lognormal sensitivity, with scipy.stats.lognorm: gross return G = 1 + R with
E[G] = 1 + mu and sd[G] = sigma (asserted with lognorm.mean/std), years
independent:
  average     geometric average (prod G)^(1/h) ~ lognorm(s/sqrt(h), scale=exp(m))
  cumulative  total prod G ~ lognorm(s*sqrt(h), scale=exp(h*m))
  every_year  1 - (1 - lognorm(s, scale=exp(m)).cdf(1 + q))**h
A seeded Monte Carlo run (10^6 paths) is printed beside each lognormal value
as a check of the event's definition; only the SciPy values are stored.
"""
import json

import numpy as np
from scipy.stats import lognorm, norm

CASES = [
    # (name, basis, mu, sigma, q, h, c)
    ("average-5y", "average", 0.06, 0.12, -0.02, 5, 0.95),
    ("average-1y", "average", 0.05, 0.10, -0.05, 1, 0.90),
    ("cumulative-5y", "cumulative", 0.06, 0.12, 0.10, 5, 0.90),
    ("cumulative-10y-loss", "cumulative", 0.04, 0.15, -0.20, 10, 0.95),
    ("every_year-3y", "every_year", 0.06, 0.12, -0.10, 3, 0.80),
    ("every_year-10y-tiny", "every_year", 0.05, 0.02, -0.10, 10, 0.99),
    ("average-2.5y", "average", 0.03, 0.08, 0.0, 2.5, 0.75),
]


def lognormal_parameters(mu, sigma):
    s2 = np.log1p((sigma / (1 + mu)) ** 2)
    s = np.sqrt(s2)
    m = np.log1p(mu) - s2 / 2
    assert abs(lognorm(s, scale=np.exp(m)).mean() - (1 + mu)) < 1e-14
    assert abs(lognorm(s, scale=np.exp(m)).std() - sigma) < 1e-14
    return s, m


rng = np.random.default_rng(20240601)
out = {}
for name, basis, mu, sigma, q, h, c in CASES:
    s, m = lognormal_parameters(mu, sigma)
    if basis == "average":
        p = norm.cdf(q, loc=mu, scale=sigma / np.sqrt(h))
        quantile = norm.ppf(1 - c, loc=mu, scale=sigma / np.sqrt(h))
        p_log = lognorm(s / np.sqrt(h), scale=np.exp(m)).cdf(1 + q)
    elif basis == "cumulative":
        p = norm.cdf(q, loc=mu * h, scale=sigma * np.sqrt(h))
        quantile = norm.ppf(1 - c, loc=mu * h, scale=sigma * np.sqrt(h))
        p_log = lognorm(s * np.sqrt(h), scale=np.exp(h * m)).cdf(1 + q)
    else:
        p = -np.expm1(h * np.log1p(-norm.cdf(q, loc=mu, scale=sigma)))
        quantile = None
        p_log = -np.expm1(h * np.log1p(-lognorm(s, scale=np.exp(m)).cdf(1 + q)))
    years = int(np.ceil(h))
    gross = np.exp(rng.normal(m, s, size=(1_000_000, years)))
    if basis == "average" and h == years:
        mc = np.mean(np.prod(gross, axis=1) ** (1 / h) - 1 < q)
    elif basis == "cumulative":
        mc = np.mean(np.prod(gross, axis=1) - 1 < q)
    elif basis == "every_year":
        mc = np.mean(np.any(gross - 1 < q, axis=1))
    else:
        mc = None
    out[name] = {"probability": float(p), "quantile": None if quantile is None else float(quantile),
                 "lognormal": float(p_log), "lognormal_monte_carlo": None if mc is None else float(mc)}

out["z"] = {str(c): float(norm.ppf(c)) for c in (0.75, 0.8, 0.9, 0.95)}
# every_year line: per-year confidence c' = c**(1/h), slope norm.ppf(c')
out["every_year_slope"] = {"c=0.9,h=3": float(norm.ppf(0.9 ** (1 / 3))), "c=0.99,h=10": float(norm.ppf(0.99 ** 0.1))}
print(json.dumps(out, indent=1))
