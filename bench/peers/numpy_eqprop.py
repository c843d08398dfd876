"""NumPy peer for ebbflow's training benchmark (bench/README and src/node/bench/workload.ts).

Workload: a 784-256-10 network, logistic units, tied symmetric feedback (gain 1), rate dynamics
x += dt (f(eta) - x) with dt = 0.5; per mini-batch: a free phase of 20 steps from rest, a nudged phase
of 4 steps from the free state (beta = 0.5, the current beta (t - y) added to the output net input),
then the one-sided Equilibrium Propagation update (Scellier & Bengio 2017). The input drive W1 x + b1
is computed once per training step (the inputs and weights are the same in both phases), as ebbflow
does. float32. Prints one JSON object: microseconds per example per batch size, and the number of
BLAS threads NumPy used (set OPENBLAS_NUM_THREADS / OMP_NUM_THREADS to restrict it; ebbflow's
benchmark runs this script once with the default and once with one thread).
"""
import os
import json
import sys
import time

import numpy as np


def sigmoid(z):
    return 1.0 / (1.0 + np.exp(-z))


def run(batch, seconds, dtype=np.float32):
    rng = np.random.default_rng(1)
    n_in, n_h, n_out = 784, 256, 10
    lim1 = np.sqrt(6.0 / (n_in + n_h))
    lim2 = np.sqrt(6.0 / (n_h + n_out))
    w1 = rng.uniform(-lim1, lim1, (n_h, n_in)).astype(dtype)
    w2 = rng.uniform(-lim2, lim2, (n_out, n_h)).astype(dtype)
    b1 = np.zeros(n_h, dtype)
    b2 = np.zeros(n_out, dtype)
    x = (rng.random((batch, n_in)) < 0.15).astype(dtype)
    t = np.zeros((batch, n_out), dtype)
    t[np.arange(batch), rng.integers(0, n_out, batch)] = 1
    dt, beta, rate = dtype(0.5), dtype(0.5), dtype(0.01)

    def settle(drive, h, y, steps, nudge):
        for _ in range(steps):
            eta_h = drive + y @ w2
            eta_y = h @ w2.T + b2
            if nudge:
                eta_y = eta_y + beta * (t - y)
            h = h + dt * (sigmoid(eta_h) - h)
            y = y + dt * (sigmoid(eta_y) - y)
        return h, y

    def step():
        nonlocal w1, w2, b1, b2
        drive = x @ w1.T + b1
        h0, y0 = settle(drive, np.zeros((batch, n_h), dtype), np.zeros((batch, n_out), dtype), 20, False)
        hb, yb = settle(drive, h0, y0, 4, True)
        s = rate / (beta * batch)
        w1 += s * ((hb - h0).T @ x)
        w2 += s * (yb.T @ hb - y0.T @ h0)
        b1 += s * (hb - h0).sum(0)
        b2 += s * (yb - y0).sum(0)

    step()
    reps = 0
    start = time.perf_counter()
    while time.perf_counter() - start < seconds:
        step()
        reps += 1
    elapsed = time.perf_counter() - start
    return elapsed / reps / batch * 1e6


if __name__ == "__main__":
    seconds = float(sys.argv[1]) if len(sys.argv) > 1 else 1.0
    batches = [int(b) for b in sys.argv[2:]] or [1, 64]
    threads = os.environ.get("OPENBLAS_NUM_THREADS") or os.environ.get("OMP_NUM_THREADS") or "default"
    out = {"implementation": "numpy", "numpy": np.__version__, "threads": threads, "results": {str(b): run(b, seconds) for b in batches}}
    print(json.dumps(out))
