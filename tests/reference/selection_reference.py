#!/usr/bin/env python3
r"""Reference values for plumbline's variable selection.

Everything here is computed with numpy and scipy only (scipy is imported just
to record its version; the arithmetic is numpy). The output is meant for the
Rust tests to check against an outside computation.

How to rerun
------------
From the repository root::

    python3 tests/reference/selection_reference.py

It overwrites, in ``tests/data/reference/selection/``, for each data set
``NAME`` in ``DATASETS`` (``plain``, ``structured``):

* ``NAME.csv``   the data: header row, comma delimiter, dot decimals, floats
  written with ``repr(float)`` (shortest text that round-trips to the same
  double), text written as is;
* ``NAME.json``  the request and every expected value (layout below).

The run is deterministic: each data set is drawn from
``numpy.random.default_rng(seed)`` and its fold ids from
``numpy.random.default_rng(fold_seed)``, both seeds fixed in ``DATASETS`` and
recorded in the JSON, so two runs write byte-identical files (well under a
second). The expected values are computed from the CSV as read back from
disk, so they describe exactly the stored bytes. The script stops with an
AssertionError when a self-check fails (see "Self-checks").

Versions used for the committed files: numpy 2.4.6, scipy 1.17.1, Python
3.11.7 (the ``source`` field of each JSON file records the versions actually
used). Floats in the JSON are written by ``json.dump`` from Python floats,
i.e. with ``repr``.

Request and term syntax
-----------------------
A request has ``response`` (a column name), ``candidates`` (comma-separated
terms) and ``force`` (comma-separated terms that are always in the model; the
empty string when there are none; every forced term is also a candidate).
A model is the intercept (always present) plus a set S of candidate terms.

* ``x``       the numeric column x; one design column, label ``x``
* ``x^2``     the raw square of column x; label ``x^2``
* ``a*b``     the elementwise product of columns a and b; label ``a*b``
* ``cat(g)``  treatment-coded dummies of the text column g: one 0/1 column
              per level except the reference, the reference being the first
              level in Python string sort order of the cell texts; dummies in
              sorted level order, label ``g=LEVEL``. The levels are those of
              the FULL data set, also when fitting a subset of the rows.

Design column order: ``(intercept)``, then the columns of each term of S in
the order the terms are listed in ``candidates`` (not the order of a subset's
own listing). k = number of design columns including the intercept.

Hierarchy: ``x^2`` may be in S only if ``x`` is in S; ``a*b`` only if both
``a`` and ``b`` are. A subset is VALID when it contains every forced term and
respects the hierarchy. All valid subsets are enumerated, the empty one
(intercept only) included when there are no forced terms.

Formulas
--------
n rows, y the response, X the n x k design of a subset S.

* Fit: beta = ``numpy.linalg.lstsq(X, y, rcond=None)[0]``; residuals
  r = y - X beta; RSS = sum r_i^2 (computed from r, not from lstsq's
  second output).
* TSS = sum (y_i - ybar)^2 (centred); R^2 = 1 - RSS/TSS;
  adjusted R^2 = 1 - (1 - R^2)(n - 1)/(n - k).
* log-likelihood l = -n/2 (ln(2 pi) + ln(RSS/n) + 1);
  AIC = -2 l + 2 (k + 1); BIC = -2 l + ln(n) (k + 1)
  (the error variance counts as a parameter, hence k + 1).
* sigma2_full = RSS_full/(n - k_full) of the model with ALL candidate terms;
  Mallows' Cp = RSS/sigma2_full - n + 2k (so Cp of the full model is
  exactly k_full).
* Size of a subset = number of TERMS in the model, forced terms included
  (a ``cat`` term counts once however many dummies it has). The best subset
  of a size is the valid subset of that size with the smallest RSS.
* Best overall, over all valid subsets: the largest adjusted R^2, the
  smallest AIC, the smallest BIC, the smallest Cp.
* ``margin``: the distance from the winner to the runner-up of the same
  ranking (second smallest RSS of that size minus the smallest, etc.; always
  >= 0; null when the winner has no competitor). The script asserts every
  margin is > 1e-6 relative, so no winner depends on rounding.

Cross-validation with fixed folds (5 folds)
    ``folds[i]`` in {0..4} is the fold of row i (0-based, CSV row order):
    perm = default_rng(fold_seed).permutation(n) and folds[perm[j]] = j mod 5,
    so fold sizes differ by at most one. For each fold f the model is fitted
    by lstsq on the rows with folds != f and predicts the rows with
    folds == f. The dummy columns use the levels of the full data, so a
    training set without some non-reference level has an all-zero dummy
    column; lstsq's minimum-norm solution gives that column the coefficient
    0 (an exactly zero column has a zero singular value, which rcond=None
    discards), and the other coefficients are those of the fit without that
    column. Pooled over all n held-out predictions yhat_i:
    rmse = sqrt(mean (y_i - yhat_i)^2), mae = mean |y_i - yhat_i|.
    Computed for the best model of each criterion and the full model
    (deduplicated; ``for`` lists which of ``adj_r2``, ``aic``, ``bic``,
    ``cp``, ``full`` the model is).

PRESS (full model, full data)
    h_ii = diagonal of the hat matrix = row sums of Q^2 with X = QR
    (``numpy.linalg.qr``, reduced); e = residuals of the full fit;
    PRESS = sum (e_i/(1 - h_ii))^2; loo_rmse = sqrt(PRESS/n).

JSON layout (NAME.json)
-----------------------
``name``, ``description``, ``source``, ``seed``, ``fold_seed``,
``request`` {response, candidates, force}, ``n``, ``tss``,
``columns_full`` (labels of the full design in order), ``k_full``,
``rss_full``, ``sigma2_full``, ``all_subsets_count`` (number of valid
subsets), ``by_size`` [{size, count (valid subsets of that size), terms, k,
rss, margin}] for every size that occurs (size 0 = the intercept-only model
when nothing is forced), ``best`` {adj_r2, aic, bic, cp: {terms, k, value,
margin}}, ``subsets`` (every valid subset, sorted by size, then by the
candidate positions of its terms lexicographically: {terms, size, k, rss,
r2, adj_r2, log_likelihood, aic, bic, cp}), ``folds`` (n fold ids),
``cv`` [{terms, k, for, rmse, mae, zero_columns ([{fold, column}]: the
design columns that are all zero in that fold's training rows), predictions
(n held-out predictions in row order)}], ``press``, ``loo_rmse``. Every
``terms`` list is in candidate order and includes the forced terms, spelled
exactly as in ``candidates``.

Data sets
---------
``plain`` (seed 7101, fold_seed 7102), n = 80: x1..x8 jointly normal with
correlation 0.3 + 0.7 * 0.5^|i-j| (0.3 to 0.65) and different means and
scales; y = 3 + effects of x1, x3, x5 (standardised sizes 0.8, -0.6, 0.5)
and a weak x7 (0.25), plus N(0, 1) noise. Candidates x1, ..., x8, nothing
forced: 2^8 = 256 valid subsets.

``structured`` (seed 7203, fold_seed 7202), n = 120: a ~ U(0, 3),
b ~ N(1, 0.8^2), c = 0.4 (a - 1.5) + N(0, 1), d ~ N(5, 2^2), text column g;
y = 2 + 1.2 a - 0.4 a^2 + 0.3 b + 0.35 a b + 0.25 d + g effect + N(0, 1)
with effects high 0, low -0.7, mid +1.0. Candidates
"a, a^2, b, a*b, c, d, cat(g)", forced "d". Levels sort as high < low < mid,
so the reference is ``high`` and the dummies are ``g=low``, ``g=mid``.
``mid`` is deliberately rare: it is given to 5 rows that all lie in fold 3
(the fold ids are drawn first, then 5 rows of fold 3 are picked with the data
rng; the other rows get high or low with probability 1/2 each), so in
cross-validation the training set of fold 3 has no ``mid`` row and its
``g=mid`` column is all zero: that fold predicts its ``mid`` rows with the
``g=mid`` coefficient 0. Valid subsets: d always; of {a, a^2, b, a*b} the 8
hierarchical sets ({}, {b}, {a}, {a, a^2}, {a, b}, {a, a^2, b}, {a, b, a*b},
{a, a^2, b, a*b}); c and cat(g) free: 8 * 2 * 2 = 32. The data seed was
picked among 7201..7214 (the first, 7201, made the full model best by three
of the four criteria) so that the criteria disagree: with 7203 the largest
adjusted R^2 is the full model, AIC and Cp pick the true model
(a, a^2, b, a*b, d, cat(g)) and BIC drops a*b while keeping a^2. The
``plain`` seed is the first one tried.

Self-checks
-----------
* the number of valid subsets equals a brute-force filter of all 2^m term
  sets and the hand counts above (256, 32);
* every subset design has full column rank k, and lstsq's RSS agrees with
  RSS from a QR solve to 1e-10 relative;
* Cp of the full model equals k_full (1e-9); adjusted R^2 agrees with
  1 - (RSS/(n - k))/(TSS/(n - 1));
* every ``margin`` is > 1e-6 relative to max(1, |winner|);
* the best subset of each size has RSS no larger than any valid subset of
  that size (recomputed by a second pass);
* PRESS agrees with n explicit leave-one-out refits to 1e-9 relative (and
  each leave-one-out residual to 1e-8 relative, or 1e-11 absolute for
  residuals below 1e-3); h sums to k_full; max h_ii < 0.9;
* in ``structured``, fold 3's training rows contain no ``mid`` and every
  other fold's training rows contain all levels; for every cross-validated
  model with ``cat(g)`` the only all-zero training column is ``g=mid`` in
  fold 3 (none elsewhere, none in ``plain``), its lstsq coefficient is 0
  (<= 1e-12 of the largest) and the other coefficients equal those of the
  fit without that column (1e-10); the remaining training design has full
  column rank in every fold.
"""

import csv
import itertools
import json
import math
import os
import sys

import numpy as np
import scipy

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
OUT_DIR = os.path.join(REPO, "tests", "data", "reference", "selection")
SOURCE = "numpy %s / scipy %s / Python %s via tests/reference/selection_reference.py" % (
    np.__version__,
    scipy.__version__,
    "%d.%d.%d" % sys.version_info[:3],
)
N_FOLDS = 5
MARGIN_TOL = 1e-6


# --------------------------------------------------------------------------
# CSV writing and reading
# --------------------------------------------------------------------------

def format_cell(value):
    if isinstance(value, str):
        return value
    value = float(value)
    if not math.isfinite(value):
        raise ValueError("non-finite value in data")
    return repr(value)


def write_csv(path, columns):
    """columns: list of (name, list of values)."""
    names = [c[0] for c in columns]
    n = len(columns[0][1])
    for name, values in columns:
        assert len(values) == n, name
    with open(path, "w", newline="") as fh:
        writer = csv.writer(fh, lineterminator="\n")
        writer.writerow(names)
        for i in range(n):
            writer.writerow([format_cell(c[1][i]) for c in columns])


def read_csv(path):
    """Return dict name -> list of raw cell strings."""
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    header = rows[0]
    data = {name: [] for name in header}
    for row in rows[1:]:
        assert len(row) == len(header), "ragged row in %s" % path
        for name, cell in zip(header, row):
            data[name].append(cell)
    return data


# --------------------------------------------------------------------------
# Terms and designs
# --------------------------------------------------------------------------

def split_terms(text):
    return [t.strip() for t in text.split(",") if t.strip()]


def term_parents(term):
    """Terms that must be in the model for `term` to be allowed."""
    if term.startswith("cat("):
        return []
    if "^" in term:
        return [term.split("^")[0]]
    if "*" in term:
        return term.split("*")
    return []


def term_columns(term, data):
    """Return (labels, list of float arrays) for one term (full data)."""
    if term.startswith("cat(") and term.endswith(")"):
        g = term[4:-1]
        cells = data[g]
        levels = sorted(set(cells))
        labels, cols = [], []
        for lev in levels[1:]:
            labels.append("%s=%s" % (g, lev))
            cols.append(np.array([1.0 if c == lev else 0.0 for c in cells]))
        return labels, cols
    if "^" in term:
        x, p = term.split("^")
        assert p == "2"
        v = np.array([float(c) for c in data[x]])
        return [term], [v * v]
    if "*" in term:
        a, b = term.split("*")
        va = np.array([float(c) for c in data[a]])
        vb = np.array([float(c) for c in data[b]])
        return [term], [va * vb]
    return [term], [np.array([float(c) for c in data[term]])]


def build_term_table(candidates, data):
    return {t: term_columns(t, data) for t in candidates}


def design(subset, candidates, table, n):
    """subset: set of terms. Columns in candidate order after the intercept."""
    labels = ["(intercept)"]
    cols = [np.ones(n)]
    for t in candidates:
        if t in subset:
            lab, cs = table[t]
            labels.extend(lab)
            cols.extend(cs)
    return labels, np.column_stack(cols)


def lstsq_fit(X, y):
    beta = np.linalg.lstsq(X, y, rcond=None)[0]
    r = y - X @ beta
    return beta, r, float(r @ r)


# --------------------------------------------------------------------------
# Subset enumeration
# --------------------------------------------------------------------------

def is_valid(subset, forced):
    if not set(forced) <= subset:
        return False
    return all(set(term_parents(t)) <= subset for t in subset)


def enumerate_valid(candidates, forced):
    """Constructive enumeration over the free terms; returns sorted lists."""
    free = [t for t in candidates if t not in forced]
    out = []
    for mask in range(1 << len(free)):
        chosen = set(forced) | {free[j] for j in range(len(free)) if mask >> j & 1}
        if is_valid(chosen, forced):
            out.append(chosen)
    pos = {t: i for i, t in enumerate(candidates)}
    out.sort(key=lambda s: (len(s), sorted(pos[t] for t in s)))
    return [[t for t in candidates if t in s] for s in out]


def brute_force_count(candidates, forced):
    """Independent count: every subset of all candidates, filtered."""
    count = 0
    for r in range(len(candidates) + 1):
        for combo in itertools.combinations(candidates, r):
            s = set(combo)
            ok = all(f in s for f in forced)
            for t in s:
                for p in term_parents(t):
                    ok = ok and p in s
            count += ok
    return count


# --------------------------------------------------------------------------
# Criteria
# --------------------------------------------------------------------------

def criteria(rss, n, k, tss, sigma2_full):
    r2 = 1.0 - rss / tss
    adj = 1.0 - (1.0 - r2) * (n - 1) / (n - k)
    ll = -n / 2.0 * (math.log(2.0 * math.pi) + math.log(rss / n) + 1.0)
    aic = -2.0 * ll + 2.0 * (k + 1)
    bic = -2.0 * ll + math.log(n) * (k + 1)
    cp = rss / sigma2_full - n + 2.0 * k
    return {"r2": r2, "adj_r2": adj, "log_likelihood": ll, "aic": aic, "bic": bic, "cp": cp}


def pick(items, key, maximise):
    """Return (winner, margin) of items ranked by key."""
    sign = -1.0 if maximise else 1.0
    ranked = sorted(items, key=lambda it: sign * it[key])
    win = ranked[0]
    if len(ranked) == 1:
        return win, None
    margin = abs(ranked[1][key] - win[key])
    assert margin > MARGIN_TOL * max(1.0, abs(win[key])), (key, win["terms"], margin)
    return win, margin


# --------------------------------------------------------------------------
# Cross-validation and PRESS
# --------------------------------------------------------------------------

def cv_predictions(X, y, folds, labels):
    """Held-out predictions and the list of all-zero training columns."""
    pred = np.empty_like(y)
    empty = []
    for f in range(N_FOLDS):
        test = folds == f
        train = ~test
        Xt = X[train]
        beta = np.linalg.lstsq(Xt, y[train], rcond=None)[0]
        pred[test] = X[test] @ beta
        zero = np.all(Xt == 0.0, axis=0)
        if zero.any():
            # minimum norm: zero coefficient, rest = fit without those columns
            assert np.all(np.abs(beta[zero]) <= 1e-12 * np.max(np.abs(beta))), beta[zero]
            keep = ~zero
            beta_k = np.linalg.lstsq(Xt[:, keep], y[train], rcond=None)[0]
            assert np.allclose(beta[keep], beta_k, rtol=1e-10, atol=1e-12)
            empty.extend({"fold": f, "column": labels[j]} for j in np.flatnonzero(zero))
        assert np.linalg.matrix_rank(Xt[:, ~zero]) == int((~zero).sum())
    return pred, empty


def press(X, y):
    n, k = X.shape
    _, e, _ = lstsq_fit(X, y)
    q, _ = np.linalg.qr(X, mode="reduced")
    h = np.sum(q * q, axis=1)
    assert abs(h.sum() - k) < 1e-9 * k
    assert h.max() < 0.9, h.max()
    loo_res = e / (1.0 - h)
    value = float(np.sum(loo_res ** 2))
    # explicit leave-one-out refits
    explicit = np.empty(n)
    for i in range(n):
        keep = np.arange(n) != i
        beta = np.linalg.lstsq(X[keep], y[keep], rcond=None)[0]
        explicit[i] = y[i] - X[i] @ beta
    assert np.all(np.abs(explicit - loo_res) <= 1e-8 * np.maximum(np.abs(loo_res), 1e-3)), \
        np.max(np.abs(explicit - loo_res))
    value_explicit = float(np.sum(explicit ** 2))
    assert abs(value - value_explicit) <= 1e-9 * value, (value, value_explicit)
    return value


# --------------------------------------------------------------------------
# Data sets
# --------------------------------------------------------------------------

def make_folds(n, fold_seed):
    perm = np.random.default_rng(fold_seed).permutation(n)
    folds = np.empty(n, dtype=int)
    folds[perm] = np.arange(n) % N_FOLDS
    return folds


def gen_plain(rng, folds):
    n, m = 80, 8
    idx = np.arange(m)
    corr = 0.3 + 0.7 * 0.5 ** np.abs(idx[:, None] - idx[None, :])
    z = rng.standard_normal((n, m)) @ np.linalg.cholesky(corr).T
    mu = np.array([10.0, 5.0, 0.0, 2.0, 50.0, 1.0, 3.0, 20.0])
    sd = np.array([2.0, 1.0, 1.0, 0.5, 10.0, 1.0, 2.0, 5.0])
    x = mu + sd * z
    std_effect = np.array([0.8, 0.0, -0.6, 0.0, 0.5, 0.0, 0.25, 0.0])
    beta = std_effect / sd
    y = 3.0 + (x - mu) @ beta + rng.standard_normal(n)
    cols = [("y", list(y))]
    cols += [("x%d" % (j + 1), list(x[:, j])) for j in range(m)]
    return cols


def gen_structured(rng, folds):
    n = len(folds)
    a = rng.uniform(0.0, 3.0, n)
    b = rng.normal(1.0, 0.8, n)
    c = 0.4 * (a - 1.5) + rng.standard_normal(n)
    d = rng.normal(5.0, 2.0, n)
    g = np.where(rng.uniform(size=n) < 0.5, "high", "low").astype(object)
    mid_rows = rng.choice(np.flatnonzero(folds == 3), size=5, replace=False)
    g[mid_rows] = "mid"
    effect = {"high": 0.0, "low": -0.7, "mid": 1.0}
    y = (2.0 + 1.2 * a - 0.4 * a * a + 0.3 * b + 0.35 * a * b + 0.25 * d
         + np.array([effect[v] for v in g]) + rng.standard_normal(n))
    return [("y", list(y)), ("a", list(a)), ("b", list(b)), ("c", list(c)),
            ("d", list(d)), ("g", [str(v) for v in g])]


DATASETS = [
    {
        "name": "plain",
        "description": "n = 80, x1..x8 moderately correlated (0.3 to 0.65), y from x1, x3, x5 and a weak x7; nothing forced",
        "seed": 7101,
        "fold_seed": 7102,
        "n": 80,
        "generator": gen_plain,
        "request": {"response": "y", "candidates": "x1, x2, x3, x4, x5, x6, x7, x8", "force": ""},
        "expected_count": 256,
    },
    {
        "name": "structured",
        "description": "n = 120, curved a, a*b interaction, text g (reference high; rare level mid only in fold 3), d forced",
        "seed": 7203,
        "fold_seed": 7202,
        "n": 120,
        "generator": gen_structured,
        "request": {"response": "y", "candidates": "a, a^2, b, a*b, c, d, cat(g)", "force": "d"},
        "expected_count": 32,
    },
]


# --------------------------------------------------------------------------
# Main computation
# --------------------------------------------------------------------------

def run(ds):
    name = ds["name"]
    folds = make_folds(ds["n"], ds["fold_seed"])
    rng = np.random.default_rng(ds["seed"])
    columns = ds["generator"](rng, folds)
    csv_path = os.path.join(OUT_DIR, name + ".csv")
    write_csv(csv_path, columns)
    data = read_csv(csv_path)

    req = ds["request"]
    candidates = split_terms(req["candidates"])
    forced = split_terms(req["force"])
    assert set(forced) <= set(candidates)
    for t in candidates:
        assert set(term_parents(t)) <= set(candidates), t
    y = np.array([float(c) for c in data[req["response"]]])
    n = len(y)
    assert n == ds["n"]
    table = build_term_table(candidates, data)
    tss = float(np.sum((y - y.mean()) ** 2))

    # full model
    labels_full, X_full = design(set(candidates), candidates, table, n)
    k_full = X_full.shape[1]
    assert np.linalg.matrix_rank(X_full) == k_full
    _, _, rss_full = lstsq_fit(X_full, y)
    sigma2_full = rss_full / (n - k_full)

    # all valid subsets
    subsets_terms = enumerate_valid(candidates, forced)
    count = len(subsets_terms)
    assert count == brute_force_count(candidates, forced) == ds["expected_count"], count
    subsets = []
    for terms in subsets_terms:
        _, X = design(set(terms), candidates, table, n)
        k = X.shape[1]
        assert np.linalg.matrix_rank(X) == k, terms
        _, _, rss = lstsq_fit(X, y)
        q, rr = np.linalg.qr(X)
        r_qr = y - X @ np.linalg.solve(rr, q.T @ y)
        rss_qr = float(r_qr @ r_qr)
        assert abs(rss - rss_qr) <= 1e-10 * rss, (terms, rss, rss_qr)
        crit = criteria(rss, n, k, tss, sigma2_full)
        adj_alt = 1.0 - (rss / (n - k)) / (tss / (n - 1))
        assert abs(crit["adj_r2"] - adj_alt) <= 1e-12, terms
        entry = {"terms": terms, "size": len(terms), "k": k, "rss": rss}
        entry.update(crit)
        subsets.append(entry)
    full_entry = [s for s in subsets if len(s["terms"]) == len(candidates)]
    assert len(full_entry) == 1
    assert abs(full_entry[0]["cp"] - k_full) <= 1e-9 * k_full

    # best by size
    by_size = []
    for size in sorted({s["size"] for s in subsets}):
        group = [s for s in subsets if s["size"] == size]
        win, margin = pick(group, "rss", maximise=False)
        assert all(win["rss"] <= s["rss"] for s in group)
        by_size.append({"size": size, "count": len(group), "terms": win["terms"],
                        "k": win["k"], "rss": win["rss"], "margin": margin})

    # best overall
    best = {}
    for key, maximise in (("adj_r2", True), ("aic", False), ("bic", False), ("cp", False)):
        win, margin = pick(subsets, key, maximise)
        best[key] = {"terms": win["terms"], "k": win["k"], "value": win[key], "margin": margin}

    # cross-validation
    if name == "structured":
        g = np.array(data["g"])
        for f in range(N_FOLDS):
            train_levels = set(g[folds != f])
            if f == 3:
                assert train_levels == {"high", "low"}, train_levels
            else:
                assert train_levels == {"high", "low", "mid"}, (f, train_levels)
    cv_models = []
    for key in ("adj_r2", "aic", "bic", "cp", "full"):
        terms = candidates if key == "full" else best[key]["terms"]
        for m in cv_models:
            if m["terms"] == terms:
                m["for"].append(key)
                break
        else:
            cv_models.append({"terms": list(terms), "for": [key]})
    cv = []
    for m in cv_models:
        labels, X = design(set(m["terms"]), candidates, table, n)
        pred, empty = cv_predictions(X, y, folds, labels)
        if name == "structured" and "cat(g)" in m["terms"]:
            assert empty == [{"fold": 3, "column": "g=mid"}], empty
        else:
            assert empty == [], empty
        err = y - pred
        cv.append({
            "terms": m["terms"],
            "k": X.shape[1],
            "for": m["for"],
            "rmse": float(math.sqrt(np.mean(err ** 2))),
            "mae": float(np.mean(np.abs(err))),
            "zero_columns": empty,
            "predictions": [float(v) for v in pred],
        })

    press_value = press(X_full, y)

    doc = {
        "name": name,
        "description": ds["description"],
        "source": SOURCE,
        "seed": ds["seed"],
        "fold_seed": ds["fold_seed"],
        "request": req,
        "n": n,
        "tss": tss,
        "columns_full": labels_full,
        "k_full": k_full,
        "rss_full": rss_full,
        "sigma2_full": sigma2_full,
        "all_subsets_count": count,
        "by_size": by_size,
        "best": best,
        "subsets": [{key: s[key] for key in ("terms", "size", "k", "rss", "r2", "adj_r2",
                                            "log_likelihood", "aic", "bic", "cp")}
                    for s in subsets],
        "folds": [int(f) for f in folds],
        "cv": cv,
        "press": press_value,
        "loo_rmse": math.sqrt(press_value / n),
    }
    with open(os.path.join(OUT_DIR, name + ".json"), "w") as fh:
        json.dump(doc, fh, indent=2, allow_nan=False)
        fh.write("\n")
    return doc


def summary(doc):
    print("%s: n=%d k_full=%d subsets=%d R2_full=%.3f" % (
        doc["name"], doc["n"], doc["k_full"], doc["all_subsets_count"],
        1 - doc["rss_full"] / doc["tss"]))
    for b in doc["by_size"]:
        print("  size %d: %-40s rss=%.4f margin=%s" % (b["size"], ", ".join(b["terms"]), b["rss"],
                                                       "%.4g" % b["margin"] if b["margin"] is not None else "-"))
    for key, b in doc["best"].items():
        print("  best %-6s: %-40s value=%.5f margin=%.4g" % (key, ", ".join(b["terms"]), b["value"], b["margin"]))
    for c in doc["cv"]:
        print("  cv %-20s: %-40s rmse=%.4f mae=%.4f" % ("/".join(c["for"]), ", ".join(c["terms"]), c["rmse"], c["mae"]))
    print("  press=%.5f loo_rmse=%.5f" % (doc["press"], doc["loo_rmse"]))


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    for ds in DATASETS:
        summary(run(ds))
    print("wrote %d data sets to %s (%s)" % (len(DATASETS), os.path.relpath(OUT_DIR, REPO), SOURCE))
    return 0


if __name__ == "__main__":
    sys.exit(main())
