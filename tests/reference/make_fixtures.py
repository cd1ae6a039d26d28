#!/usr/bin/env python3
"""Reference fixtures for sextant's tests, computed with numpy, scipy and scikit-learn.

Run from the repository root:

    python3 tests/reference/make_fixtures.py           # (re)write tests/reference/fixtures/
    python3 tests/reference/make_fixtures.py --check   # recompute, compare with the committed files

The Rust tests read the JSON files; `.ci/run` runs `--check` so the committed numbers are
proven to be what the libraries compute. Inputs are drawn from numpy's seeded PCG64
generator (numpy.random.default_rng), so they are reproducible everywhere.
"""

import json
import math
import sys
from pathlib import Path

import numpy as np
import scipy.linalg
import sklearn
from sklearn.linear_model import Ridge

HERE = Path(__file__).resolve().parent
FIXTURES = HERE / "fixtures"


def ridge_half_steps(seed, n_users, n_items, rank, lam, sigma2, density, center):
    """One user half-step then one item half-step, each a ridge regression.

    scikit-learn's Ridge minimises ||y - Xw||^2 + alpha ||w||^2, so the user step equals
    Ridge(alpha = lam * sigma2, fit_intercept=False) on the rated items' vectors and the
    centred ratings. With lam = 0 the reference is numpy.linalg.lstsq instead.
    """
    rng = np.random.default_rng(seed)
    mask = rng.random((n_users, n_items)) < density
    # Every user and item gets at least rank + 1 ratings so lam = 0 is solvable too.
    for i in range(n_users):
        mask[i, rng.permutation(n_items)[: rank + 1]] = True
    for j in range(n_items):
        mask[rng.permutation(n_users)[: rank + 1], j] = True
    values = rng.integers(1, 6, size=(n_users, n_items)).astype(float)
    v0 = rng.normal(size=(n_items, rank))
    mu = values[mask].mean() if center else 0.0
    alpha = lam * sigma2

    def solve(x, y):
        if alpha == 0.0:
            return np.linalg.lstsq(x, y, rcond=None)[0], np.linalg.lstsq(x, y, rcond=None)[0]
        model = Ridge(alpha=alpha, fit_intercept=False, solver="cholesky").fit(x, y)
        direct = np.linalg.solve(x.T @ x + alpha * np.eye(rank), x.T @ y)
        return model.coef_, direct

    u1, u1_direct = np.zeros((n_users, rank)), np.zeros((n_users, rank))
    for i in range(n_users):
        cols = np.flatnonzero(mask[i])
        u1[i], u1_direct[i] = solve(v0[cols], values[i, cols] - mu)
    v1, v1_direct = np.zeros((n_items, rank)), np.zeros((n_items, rank))
    for j in range(n_items):
        rows = np.flatnonzero(mask[:, j])
        v1[j], v1_direct[j] = solve(u1[rows], values[rows, j] - mu)
    ratings = [[f"u{i}", f"i{j}", values[i, j]] for i in range(n_users) for j in range(n_items) if mask[i, j]]
    return {
        "source": "scikit-learn Ridge(alpha=lambda*sigma2, fit_intercept=False)"
        if alpha > 0
        else "numpy.linalg.lstsq",
        "rank": rank,
        "lambda": lam,
        "sigma2": sigma2,
        "center": "global" if center else "none",
        "mu": mu,
        "ratings": ratings,
        "items_init": v0.tolist(),
        "users_after": u1.tolist(),
        "users_after_numpy_solve": u1_direct.tolist(),
        "items_after": v1.tolist(),
        "items_after_numpy_solve": v1_direct.tolist(),
    }


def biased_steps(seed, n_users, n_items, rank, lam, lam_b, sigma2, density, iterations):
    """Coordinate ascent with member and item offsets, each half-step by numpy.linalg.solve.

    Model: M_ij ~ N(mu + b_i + c_j + u_i.v_j, sigma2), u, v ~ N(0, 1/lam), b, c ~ N(0, 1/lam_b).
    The member step solves (u_i, b_i) jointly: features [v_j, 1], target M_ij - mu - c_j,
    penalty diag(lam*sigma2, ..., lam*sigma2, lam_b*sigma2). The item step likewise with
    features [u_i, 1] and target M_ij - mu - b_i. Offsets start at 0, items at v0.

    The first member step is also computed with scikit-learn's Ridge, whose penalty is one
    alpha for every coefficient: with the bias feature scaled to s = sqrt(lam / lam_b) and
    alpha = lam*sigma2, the coefficient w' of that feature is penalised alpha*w'^2 =
    lam*sigma2*w'^2, and the fitted value s*w' = b carries alpha*(b/s)^2 = lam_b*sigma2*b^2:
    the same problem, so b = s*w'.
    """
    rng = np.random.default_rng(seed)
    mask = rng.random((n_users, n_items)) < density
    for i in range(n_users):
        mask[i, rng.permutation(n_items)[: rank + 2]] = True
    for j in range(n_items):
        mask[rng.permutation(n_users)[: rank + 2], j] = True
    values = rng.integers(1, 6, size=(n_users, n_items)).astype(float)
    v = rng.normal(size=(n_items, rank))
    v0 = v.copy()
    mu = values[mask].mean()
    penalty = np.diag([lam * sigma2] * rank + [lam_b * sigma2])
    u = np.zeros((n_users, rank))
    b = np.zeros(n_users)
    c = np.zeros(n_items)
    sklearn_first = None
    for step in range(iterations):
        for i in range(n_users):
            cols = np.flatnonzero(mask[i])
            x = np.hstack([v[cols], np.ones((len(cols), 1))])
            y = values[i, cols] - mu - c[cols]
            w = np.linalg.solve(x.T @ x + penalty, x.T @ y)
            u[i], b[i] = w[:rank], w[rank]
        if step == 0:
            s = math.sqrt(lam / lam_b)
            sklearn_first = []
            for i in range(n_users):
                cols = np.flatnonzero(mask[i])
                x = np.hstack([v0[cols], np.full((len(cols), 1), s)])
                y = values[i, cols] - mu
                coef = Ridge(alpha=lam * sigma2, fit_intercept=False, solver="cholesky").fit(x, y).coef_
                sklearn_first.append(list(coef[:rank]) + [s * coef[rank]])
        for j in range(n_items):
            rows = np.flatnonzero(mask[:, j])
            x = np.hstack([u[rows], np.ones((len(rows), 1))])
            y = values[rows, j] - mu - b[rows]
            w = np.linalg.solve(x.T @ x + penalty, x.T @ y)
            v[j], c[j] = w[:rank], w[rank]
    ratings = [[f"u{i}", f"i{j}", values[i, j]] for i in range(n_users) for j in range(n_items) if mask[i, j]]
    return {
        "source": "numpy.linalg.solve on each augmented ridge system; scikit-learn Ridge with a rescaled bias feature for the first member step",
        "rank": rank,
        "lambda": lam,
        "lambda_bias": lam_b,
        "sigma2": sigma2,
        "iterations": iterations,
        "mu": mu,
        "ratings": ratings,
        "items_init": v0.tolist(),
        "first_user_step_sklearn": sklearn_first,
        "users": u.tolist(),
        "user_bias": b.tolist(),
        "items": v.tolist(),
        "item_bias": c.tolist(),
    }


def implicit_steps(seed, n_users, n_items, rank, lam, alpha, epsilon, density, iterations):
    """Alternating least squares for implicit feedback (Hu, Koren & Volinsky, ICDM 2008),
    in the dense form: for each member, C_u = diag(confidences over the whole catalogue)
    and p_u = [count > 0], x_u = solve(Y' C_u Y + lam I, Y' C_u p_u) with Y' C_u Y formed
    explicitly (no Y'Y + Y'(C_u - I)Y shortcut); items likewise. Confidence 1 + alpha*count,
    or 1 + alpha*log(1 + count/epsilon) when epsilon is given. The loss
    sum_all c (p - x.y)^2 + lam (|X|^2 + |Y|^2) is recorded after each iteration."""
    rng = np.random.default_rng(seed)
    counts = np.where(rng.random((n_users, n_items)) < density, rng.integers(1, 20, size=(n_users, n_items)), 0).astype(float)
    for i in range(n_users):
        counts[i, rng.integers(n_items)] = float(rng.integers(1, 5))
    for j in range(n_items):
        counts[rng.integers(n_users), j] = float(rng.integers(1, 5))
    if epsilon is None:
        conf = 1.0 + alpha * counts
    else:
        conf = 1.0 + alpha * np.log1p(counts / epsilon)
    pref = (counts > 0).astype(float)
    y = rng.normal(scale=0.3, size=(n_items, rank))
    y0 = y.copy()
    x = np.zeros((n_users, rank))
    losses = []
    for _ in range(iterations):
        for u in range(n_users):
            cu = np.diag(conf[u])
            x[u] = np.linalg.solve(y.T @ cu @ y + lam * np.eye(rank), y.T @ cu @ pref[u])
        for i in range(n_items):
            ci = np.diag(conf[:, i])
            y[i] = np.linalg.solve(x.T @ ci @ x + lam * np.eye(rank), x.T @ ci @ pref[:, i])
        losses.append(float((conf * (pref - x @ y.T) ** 2).sum() + lam * ((x ** 2).sum() + (y ** 2).sum())))
    # Every positive count, and a few explicit zeros (which are no interaction).
    rows = [[f"u{i}", f"i{j}", counts[i, j]] for i in range(n_users) for j in range(n_items) if counts[i, j] > 0]
    zeros = np.argwhere(counts == 0)[:5]
    rows += [[f"u{i}", f"i{j}", 0.0] for i, j in zeros]
    return {
        "source": "numpy.linalg.solve on the dense weighted normal equations of each member and item",
        "rank": rank, "lambda": lam, "alpha": alpha, "epsilon": epsilon, "iterations": iterations,
        "counts": rows, "items_init": y0.tolist(), "users": x.tolist(), "items": y.tolist(),
        "losses": losses,
    }


def percentile_rank():
    """Expected percentile rank (Hu, Koren & Volinsky 2008, section 6) computed directly:
    for each member, candidates are the items without a training interaction, ranked by
    x.y descending; a held-out item's rank is (candidates strictly above + half the other
    candidates with an equal score) / (candidates - 1); the result is sum(count * rank) /
    sum(count) over held-out interactions. Scores are rounded to one decimal in one case
    so that ties occur."""
    rng = np.random.default_rng(97)
    cases = []
    for n_users, n_items, rank, ties in [(12, 30, 3, False), (20, 15, 2, True)]:
        x = rng.normal(size=(n_users, rank))
        y = rng.normal(size=(n_items, rank))
        if ties:
            x = np.round(x, 0)
            y = np.round(y, 0)
        rows = []
        num = den = 0.0
        for u in range(n_users):
            items = rng.permutation(n_items)
            train, held = items[:5], items[5:8] if u % 4 else items[5:5]
            for j in train:
                rows.append([f"u{u}", f"i{j}", float(rng.integers(1, 9)), "train"])
            candidates = np.setdiff1d(np.arange(n_items), train)
            scores = y[candidates] @ x[u]
            for j in held:
                count = float(rng.integers(1, 9))
                rows.append([f"u{u}", f"i{j}", count, "holdout"])
                s = scores[np.searchsorted(candidates, j)]  # the same product as in the list
                above = (scores > s).sum()
                tied = (scores == s).sum() - 1
                num += count * (above + 0.5 * tied) / (len(candidates) - 1)
                den += count
        cases.append({"rank": rank, "users": x.tolist(), "items": y.tolist(), "counts": rows,
                      "n_items": n_items, "epr": num / den})
    return {"source": "numpy, by the definition", "cases": cases}


def soft_threshold_svd(seed, n_users, n_items, rank, lam):
    """A fully observed matrix: the MAP fit's product UV' has singular values
    max(s_i - lam*sigma2, 0) (sigma2 = 1) and its item subspace is the top right singular
    subspace of R (Srebro, Rennie & Jaakkola 2004; Mazumder, Hastie & Tibshirani 2010)."""
    rng = np.random.default_rng(seed)
    a = rng.normal(size=(n_users, rank))
    b = rng.normal(size=(n_items, rank))
    r = a @ np.diag([3.0, 2.0, 1.2][:rank]) @ b.T + 0.1 * rng.normal(size=(n_users, n_items))
    r = np.round(r, 6)
    _, s, vt = np.linalg.svd(r)
    return {
        "source": "numpy.linalg.svd",
        "rank": rank,
        "lambda": lam,
        "matrix": r.tolist(),
        "singular_values": s.tolist(),
        "expected_singular_values": np.maximum(s[:rank] - lam, 0.0).tolist(),
        "top_right_singular_vectors": vt[:rank].tolist(),
    }


def subspace_angle_cases():
    """Principal angles (Bjorck & Golub 1973) from scipy.linalg.subspace_angles (radians,
    largest first)."""
    rng = np.random.default_rng(7)
    cases = []
    t = 0.3
    a = np.array([[1.0, 0.0], [0.0, 1.0], [0.0, 0.0]])
    b = np.array([[1.0, 0.0], [0.0, math.cos(t)], [0.0, math.sin(t)]])
    cases.append({"a": a.tolist(), "b": b.tolist(), "angles": scipy.linalg.subspace_angles(a, b).tolist()})
    for n, k in [(6, 2), (10, 3), (8, 4)]:
        a = rng.normal(size=(n, k))
        b = a + 1e-3 * rng.normal(size=(n, k))
        cases.append({"a": a.tolist(), "b": b.tolist(), "angles": scipy.linalg.subspace_angles(a, b).tolist()})
        c = rng.normal(size=(n, k))
        cases.append({"a": a.tolist(), "b": c.tolist(), "angles": scipy.linalg.subspace_angles(a, c).tolist()})
    return {"source": "scipy.linalg.subspace_angles", "cases": cases}


def longley():
    """NIST StRD Longley through ordinary least squares; data from statsmodels.datasets."""
    from statsmodels.datasets import longley as data

    frame = data.load_pandas()
    x = np.column_stack([np.ones(len(frame.endog)), frame.exog.to_numpy(dtype=float)])
    y = frame.endog.to_numpy(dtype=float)
    beta = np.linalg.lstsq(x, y, rcond=None)[0]
    return {"source": "statsmodels.datasets.longley + numpy.linalg.lstsq", "x": x.tolist(), "y": y.tolist(), "beta": beta.tolist()}


def knn_ckdtree():
    """Exact k nearest neighbours from scipy.spatial.cKDTree on continuous random points
    (no ties), several widths."""
    from scipy.spatial import cKDTree

    rng = np.random.default_rng(31)
    cases = []
    for width, rows, k in [(2, 400, 5), (4, 600, 10), (8, 800, 10), (12, 800, 7)]:
        points = rng.normal(size=(rows, width)) / np.sqrt(1.0 + np.arange(width))
        queries = rng.normal(size=(6, width))
        distances, ids = cKDTree(points).query(queries, k=k)
        cases.append({"k": k, "points": points.tolist(), "queries": queries.tolist(),
                      "distances": distances.tolist(), "ids": ids.astype(float).tolist()})
    return {"source": "scipy.spatial.cKDTree.query", "cases": cases}


def predictive_sd():
    """Bayesian linear regression (Bishop 2006, section 3.3.2): posterior covariance
    S = sigma2 (lambda sigma2 I + Phi'Phi)^-1, predictive SD sqrt(sigma2 + x' S x)."""
    rng = np.random.default_rng(41)
    cases = []
    for d, n_items, n_rated, lam, sigma2 in [(3, 20, 8, 1.0, 1.0), (10, 60, 25, 0.5, 0.8), (5, 30, 2, 2.0, 1.5)]:
        items = rng.normal(size=(n_items, d))
        rated = rng.choice(n_items, size=n_rated, replace=False)
        phi = items[rated]
        s = sigma2 * np.linalg.inv(lam * sigma2 * np.eye(d) + phi.T @ phi)
        sd = [float(np.sqrt(sigma2 + x @ s @ x)) for x in items]
        cases.append({"d": d, "lambda": lam, "sigma2": sigma2, "items": items.tolist(),
                      "rated": rated.astype(float).tolist(), "sd": sd})
    return {"source": "numpy (Bishop 2006, eq. 3.59)", "cases": cases}


def hypergeometric():
    """scipy.stats.hypergeom(M=population, n=marked, N=draws): pmf, cdf and sf at every x."""
    from scipy.stats import hypergeom
    cases = []
    for population, marked, draws in [(399, 49, 10), (20, 7, 5), (1000, 3, 8), (1000000, 125000, 10), (12, 3, 3)]:
        law = hypergeom(population, marked, draws)
        xs = list(range(0, min(marked, draws) + 1))
        cases.append({"population": population, "marked": marked, "draws": draws,
                      "pmf": [float(law.pmf(x)) for x in xs],
                      "cdf": [float(law.cdf(x)) for x in xs],
                      "at_least": [float(law.sf(x - 1)) for x in xs]})
    return {"source": "scipy.stats.hypergeom", "cases": cases}


def ndcg_cases():
    """sklearn.metrics.ndcg_score (linear gain, log2 discount) on random graded relevance
    with distinct scores, at several cut-offs."""
    from sklearn.metrics import ndcg_score
    rng = np.random.default_rng(53)
    cases = []
    for n, k in [(6, 3), (20, 5), (50, 10), (50, 50)]:
        relevance = rng.integers(0, 4, size=n).astype(float)
        scores = rng.permutation(n).astype(float)
        cases.append({"k": k, "relevance": relevance.tolist(), "scores": scores.tolist(),
                      "ndcg": float(ndcg_score([relevance], [scores], k=k))})
    return {"source": "sklearn.metrics.ndcg_score", "cases": cases}


def fold_in():
    """A profile folded into fixed item vectors is one ridge solve:
    u = (lambda sigma2 I + V'V)^-1 V'(r - mu), predictions mu + V_all u (numpy.linalg.solve)."""
    rng = np.random.default_rng(67)
    cases = []
    for n_items, d, n_rated, lam, sigma2, mu in [(40, 6, 9, 1.0, 1.0, 3.5), (25, 3, 2, 0.3, 0.7, 0.0), (60, 10, 30, 2.0, 0.5, 2.75)]:
        items = rng.normal(size=(n_items, d))
        rated = np.sort(rng.choice(n_items, size=n_rated, replace=False))
        ratings = rng.integers(1, 6, size=n_rated).astype(float)
        v = items[rated]
        u = np.linalg.solve(lam * sigma2 * np.eye(d) + v.T @ v, v.T @ (ratings - mu))
        cases.append({"d": d, "lambda": lam, "sigma2": sigma2, "mu": mu, "items": items.tolist(),
                      "rated": rated.astype(float).tolist(), "ratings": ratings.tolist(),
                      "vector": u.tolist(), "predictions": (mu + items @ u).tolist()})
    return {"source": "numpy.linalg.solve", "cases": cases}


def biased_profile():
    """A profile folded into fixed item vectors and offsets in a model with biases: one
    ridge solve on features [v_j, 1] with penalty diag(lambda sigma2, ..., lambda_b sigma2)
    and targets r - mu - c_j (numpy.linalg.solve); the posterior of (u, b) is
    S = sigma2 A^-1 with A that penalty plus X'X, and a new rating's predictive SD
    sqrt(sigma2 + x' S x) with x = [v, 1] (Bishop 2006, eq. 3.59, with the offset as one
    more feature)."""
    rng = np.random.default_rng(71)
    cases = []
    for n_items, d, n_rated, lam, lam_b, sigma2, mu in [(40, 6, 9, 1.0, 0.5, 1.0, 3.5), (25, 3, 2, 0.3, 2.0, 0.7, 0.0), (60, 10, 30, 2.0, 0.01, 0.5, 2.75), (30, 4, 0, 1.0, 1.0, 1.0, 3.0)]:
        items = rng.normal(size=(n_items, d))
        offsets = rng.normal(scale=0.5, size=n_items)
        rated = np.sort(rng.choice(n_items, size=n_rated, replace=False))
        ratings = rng.integers(1, 6, size=n_rated).astype(float)
        x = np.hstack([items[rated], np.ones((n_rated, 1))])
        penalty = np.diag([lam * sigma2] * d + [lam_b * sigma2])
        a = penalty + x.T @ x
        w = np.linalg.solve(a, x.T @ (ratings - mu - offsets[rated]))
        u, b = w[:d], w[d]
        s = sigma2 * np.linalg.inv(a)
        features = np.hstack([items, np.ones((n_items, 1))])
        sd = [float(np.sqrt(sigma2 + f @ s @ f)) for f in features]
        cases.append({"d": d, "lambda": lam, "lambda_bias": lam_b, "sigma2": sigma2, "mu": mu,
                      "items": items.tolist(), "item_offsets": offsets.tolist(),
                      "rated": rated.astype(float).tolist(), "ratings": ratings.tolist(),
                      "vector": u.tolist(), "bias": float(b),
                      "predictions": (mu + b + offsets + items @ u).tolist(), "sd": sd})
    return {"source": "numpy.linalg.solve and numpy.linalg.inv (Bishop 2006, eq. 3.59)", "cases": cases}


def by_rating():
    """A member's ridge solution is linear in their ratings (the linear-smoother view of
    ridge regression): w = A^-1 sum_j x_j y_j with A = penalty + sum_j x_j x_j',
    x_j = [v_j] (or [v_j, 1] with an offset), y_j = r_j - mu - c_j. So the vector part of a
    prediction, v_k . u, is sum_j s_jk y_j with s_jk = [v_k, 0]' A^-1 x_j (numpy.linalg.solve)."""
    rng = np.random.default_rng(83)
    cases = []
    for n_items, d, n_rated, lam, lam_b, sigma2, mu in [(30, 4, 8, 1.0, None, 1.0, 3.5), (50, 10, 25, 0.5, 2.0, 0.8, 3.0), (20, 3, 2, 2.0, 1.0, 1.0, 0.0), (25, 5, 12, 1.0, None, 0.6, 2.5)]:
        items = rng.normal(size=(n_items, d))
        offsets = rng.normal(scale=0.5, size=n_items) if lam_b is not None else np.zeros(n_items)
        rated = np.sort(rng.choice(n_items, size=n_rated, replace=False))
        ratings = rng.integers(1, 6, size=n_rated).astype(float)
        k = int(rng.integers(n_items))
        if lam_b is None:
            x = items[rated]
            penalty = lam * sigma2 * np.eye(d)
            query = items[k]
        else:
            x = np.hstack([items[rated], np.ones((n_rated, 1))])
            penalty = np.diag([lam * sigma2] * d + [lam_b * sigma2])
            query = np.append(items[k], 0.0)
        a = penalty + x.T @ x
        y = ratings - mu - offsets[rated]
        weights = x @ np.linalg.solve(a, query)
        w = np.linalg.solve(a, x.T @ y)
        cases.append({"d": d, "lambda": lam, "lambda_bias": lam_b, "sigma2": sigma2, "mu": mu,
                      "items": items.tolist(), "item_offsets": offsets.tolist(),
                      "rated": rated.astype(float).tolist(), "ratings": ratings.tolist(), "item": k,
                      "weights": weights.tolist(), "shares": (weights * y).tolist(),
                      "vector": w[:d].tolist(), "bias": float(w[d]) if lam_b is not None else None})
    return {"source": "numpy.linalg.solve (ridge regression as a linear smoother)", "cases": cases}


def implicit_by_rating():
    """An implicit-feedback member's solve is x = (Y' C Y + lambda I)^-1 Y' C p, formed here
    densely over every item (C = diag of all confidences, 1 where there is no interaction;
    p = 1 on interactions, 0 elsewhere). As a linear smoother the score of item k is
    sum_j (y_k' W y_j) c_j over the interactions (Hu, Koren & Volinsky 2008, section 5),
    W = (Y' C Y + lambda I)^-1 (numpy.linalg.solve)."""
    rng = np.random.default_rng(89)
    cases = []
    for n_items, d, n_rated, lam, alpha, eps in [(30, 4, 8, 1.0, 40.0, None), (50, 8, 20, 0.5, 10.0, None), (25, 3, 3, 2.0, 5.0, 0.5)]:
        items = rng.normal(scale=0.4, size=(n_items, d))
        rated = np.sort(rng.choice(n_items, size=n_rated, replace=False))
        counts = rng.integers(1, 9, size=n_rated).astype(float)
        conf_rated = 1 + alpha * (counts if eps is None else np.log1p(counts / eps))
        c = np.ones(n_items)
        c[rated] = conf_rated
        p = np.zeros(n_items)
        p[rated] = 1.0
        a = items.T @ np.diag(c) @ items + lam * np.eye(d)
        x = np.linalg.solve(a, items.T @ (c * p))
        k = int(rng.integers(n_items))
        weights = items[rated] @ np.linalg.solve(a, items[k])
        cases.append({"d": d, "lambda": lam, "alpha": alpha, "epsilon": eps,
                      "items": items.tolist(), "rated": rated.astype(float).tolist(),
                      "counts": counts.tolist(), "item": k, "weights": weights.tolist(),
                      "shares": (weights * conf_rated).tolist(), "vector": x.tolist(),
                      "score": float(items[k] @ x)})
    return {"source": "numpy.linalg.solve of the dense weighted system Y'C_uY + lambda I", "cases": cases}


def build():
    return {
        "ridge_steps.json": {
            "cases": [
                ridge_half_steps(1, 12, 9, 3, 0.7, 1.3, 0.5, True),
                ridge_half_steps(2, 15, 11, 4, 2.0, 0.5, 0.4, False),
                ridge_half_steps(3, 10, 8, 2, 0.0, 1.0, 0.6, True),
                ridge_half_steps(4, 30, 20, 10, 1.0, 1.0, 0.7, True),
            ]
        },
        "biased_steps.json": {
            "cases": [
                biased_steps(21, 14, 10, 3, 0.8, 0.3, 1.2, 0.5, 1),
                biased_steps(22, 25, 18, 4, 1.0, 1.0, 1.0, 0.4, 5),
                biased_steps(23, 20, 15, 2, 2.0, 5.0, 0.7, 0.6, 3),
            ]
        },
        "implicit_steps.json": {
            "cases": [
                implicit_steps(31, 15, 12, 3, 0.5, 40.0, None, 0.3, 1),
                implicit_steps(32, 30, 25, 5, 1.0, 10.0, None, 0.2, 4),
                implicit_steps(33, 20, 18, 4, 2.0, 5.0, 0.5, 0.25, 3),
            ]
        },
        "percentile_rank.json": percentile_rank(),
        "soft_threshold_svd.json": soft_threshold_svd(11, 40, 30, 3, 1.5),
        "subspace_angles.json": subspace_angle_cases(),
        "longley.json": longley(),
        "knn_ckdtree.json": knn_ckdtree(),
        "predictive_sd.json": predictive_sd(),
        "hypergeometric.json": hypergeometric(),
        "ndcg.json": ndcg_cases(),
        "fold_in.json": fold_in(),
        "biased_profile.json": biased_profile(),
        "by_rating.json": by_rating(),
        "implicit_by_rating.json": implicit_by_rating(),
    }


def close(a, b, path="$"):
    """Recursive comparison: numbers to 1e-9 relative (BLAS builds differ in the last bits)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), f"{path}: keys differ"
        for k in a:
            close(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), f"{path}: lengths differ"
        for k, (x, y) in enumerate(zip(a, b)):
            close(x, y, f"{path}[{k}]")
    elif isinstance(a, float) or isinstance(b, float):
        assert abs(a - b) <= 1e-9 * max(1.0, abs(a), abs(b)), f"{path}: {a} != {b}"
    else:
        assert a == b, f"{path}: {a!r} != {b!r}"


def main():
    check = "--check" in sys.argv[1:]
    fixtures = build()
    FIXTURES.mkdir(exist_ok=True)
    for name, content in fixtures.items():
        content["generated_with"] = {"numpy": np.__version__, "scipy": scipy.__version__, "scikit-learn": sklearn.__version__}
        path = FIXTURES / name
        if check:
            committed = json.loads(path.read_text())
            committed.pop("generated_with", None)
            content.pop("generated_with")
            close(content, committed, name)
            print(f"ok {name}")
        else:
            path.write_text(json.dumps(content, indent=None, separators=(",", ":")) + "\n")
            print(f"wrote {path.relative_to(HERE.parent.parent)}")


if __name__ == "__main__":
    main()
