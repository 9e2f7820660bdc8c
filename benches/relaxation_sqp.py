#!/usr/bin/env python3
"""Side-by-side comparison: oddsboard's solver against a continuous
relaxation solved by multi-start SQP (scipy.optimize.minimize, method SLSQP)
and then rounded.

For each mid-size invented incident (written by `oddsboard generate`, every
task moved to one tier with secure level 1 so that both sides maximise the
plain max-min of the tasks' odds):

  relaxation: x_ij in [0, 1] (share of unit i on task j, only where task j
  accepts unit i), sum_j x_ij <= 1, maximise t subject to
  sum_k ln Phi(z_jk(x)) >= t for every open task j, with
  z_jk = (sum_i x_ij m_ik - need_jk) / sqrt(var_jk(x)),
  var_jk = sum_types [(1 - rho) sum x s^2 + rho (sum x s)^2] + need_sd^2
  (the model of SPEC section 2 with placements made fractional).

  rounding: randomized (unit i to task j with probability x_ij), best of
  200 draws per start by the worst task's ln odds.

Both plans are scored here with the same formula (scipy.special.log_ndtr);
the script also checks that this score of oddsboard's plan equals the
min_odds oddsboard reports (an outside check of the odds engine).

Sizes are kept mid-size: SLSQP with n·J share variables takes tens of
seconds at 60 x 10 and far longer at 100 x 15.

oddsboard's own valid bound (`upper_bound` of `plan --json`, from the conic
relaxation of solver::relax; see docs/solver.md) is printed beside the SQP
optimum, which is a local optimum of a non-convex problem and no bound.

Usage: python3 benches/relaxation_sqp.py [path/to/oddsboard]
(RELAX_SIZES=30x6x3,60x10x3 picks the sizes; default both)
Needs: scipy, numpy, pyyaml (pip install scipy pyyaml).
"""

import json
import math
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
import yaml
from scipy.optimize import minimize
from scipy.special import log_ndtr

BIN = sys.argv[1] if len(sys.argv) > 1 else "target/release/oddsboard"
SIZES = [tuple(int(x) for x in s.split("x"))
         for s in os.environ.get("RELAX_SIZES", "30x6x3,60x10x3").split(",")]
SEEDS = [1, 2, 3]
STARTS = 3


def load(units, tasks, traits, seed):
    text = subprocess.run(
        [BIN, "generate", "--units", str(units), "--tasks", str(tasks),
         "--traits", str(traits), "--seed", str(seed), "--no-placement"],
        check=True, capture_output=True, text=True).stdout
    doc = yaml.safe_load(text)
    for t in doc["tasks"]:
        t["tier"] = "property"
    doc["incident"]["secure"] = {"property": 1.0}
    return doc


def arrays(doc):
    traits = [t["id"] for t in doc["traits"]]
    types = {t["id"]: t for t in doc["unit_types"]}
    type_ids = list(types)
    units = []
    for u in doc["units"]:
        if u.get("status") == "out_of_service":
            continue
        base = types[u["type"]].get("traits", {})
        over = u.get("traits", {}) or {}
        m, s = [], []
        for k in traits:
            b = base.get(k, {}) or {}
            o = over.get(k, {}) or {}
            m.append(o.get("mean", b.get("mean", 0.0)) or 0.0)
            s.append(o.get("sd", b.get("sd", 0.0)) or 0.0)
        units.append((u["id"], type_ids.index(u["type"]), m, s))
    M = np.array([u[2] for u in units])
    S = np.array([u[3] for u in units])
    T = np.array([u[1] for u in units])
    rho = np.array([types[t].get("rho", 0.0) or 0.0 for t in type_ids])
    tasks = []
    for t in doc["tasks"]:
        need = np.zeros(len(traits))
        nsd = np.zeros(len(traits))
        for k, v in t["needs"].items():
            i = traits.index(k)
            if isinstance(v, dict):
                need[i], nsd[i] = v["need"], v.get("sd", 0.0) or 0.0
            else:
                need[i] = v
        acc = t.get("accepts")
        allowed = np.array([acc is None or type_ids[u[1]] in acc for u in units])
        tasks.append(dict(id=t["id"], need=need, nsd=nsd, allowed=allowed,
                          min=t.get("min_units"), max=t.get("max_units")))
    return units, M, S, T, rho, tasks


def task_ln(x, M, S, T, rho, task, n_types):
    """ln odds of one task for unit shares x (vector over units) and the
    gradient with respect to x."""
    counting = (task["need"] > 0) | (task["nsd"] > 0)
    total, grad = 0.0, np.zeros_like(x)
    for k in np.nonzero(counting)[0]:
        mean = x @ M[:, k]
        var = task["nsd"][k] ** 2
        dvar = np.zeros_like(x)
        for t in range(n_types):
            sel = T == t
            s1 = x[sel] @ S[sel, k]
            var += (1 - rho[t]) * (x[sel] @ S[sel, k] ** 2) + rho[t] * s1 ** 2
            dvar[sel] = (1 - rho[t]) * S[sel, k] ** 2 + 2 * rho[t] * s1 * S[sel, k]
        n = mean - task["need"][k]
        if var <= 1e-12:
            total += 0.0 if n >= 0 else -1e3  # a steep finite wall for SLSQP
            continue
        sd = math.sqrt(var)
        z = n / sd
        lp = log_ndtr(z)
        mills = math.exp(-0.5 * z * z - 0.5 * math.log(2 * math.pi) - lp)
        dz = M[:, k] / sd - n * dvar / (2 * sd ** 3)
        total += lp
        grad += mills * dz
    return total, grad


def plan_min_ln(place, M, S, T, rho, tasks):
    """Worst ln odds of an integer plan (place[i] = task index or -1)."""
    worst = 0.0
    n_types = len(rho)
    for j, task in enumerate(tasks):
        x = np.array([1.0 if p == j else 0.0 for p in place])
        count = int(x.sum())
        has = bool(((task["need"] > 0) | (task["nsd"] > 0)).any())
        if (has and count == 0) or (task["min"] and count < task["min"]):
            return -math.inf
        ln, _ = task_ln(x, M, S, T, rho, task, n_types)
        worst = min(worst, ln)
    return worst


def round_shares(X, tasks, rng, M, S, T, rho, samples=200):
    """Randomized rounding: each unit goes to task j with probability x_ij
    (reserve with the rest), skipping full tasks; the best of `samples`
    draws by worst ln odds is kept."""
    n, J = X.shape
    best = None
    for _ in range(samples):
        load = [0] * J
        place = [-1] * n
        for i in rng.permutation(n):
            p = np.clip(X[i], 0.0, 1.0)
            r = rng.uniform(0.0, max(1.0, p.sum()))
            acc = 0.0
            for j in range(J):
                acc += p[j]
                if r < acc:
                    if tasks[j]["max"] is None or load[j] < tasks[j]["max"]:
                        place[i] = j
                        load[j] += 1
                    break
        score = plan_min_ln(place, M, S, T, rho, tasks)
        if best is None or score > best[0]:
            best = (score, place)
    return best[1]


def relax_and_round(M, S, T, rho, tasks, rng):
    n, J = M.shape[0], len(tasks)
    allowed = np.array([t["allowed"] for t in tasks]).T  # n x J
    idx = np.argwhere(allowed)
    nv = len(idx) + 1

    def unpack(v):
        X = np.zeros((n, J))
        X[idx[:, 0], idx[:, 1]] = v[:-1]
        return X

    cons = []
    for j in range(J):
        cols = np.nonzero(idx[:, 1] == j)[0]
        rows = idx[cols, 0]

        def f(v, j=j):
            return task_ln(unpack(v)[:, j], M, S, T, rho, tasks[j], len(rho))[0] - v[-1]

        def jac(v, j=j, cols=cols, rows=rows):
            g = np.zeros(nv)
            _, gx = task_ln(unpack(v)[:, j], M, S, T, rho, tasks[j], len(rho))
            g[cols] = gx[rows]
            g[-1] = -1.0
            return g
        cons.append(dict(type="ineq", fun=f, jac=jac))
    A = np.zeros((n, nv))
    A[idx[:, 0], np.arange(len(idx))] = 1.0
    cons.append(dict(type="ineq", fun=lambda v: 1.0 - A @ v, jac=lambda v: -A))
    bounds = [(0.0, 1.0)] * len(idx) + [(-1e3, 0.0)]
    best = None
    for _ in range(STARTS):
        v0 = np.append(rng.uniform(0, 1.0 / max(1, J), len(idx)), -50.0)
        res = minimize(lambda v: -v[-1], v0, jac=lambda v: np.append(np.zeros(nv - 1), -1.0),
                       bounds=bounds, constraints=cons, method="SLSQP",
                       options=dict(maxiter=200, ftol=1e-9))
        X = unpack(res.x)
        place = round_shares(X, tasks, rng, M, S, T, rho)
        score = plan_min_ln(place, M, S, T, rho, tasks)
        if best is None or score > best[0]:
            best = (score, place, -res.fun)
    return best


def main():
    rng = np.random.default_rng(0)
    print("size      seed  oddsboard worst (ln)  sqp rounded worst (ln)  relaxation (ln)  "
          "odds ratio sqp/ob  time ob ms  time sqp ms  time ratio  ob bound  gap bound/ob")
    for (u, t, k) in SIZES:
        for seed in SEEDS:
            doc = load(u, t, k, seed)
            with tempfile.NamedTemporaryFile("w", suffix=".yaml", delete=False) as f:
                yaml.safe_dump(doc, f)
                path = f.name
            out = subprocess.run([BIN, "plan", path, "--from-scratch", "--json",
                                  "--budget-ms", "1000"], check=True,
                                 capture_output=True, text=True).stdout
            plan = json.loads(out)
            units, M, S, T, rho, tasks = arrays(doc)
            ids = [x[0] for x in units]
            task_ids = [x["id"] for x in tasks]
            place = [task_ids.index(plan["placement"][i]) if plan["placement"][i] else -1
                     for i in ids]
            ob_ln = plan_min_ln(place, M, S, T, rho, tasks)
            reported = plan["min_odds"]
            if reported > 1e-300 and abs(math.exp(ob_ln) - reported) > 1e-9 * max(1.0, reported):
                print(f"  MISMATCH: scipy scores oddsboard's plan {math.exp(ob_ln)}, "
                      f"oddsboard says {reported}")
            t0 = time.perf_counter()
            sq_ln, _, relax_ln = relax_and_round(M, S, T, rho, tasks, rng)
            sq_ms = (time.perf_counter() - t0) * 1e3
            ratio = math.exp(sq_ln - ob_ln) if ob_ln > -math.inf else float("nan")
            print(f"{u}x{t}x{k:<4} {seed:>4}  {math.exp(ob_ln):.4g} ({ob_ln:.2f})"
                  f"  {math.exp(sq_ln):.4g} ({sq_ln:.2f})  {relax_ln:.2f}"
                  f"  {ratio:.3g}  {plan['solve_ms']:.0f}  {sq_ms:.0f}"
                  f"  {sq_ms / plan['solve_ms']:.2f}"
                  f"  {plan['upper_bound']:.4g}"
                  f"  {plan['upper_bound'] / max(math.exp(ob_ln), 1e-300):.3g}")


if __name__ == "__main__":
    main()
