"""NumPy peer for ebbflow's training benchmark (src/node/bench/workload.ts and peer-workload.ts).

Workload (by default 784-256-10, logistic units, float32; `--workload JSON` gives another one, as
src/node/bench/peer-workload.ts describes it): a chain of layers, each sending to the next through a dense
weight matrix with tied symmetric feedback (gain 1), rate dynamics x += dt (f(eta) - x); per mini-batch a
free phase of `freeSteps` steps from rest, a nudged phase of `nudgedSteps` steps from the free state (the
current beta (t - y) added to the output net input), then the one-sided Equilibrium Propagation update
(Scellier & Bengio 2017). The input drive W1 x + b1 is computed once per training step (the inputs and
weights are the same in both phases), as ebbflow does. Prints one JSON object: microseconds per example per
batch size, the number of BLAS threads NumPy used (set OPENBLAS_NUM_THREADS / OMP_NUM_THREADS to restrict
it; ebbflow's benchmark runs this script once with the default and once with one thread), and the
description of the workload it ran, built from the arrays and loops it ran (the line ebbflow compares with
its own before it prints a ratio).
"""
import os
import json
import sys
import time

import numpy as np

DEFAULT = {"sizes": [784, 256, 10], "units": ["logistic", "logistic"], "dt": 0.5, "freeSteps": 20, "nudgedSteps": 4, "beta": 0.5, "rate": 0.01, "dtype": "float32"}

# the unit functions of ebbflow's createUnit (logistic with gain 1 and offset 0)
UNITS = {
    "logistic": lambda z: 1.0 / (1.0 + np.exp(-z)),
    "hard-sigmoid": lambda z: np.clip(z, 0.0, 1.0),
    "relu": lambda z: np.maximum(z, 0.0),
    "tanh": np.tanh,
    "linear": lambda z: z,
}


def num(v):
    """A number as ebbflow prints it (String(v) in JavaScript): integers without a fraction."""
    v = float(v)
    return str(int(v)) if v.is_integer() else repr(v)


def describe(ws, unit_names, dt, free_steps, nudged_steps, beta, rate, dtype):
    """The workload line, from what was run: sizes from the weight matrices, the rest from the loops."""
    sizes = [ws[0].shape[1]] + [w.shape[0] for w in ws]
    return (
        f"eqprop one-sided; layers {'-'.join(str(s) for s in sizes)}; units {','.join(unit_names)}; tied feedback gain 1; "
        f"rate dynamics dt {num(dt)}; {free_steps} free + {nudged_steps} nudged steps; beta {num(beta)}; rate {num(rate)}; "
        f"{np.dtype(dtype).name}; input drive once per training step"
    )


def run(work, batch, seconds):
    dtype = np.float32 if work["dtype"] == "float32" else np.float64
    rng = np.random.default_rng(1)
    sizes = work["sizes"]
    depth = len(sizes) - 1  # layers after the input
    ws = []
    for i in range(depth):
        lim = np.sqrt(6.0 / (sizes[i] + sizes[i + 1]))
        ws.append(rng.uniform(-lim, lim, (sizes[i + 1], sizes[i])).astype(dtype))
    bs = [np.zeros(sizes[i + 1], dtype) for i in range(depth)]
    fs = [UNITS[u] for u in work["units"]]
    x = (rng.random((batch, sizes[0])) < 0.15).astype(dtype)
    t = np.zeros((batch, sizes[-1]), dtype)
    t[np.arange(batch), rng.integers(0, sizes[-1], batch)] = 1
    dt, beta, rate = dtype(work["dt"]), dtype(work["beta"]), dtype(work["rate"])
    free_steps, nudged_steps = int(work["freeSteps"]), int(work["nudgedSteps"])

    def settle(drive, hs, steps, nudge):
        for _ in range(steps):
            etas = []
            for l in range(depth):
                eta = drive if l == 0 else hs[l - 1] @ ws[l].T + bs[l]
                if l + 1 < depth:
                    eta = eta + hs[l + 1] @ ws[l + 1]
                elif nudge:
                    eta = eta + beta * (t - hs[l])
                etas.append(eta)
            hs = [h + dt * (fs[l](etas[l]) - h) for l, h in enumerate(hs)]
        return hs

    def step():
        drive = x @ ws[0].T + bs[0]
        h0 = settle(drive, [np.zeros((batch, s), dtype) for s in sizes[1:]], free_steps, False)
        hb = settle(drive, h0, nudged_steps, True)
        s = rate / (beta * batch)
        ws[0] += s * ((hb[0] - h0[0]).T @ x)
        for l in range(1, depth):
            ws[l] += s * (hb[l].T @ hb[l - 1] - h0[l].T @ h0[l - 1])
        for l in range(depth):
            bs[l] += s * (hb[l] - h0[l]).sum(0)

    step()
    reps = 0
    start = time.perf_counter()
    while True:
        step()
        reps += 1
        elapsed = time.perf_counter() - start
        if elapsed >= seconds:
            break
    return elapsed / reps / batch * 1e6, describe(ws, work["units"], work["dt"], free_steps, nudged_steps, work["beta"], work["rate"], dtype)


if __name__ == "__main__":
    args = sys.argv[1:]
    work = DEFAULT
    if "--workload" in args:
        i = args.index("--workload")
        work = json.loads(args[i + 1])
        args = args[:i] + args[i + 2:]
    seconds = float(args[0]) if args else 1.0
    batches = [int(b) for b in args[1:]] or [1, 64]
    threads = os.environ.get("OPENBLAS_NUM_THREADS") or os.environ.get("OMP_NUM_THREADS") or "default"
    results = {}
    ran = None
    for b in batches:
        results[str(b)], ran = run(work, b, seconds)
    print(json.dumps({"implementation": "numpy", "numpy": np.__version__, "threads": threads, "workload": ran, "results": results}))
