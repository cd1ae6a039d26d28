#!/usr/bin/env python3
"""Batched numpy baseline for one fitting iteration (users, then items), timed.

Called by `cargo bench --bench fit` with a directory of little-endian binary arrays written
by the Rust side (users.i32, items.i32, values.f64, init_items.f64, meta.json). The update
is the same ridge solve as sextant's: u_i = (alpha I + V_i' V_i)^-1 V_i' y_i, alpha = lambda
* sigma2. It is written to be the fastest honest numpy version:

- rows are grouped by rating count, so each group is one dense stack of equally sized
  problems: one batched matmul for the Gram matrices, one for the right-hand sides, one
  batched Cholesky and two batched triangular solves (via np.linalg.solve on the factor);
- the work is split over two worker processes (both cores), each with one BLAS thread.

With a fourth argument `implicit`, the values are counts and the iteration is the
implicit-feedback one (Hu, Koren & Volinsky, ICDM 2008) with confidence 1 + alpha * count:
x_u = (Y'Y + lambda I + Y_u' (C_u - I) Y_u)^-1 Y_u' c_u, Y'Y formed once per half-step in the
main process (one BLAS call), the per-member systems batched by interaction count as above.

Prints one JSON object: median seconds per iteration, and the float64 matrix-product peak
of this machine (4000 x 4000 on both cores), so the caller can report ratios.
"""

import json
import os
import sys
import time

for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(var, "1")

import numpy as np  # noqa: E402  (thread settings must precede the import)
from multiprocessing import get_context  # noqa: E402

STATE = {}


def group_rows(owner, other, values, count):
    """CSR-like grouping: for each owner row, its columns and targets, bucketed by length."""
    order = np.argsort(owner, kind="stable")
    owner, other, values = owner[order], other[order], values[order]
    lengths = np.bincount(owner, minlength=count)
    starts = np.concatenate([[0], np.cumsum(lengths)])
    buckets = {}
    for n in np.unique(lengths):
        rows = np.flatnonzero(lengths == n)
        if n == 0:
            buckets[0] = (rows, None, None)
            continue
        index = starts[rows][:, None] + np.arange(n)[None, :]
        buckets[int(n)] = (rows, other[index], values[index])
    return buckets


def solve_part(buckets, factors, out, alpha, rank, part, parts):
    """Solves this worker's share (every bucket split in `parts` halves) into `out`."""
    eye = alpha * np.eye(rank)
    for n, (rows, cols, targets) in buckets.items():
        share = np.array_split(np.arange(len(rows)), parts)[part]
        if n == 0:
            out[rows[share]] = 0.0
            continue
        if len(share) == 0:
            continue
        x = factors[cols[share]]  # (batch, n, rank)
        xt = x.transpose(0, 2, 1)
        gram = np.matmul(xt, x) + eye
        rhs = np.matmul(xt, targets[share][:, :, None])
        chol = np.linalg.cholesky(gram)
        w = np.linalg.solve(chol, rhs)
        w = np.linalg.solve(chol.transpose(0, 2, 1), w)
        out[rows[share]] = w[:, :, 0]


def solve_part_implicit(buckets, factors, out, base, part, parts):
    """The implicit step for this worker's share: base + X'(C - I)X, right-hand side X'c."""
    for n, (rows, cols, conf) in buckets.items():
        share = np.array_split(np.arange(len(rows)), parts)[part]
        if len(share) == 0:
            continue
        if n == 0:
            out[rows[share]] = 0.0
            continue
        x = factors[cols[share]]  # (batch, n, rank)
        c = conf[share]  # (batch, n)
        xt = x.transpose(0, 2, 1)
        gram = np.matmul(xt * (c - 1.0)[:, None, :], x) + base
        rhs = np.matmul(xt, c[:, :, None])
        chol = np.linalg.cholesky(gram)
        w = np.linalg.solve(chol, rhs)
        w = np.linalg.solve(chol.transpose(0, 2, 1), w)
        out[rows[share]] = w[:, :, 0]


def worker(args):
    side, part = args
    s = STATE
    if s["implicit"]:
        buckets, other, out = (s["user_buckets"], s["V"], s["U"]) if side == "users" else (s["item_buckets"], s["U"], s["V"])
        solve_part_implicit(buckets, other, out, s["base"], part, 2)
        return part
    if side == "users":
        solve_part(s["user_buckets"], s["V"], s["U"], s["alpha"], s["rank"], part, 2)
    else:
        solve_part(s["item_buckets"], s["U"], s["V"], s["alpha"], s["rank"], part, 2)
    return part


def shared(shape, initial=None):
    """An array in shared memory, visible to forked workers and to this process."""
    from multiprocessing import shared_memory

    block = shared_memory.SharedMemory(create=True, size=max(8, int(np.prod(shape)) * 8))
    STATE.setdefault("blocks", []).append(block)
    array = np.ndarray(shape, dtype=np.float64, buffer=block.buf)
    array[...] = 0.0 if initial is None else initial
    return array


def matmul_peak():
    a = np.random.default_rng(0).random((4000, 4000))
    b = np.random.default_rng(1).random((4000, 4000))
    best = float("inf")
    for _ in range(3):
        t = time.perf_counter()
        a @ b
        best = min(best, time.perf_counter() - t)
    return 2 * 4000**3 / best / 1e9


def main():
    directory, reps = sys.argv[1], int(sys.argv[2]) if len(sys.argv) > 2 else 3
    implicit = len(sys.argv) > 4 and sys.argv[4] == "implicit"
    meta = json.load(open(os.path.join(directory, "meta.json")))
    rank, n_users, n_items = meta["rank"], meta["users"], meta["items"]
    users = np.fromfile(os.path.join(directory, "users.i32"), dtype="<i4")
    items = np.fromfile(os.path.join(directory, "items.i32"), dtype="<i4")
    values = np.fromfile(os.path.join(directory, "values.f64"), dtype="<f8")
    y = 1.0 + meta.get("alpha", 0.0) * values if implicit else values - values.mean()
    STATE.update(
        rank=rank,
        implicit=implicit,
        alpha=meta["lambda"] * meta["sigma2"],
        user_buckets=group_rows(users, items, y, n_users),
        item_buckets=group_rows(items, users, y, n_items),
    )
    init = np.fromfile(os.path.join(directory, "init_items.f64"), dtype="<f8").reshape(n_items, rank)
    STATE["V"] = shared((n_items, rank), init)
    STATE["U"] = shared((n_users, rank))
    STATE["base"] = shared((rank, rank))
    ridge = meta["lambda"] * np.eye(rank)
    times = []
    # One pool for the whole run: workers read and write the shared factor arrays.
    with get_context("fork").Pool(2) as pool:
        for _ in range(reps):
            t = time.perf_counter()
            if implicit:
                STATE["base"][...] = STATE["V"].T @ STATE["V"] + ridge
            pool.map(worker, [("users", 0), ("users", 1)])
            if implicit:
                STATE["base"][...] = STATE["U"].T @ STATE["U"] + ridge
            pool.map(worker, [("items", 0), ("items", 1)])
            times.append(time.perf_counter() - t)
    if len(sys.argv) > 3:
        np.asarray(STATE["U"]).astype("<f8").tofile(os.path.join(directory, "numpy_users.f64"))
        np.asarray(STATE["V"]).astype("<f8").tofile(os.path.join(directory, "numpy_items.f64"))
    os.environ["OPENBLAS_NUM_THREADS"] = "2"
    try:
        from threadpoolctl import threadpool_limits, threadpool_info

        with threadpool_limits(limits=2):
            peak = matmul_peak()
        blas = [f"{i.get('internal_api')} {i.get('architecture')}" for i in threadpool_info()]
    except ImportError:
        peak, blas = matmul_peak(), []
    for block in STATE.pop("blocks"):
        block.close()
        block.unlink()
    times.sort()
    print(json.dumps({"seconds": times[len(times) // 2], "all": times, "peak_gflops": peak, "blas": blas,
                      "numpy": np.__version__}))


if __name__ == "__main__":
    main()
