"""Reference values for test/metrics/optimise.test.ts (SciPy 1.17.1, NumPy 2.4.6).

Run: python3 test/reference/optimal_mix_slsqp.py

An independent solver for the optimal mix (methods.md, "Optimal mix and
efficient frontier"): scipy.optimize.minimize(method='SLSQP') on the original
problem, the shortfall rules written as their normal-probability constraints
P_k(x) <= 1 - c_k (not as lines), from 25 starting mixes (seeded), keeping the
best feasible answer.

  feasible mandates: maximise U = mu'x - (a/2) x'Sx s.t. sum x = 1, ranges,
                     sqrt(x'Sx) <= max_volatility, P_k(x) <= 1 - c_k;
  infeasible ones:   minimise t s.t. P_k(x) / (1 - c_k) <= t for every rule,
                     sum x = 1, ranges, sqrt(x'Sx) <= max_volatility when some
                     mix meets it (the fallback of the spec); with one rule this
                     is also checked as Roy's max (mu_p - q) / sigma_p.
  frontier points:   minimise x'Sx s.t. sum x = 1, mu'x = m, ranges, for three m.
"""
import json

import numpy as np
from scipy.optimize import minimize
from scipy.stats import norm

MU = np.array([0.02, 0.035, 0.07, 0.08, 0.06])
VOL = np.array([0.01, 0.05, 0.16, 0.19, 0.14])
CORR = np.array([
    [1, 0.1, 0, 0, 0],
    [0.1, 1, 0.1, 0.05, 0.3],
    [0, 0.1, 1, 0.75, 0.55],
    [0, 0.05, 0.75, 1, 0.5],
    [0, 0.3, 0.55, 0.5, 1],
])
SIGMA = CORR * np.outer(VOL, VOL)
RANGES = [(0, 0.3), (0.1, 0.6), (0, 0.5), (0, 0.4), (0, 0.2)]

MANDATES = {
    "no-shortfall": dict(a=3, max_vol=None, rules=[]),
    "shortfall-binds": dict(a=2, max_vol=None, rules=[("average", -0.10, 1, 0.95)]),
    "volatility-binds": dict(a=2, max_vol=0.09, rules=[("average", 0.0, 5, 0.90)]),
    "two-rules": dict(a=2, max_vol=None, rules=[("every_year", -0.05, 3, 0.90), ("cumulative", 0.05, 5, 0.75)]),
    "needs-more-return": dict(a=25, max_vol=None, rules=[("average", 0.023, 5, 0.80)]),
    "infeasible-one-rule": dict(a=2, max_vol=None, rules=[("average", 0.04, 5, 0.95)]),
    "infeasible-two-rules-ceiling": dict(a=2, max_vol=0.10, rules=[("average", 0.045, 5, 0.90), ("every_year", -0.10, 10, 0.95)]),
    "infeasible-ceiling-binds": dict(a=2, max_vol=0.10, rules=[("average", 0.04, 5, 0.95), ("every_year", -0.12, 10, 0.95)]),
    "infeasible-ceiling-only": dict(a=2, max_vol=0.02, rules=[]),
}


def shortfall_probability(basis, q, h, mp, sp):
    if basis == "average":
        return norm.cdf((q - mp) / (sp / np.sqrt(h)))
    if basis == "cumulative":
        return norm.cdf((q - mp * h) / (sp * np.sqrt(h)))
    return -np.expm1(h * np.log1p(-norm.cdf((q - mp) / sp)))


def stats(x):
    return float(MU @ x), float(np.sqrt(x @ SIGMA @ x))


def starts(count, seed=7):
    rng = np.random.default_rng(seed)
    lo = np.array([r[0] for r in RANGES]); hi = np.array([r[1] for r in RANGES])
    out = []
    while len(out) < count:
        x = lo + rng.random(len(lo)) * (hi - lo)
        for _ in range(50):  # push onto sum x = 1 within the ranges
            x = np.clip(x + (1 - x.sum()) / len(x), lo, hi)
        if abs(x.sum() - 1) < 1e-12:
            out.append(x)
    return out


def solve(objective, constraints, extra=0, x_starts=None):
    best = None
    for x0 in x_starts or starts(25):
        z0 = np.concatenate([x0, np.ones(extra)]) if extra else x0
        bounds = RANGES + [(None, None)] * extra
        cons = [{"type": "eq", "fun": lambda z: np.sum(z[:5]) - 1}] + constraints
        r = minimize(objective, z0, method="SLSQP", bounds=bounds, constraints=cons,
                     options={"ftol": 1e-15, "maxiter": 2000})
        worst = min([c["fun"](r.x) if c["type"] == "ineq" else -abs(c["fun"](r.x)) for c in constraints] + [0.0])
        if worst < -1e-9 or abs(np.sum(r.x[:5]) - 1) > 1e-9:
            continue
        if best is None or r.fun < best.fun:
            best = r
    return best


out = {}
for name, m in MANDATES.items():
    a, max_vol, rules = m["a"], m["max_vol"], m["rules"]
    cons = []
    if max_vol is not None:
        cons.append({"type": "ineq", "fun": lambda x, v=max_vol: v - np.sqrt(x[:5] @ SIGMA @ x[:5])})
    for basis, q, h, c in rules:
        cons.append({"type": "ineq", "fun": lambda x, b=basis, q=q, h=h, c=c:
                     (1 - c) - shortfall_probability(b, q, h, *stats(x[:5]))})
    r = solve(lambda x: -(MU @ x - a / 2 * x @ SIGMA @ x), cons)
    if r is not None:
        x = r.x
        feasible = True
    else:
        feasible = False
        cons = []
        min_var = solve(lambda x: x @ SIGMA @ x, [])
        keep_ceiling = max_vol is not None and np.sqrt(min_var.fun) <= max_vol
        if keep_ceiling:
            cons.append({"type": "ineq", "fun": lambda z, v=max_vol: v - np.sqrt(z[:5] @ SIGMA @ z[:5])})
        if not rules:
            x = min_var.x
        else:
            for basis, q, h, c in rules:
                cons.append({"type": "ineq", "fun": lambda z, b=basis, q=q, h=h, c=c:
                             z[5] - shortfall_probability(b, q, h, *stats(z[:5])) / (1 - c)})
            x = solve(lambda z: z[5], cons, extra=1).x[:5]
            if len(rules) == 1:  # Roy's safety-first mix, solved separately
                basis, q, h, c = rules[0]
                line_q = q / h if basis == "cumulative" else q
                roy = solve(lambda z: -(MU @ z - line_q) / np.sqrt(z @ SIGMA @ z), cons[:1] if keep_ceiling else []).x
                out[name + ":roy"] = roy.tolist()
    mp, sp = stats(x)
    out[name] = {
        "feasible": feasible,
        "weights": x.tolist(),
        "expected_return": mp,
        "volatility": sp,
        "utility": mp - a / 2 * sp ** 2,
        "probabilities": [float(shortfall_probability(b, q, h, mp, sp)) for b, q, h, c in rules],
    }
frontier = {}
for target in (0.04, 0.05, 0.06):
    r = solve(lambda x: x @ SIGMA @ x, [{"type": "eq", "fun": lambda x, m=target: MU @ x[:5] - m}])
    frontier[str(target)] = {"weights": r.x.tolist(), "volatility": stats(r.x)[1]}
out["frontier"] = frontier
print(json.dumps(out, indent=1))
