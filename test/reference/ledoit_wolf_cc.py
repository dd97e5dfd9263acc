"""Reference values for test/metrics/covariance.test.ts.

Ledoit & Wolf (2004), "Honey, I shrunk the sample covariance matrix",
Journal of Portfolio Management 30(4), 110-119: shrinkage toward the
constant-correlation matrix. Two independent NumPy implementations:

1. `paper_equations`: the formulas for pi-hat, rho-hat, gamma-hat, kappa-hat and
   delta* written out term by term with explicit loops over i, j and t
   (s_ij with divisor T, as in the paper);
2. `published_code`: a line-by-line translation of the authors' published
   MATLAB function covCor.m (version 04/2014, BSD licence), vectorised.

Both must agree to rounding. The project's estimator returns
delta * F + (1 - delta) * S with S the T - 1 sample covariance and F built
from it, i.e. T / (T - 1) times the published estimator, same delta.

Data, both from the npm package vega-datasets 3.2.1:
- stocks.csv (columns symbol,date,price; monthly prices of AAPL, AMZN, GOOG,
  IBM, MSFT). Returns: monthly simple returns p_t / p_{t-1} - 1 for every
  pair of consecutive calendar months in which all five symbols have a price
  (Aug 2004 - Mar 2010: 68 prices, 67 returns), columns in the order AAPL,
  AMZN, GOOG, IBM, MSFT. Here the intensity is clipped at 1 (kappa/T > 1).
- us-employment.csv (monthly US employment levels by sector, Jan 2006 -
  Dec 2015): monthly simple changes level_t / level_{t-1} - 1 of the columns
  mining_and_logging, construction, manufacturing, information,
  financial_activities, government (119 changes), a second data set whose
  intensity falls strictly between 0 and 1.

Run: python3 test/reference/ledoit_wolf_cc.py node_modules/vega-datasets/data
(NumPy 2.4.6, Python 3 from pyenv).
"""
import csv
import json
import sys
from datetime import datetime

import numpy as np

SYMBOLS = ["AAPL", "AMZN", "GOOG", "IBM", "MSFT"]


def monthly_returns(path):
    prices = {s: {} for s in SYMBOLS}
    with open(path + "/stocks.csv", newline="") as handle:
        for row in csv.DictReader(handle):
            day = datetime.strptime(row["date"], "%b %d %Y")
            prices[row["symbol"]][(day.year, day.month)] = float(row["price"])
    common = sorted(set.intersection(*(set(p) for p in prices.values())))
    rows = []
    for (y0, m0), (y1, m1) in zip(common, common[1:]):
        if (y1 * 12 + m1) - (y0 * 12 + m0) != 1:
            continue  # not consecutive calendar months
        rows.append([prices[s][(y1, m1)] / prices[s][(y0, m0)] - 1 for s in SYMBOLS])
    return np.array(rows), common


EMPLOYMENT = ["mining_and_logging", "construction", "manufacturing", "information", "financial_activities", "government"]


def employment_changes(path):
    with open(path + "/us-employment.csv", newline="") as handle:
        table = list(csv.DictReader(handle))
    months = [datetime.strptime(row["month"], "%Y-%m-%d") for row in table]
    assert all((b.year * 12 + b.month) - (a.year * 12 + a.month) == 1 for a, b in zip(months, months[1:]))
    levels = np.array([[float(row[c]) for c in EMPLOYMENT] for row in table])
    return levels[1:] / levels[:-1] - 1


def paper_equations(x):
    t, n = x.shape
    y = x - x.mean(axis=0)
    s = np.zeros((n, n))
    for i in range(n):
        for j in range(n):
            s[i, j] = sum(y[k, i] * y[k, j] for k in range(t)) / t
    r = np.array([[s[i, j] / np.sqrt(s[i, i] * s[j, j]) for j in range(n)] for i in range(n)])
    rbar = sum(r[i, j] for i in range(n) for j in range(n) if i < j) * 2 / ((n - 1) * n)
    f = np.array([[s[i, i] if i == j else rbar * np.sqrt(s[i, i] * s[j, j]) for j in range(n)] for i in range(n)])
    pi_mat = np.array([[sum((y[k, i] * y[k, j] - s[i, j]) ** 2 for k in range(t)) / t for j in range(n)] for i in range(n)])
    pi_hat = pi_mat.sum()

    def theta(i, j):  # theta_ii,ij
        return sum((y[k, i] ** 2 - s[i, i]) * (y[k, i] * y[k, j] - s[i, j]) for k in range(t)) / t

    rho_hat = sum(pi_mat[i, i] for i in range(n)) + sum(
        rbar / 2 * (np.sqrt(s[j, j] / s[i, i]) * theta(i, j) + np.sqrt(s[i, i] / s[j, j]) * theta(j, i))
        for i in range(n) for j in range(n) if j != i
    )
    gamma_hat = sum((f[i, j] - s[i, j]) ** 2 for i in range(n) for j in range(n))
    kappa_hat = (pi_hat - rho_hat) / gamma_hat
    delta = max(0.0, min(1.0, kappa_hat / t))
    return dict(rbar=rbar, pi=pi_hat, rho=rho_hat, gamma=gamma_hat, kappa=kappa_hat, delta=delta, s=s, f=f)


def published_code(x):
    t, n = x.shape
    x = x - x.mean(axis=0)
    sample = (1 / t) * (x.T @ x)
    var = np.diag(sample).reshape(-1, 1)
    sqrtvar = np.sqrt(var)
    rbar = (np.sum(sample / (sqrtvar @ sqrtvar.T)) - n) / (n * (n - 1))
    prior = rbar * (sqrtvar @ sqrtvar.T)
    np.fill_diagonal(prior, var.ravel())
    y = x ** 2
    phi_mat = y.T @ y / t - 2 * (x.T @ x) * sample / t + sample ** 2
    phi = phi_mat.sum()
    term1 = ((x ** 3).T @ x) / t
    help_ = x.T @ x / t
    help_diag = np.diag(help_).reshape(-1, 1)
    term2 = help_diag * sample
    term3 = help_ * var
    term4 = var * sample
    theta_mat = term1 - term2 - term3 + term4
    np.fill_diagonal(theta_mat, 0)
    rho = np.trace(phi_mat) + rbar * np.sum(((1 / sqrtvar) @ sqrtvar.T) * theta_mat)
    gamma = np.linalg.norm(sample - prior, "fro") ** 2
    kappa = (phi - rho) / gamma
    shrinkage = max(0, min(1, kappa / t))
    sigma = shrinkage * prior + (1 - shrinkage) * sample
    return shrinkage, sigma


def reference(returns):
    t = returns.shape[0]
    paper = paper_equations(returns)
    delta_code, sigma_code = published_code(returns)
    assert abs(paper["delta"] - delta_code) < 1e-14, (paper["delta"], delta_code)
    unbiased = np.cov(returns, rowvar=False, ddof=1)
    target = paper["f"] * t / (t - 1)
    shrunk = paper["delta"] * target + (1 - paper["delta"]) * unbiased
    assert np.allclose(shrunk, sigma_code * t / (t - 1), rtol=1e-13, atol=0)
    return {
        "months": t,
        "first_returns": returns[0].tolist(),
        "rbar": paper["rbar"],
        "kappa": paper["kappa"],
        "intensity": paper["delta"],
        "sample_unbiased": unbiased.tolist(),
        "target": target.tolist(),
        "shrunk": shrunk.tolist(),
        "shrunk_annual": (12 * shrunk).tolist(),
    }


stock_returns, common = monthly_returns(sys.argv[1])
print(json.dumps({
    "stocks": dict(reference(stock_returns), first_month="%d-%02d" % common[0], last_month="%d-%02d" % common[-1]),
    "employment": reference(employment_changes(sys.argv[1])),
}))
