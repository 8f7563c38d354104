# HiGHS side of the certificate-LP benchmark (run by benchlp, not part of
# basin): reads commands as JSON lines on stdin, solves the named LP file
# with HiGHS's dual simplex from SciPy, whole or in a row-generation loop,
# and answers one JSON line per command on stdout. Timing covers the
# solves, the row evaluations and the cut selection, not the loading of
# the file; "solve" in the answer is the part spent inside linprog.
import json
import sys
import time

import numpy as np
from scipy.optimize import linprog

cache = {}


def load(name):
    if name in cache:
        return cache[name]
    a = np.fromfile(name, "<f8")
    m, w = int(a[0]), int(a[1])
    c = a[2:2 + w].copy()
    lo, up = a[2 + w:2 + 2 * w], a[2 + 2 * w:2 + 3 * w]
    rows = a[2 + 3 * w:].reshape(m, w + 1)
    # Rows scaled to unit infinity norm, as fit/lp scales them inside:
    # HiGHS's feasibility tolerance is absolute, and rows at samples near
    # the origin are of the order |x|^2.
    s = np.abs(rows[:, :w]).max(axis=1)
    s[s == 0] = 1
    G = np.ascontiguousarray(rows[:, :w] / s[:, None])
    h = rows[:, w] / s
    bounds = [(None if np.isinf(l) else l, None if np.isinf(u) else u) for l, u in zip(lo, up)]
    cache.clear()
    cache[name] = (G, h, c, bounds)
    return cache[name]


def whole(G, h, c, bounds):
    r = linprog(c, A_ub=G, b_ub=h, bounds=bounds, method="highs-ds")
    return r, 1, G.shape[0]


def diverse(G, cand, v, k, max_cos):
    # fit/lp's selection: the 8k most violated candidates, most violated
    # first (ties by index), leaving out a row within |cos| > max_cos of
    # one already taken, at most k rows.
    if len(cand) > 8 * k:
        cand = cand[np.argpartition(-v[cand], 8 * k - 1)[:8 * k]]
    cand = cand[np.lexsort((cand, -v[cand]))]
    U = G[cand]
    U = U / np.maximum(np.linalg.norm(U, axis=1), 1e-300)[:, None]
    taken = []
    for q in range(len(cand)):
        if len(taken) == k:
            break
        if taken and np.max(np.abs(U[taken] @ U[q])) > max_cos:
            continue
        taken.append(q)
    return cand[taken]


def cuts(G, h, c, bounds, k0, batch, tol, select, max_cos):
    # A row-generation loop around linprog: k0 rows spread evenly over
    # the index range first, then at most batch violated rows per round,
    # violation relative to the row's magnitude at x (the rule of fit/lp's
    # SolveCuts), chosen as fit/lp chooses them ("diverse") or simply the
    # most violated ("top"). Only the rows with g'x > h get their
    # magnitude computed, as in fit/lp.
    m = G.shape[0]
    k0 = min(m, k0)
    active = np.zeros(m, bool)
    active[((np.arange(k0) + 0.5) * m / k0).astype(np.int64)] = True
    rounds = 0
    spent = 0.0
    r = np.empty(m)
    while True:
        rounds += 1
        A = np.flatnonzero(active)
        t0 = time.process_time()
        res = linprog(c, A_ub=G[A], b_ub=h[A], bounds=bounds, method="highs-ds")
        spent += time.process_time() - t0
        if res.status != 0:
            return res, rounds, len(A), spent
        x = res.x
        np.matmul(G, x, out=r)
        r -= h
        cand = np.flatnonzero(r > 0)
        cand = cand[~active[cand]]
        v = np.full(m, -np.inf)
        v[cand] = r[cand] / (np.abs(h[cand]) + np.abs(G[cand]) @ np.abs(x))
        cand = cand[v[cand] > tol]
        if len(cand) == 0:
            return res, rounds, len(A), spent
        if select == "diverse":
            cand = diverse(G, cand, v, batch, max_cos)
        elif len(cand) > batch:
            cand = cand[np.argpartition(-v[cand], batch - 1)[:batch]]
        active[cand] = True


def main():
    for line in sys.stdin:
        cmd = json.loads(line)
        G, h, c, bounds = load(cmd["file"])
        c0, w0 = time.process_time(), time.perf_counter()
        if cmd["op"] == "whole":
            r, rounds, active = whole(G, h, c, bounds)
            spent = time.process_time() - c0
        else:
            r, rounds, active, spent = cuts(G, h, c, bounds, cmd["initial"], cmd["batch"], cmd["tol"],
                                            cmd["select"], cmd["maxcos"])
        cpu, wall = time.process_time() - c0, time.perf_counter() - w0
        out = {"cpu": cpu, "wall": wall, "solve": spent, "status": int(r.status), "message": str(r.message),
               "objective": float(r.fun) if r.status == 0 else None, "rounds": rounds, "active": active}
        print(json.dumps(out), flush=True)


main()
