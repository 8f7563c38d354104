# HiGHS side of the certificate-LP benchmark (run by benchlp, not part of
# basin): reads commands as JSON lines on stdin, solves the named LP file
# with HiGHS's dual simplex from SciPy, whole or in a row-generation loop,
# and answers one JSON line per command on stdout. Timing covers the
# solves and the row evaluations, not the loading of the file.
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
    cache[name] = (G, np.abs(G), h, c, bounds)
    return cache[name]


def whole(G, h, c, bounds):
    r = linprog(c, A_ub=G, b_ub=h, bounds=bounds, method="highs-ds")
    return r, 1, G.shape[0]


def cuts(G, aG, h, c, bounds, k0, batch, tol):
    # The loop of fit/lp's SolveCuts: rows spread evenly over the index
    # range first, then at most batch of the most violated rows per
    # round, violation relative to the row's magnitude at x.
    m = G.shape[0]
    k0 = min(m, k0)
    active = np.zeros(m, bool)
    active[((np.arange(k0) + 0.5) * m / k0).astype(np.int64)] = True
    rounds = 0
    while True:
        rounds += 1
        A = np.flatnonzero(active)
        r = linprog(c, A_ub=G[A], b_ub=h[A], bounds=bounds, method="highs-ds")
        if r.status != 0:
            return r, rounds, len(A)
        x = r.x
        v = (G @ x - h) / (np.abs(h) + aG @ np.abs(x))
        v[active] = -np.inf
        cand = np.flatnonzero(v > tol)
        if len(cand) == 0:
            return r, rounds, len(A)
        if len(cand) > batch:
            cand = cand[np.argpartition(-v[cand], batch - 1)[:batch]]
        active[cand] = True


def main():
    for line in sys.stdin:
        cmd = json.loads(line)
        G, aG, h, c, bounds = load(cmd["file"])
        c0, w0 = time.process_time(), time.perf_counter()
        if cmd["op"] == "whole":
            r, rounds, active = whole(G, h, c, bounds)
        else:
            r, rounds, active = cuts(G, aG, h, c, bounds, cmd["initial"], cmd["batch"], cmd["tol"])
        cpu, wall = time.process_time() - c0, time.perf_counter() - w0
        out = {"cpu": cpu, "wall": wall, "status": int(r.status), "message": str(r.message),
               "objective": float(r.fun) if r.status == 0 else None, "rounds": rounds, "active": active}
        print(json.dumps(out), flush=True)


main()
