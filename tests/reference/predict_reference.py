#!/usr/bin/env python3
r"""Reference values for plumbline's predictions with intervals.

Everything here is computed with numpy and scipy only. The output is meant
for the Rust tests to check against an outside computation.

How to rerun
------------
From the repository root::

    python3 tests/reference/predict_reference.py

It overwrites, in ``tests/data/reference/predict/``, for each case ``NAME``
in ``CASES`` (``linear``, ``logresp``, ``poly``):

* ``NAME_train.csv``  the training rows;
* ``NAME_new.csv``    the rows to predict, with the same columns as the
  training file except that the response is empty (``linear``, ``poly``)
  or missing altogether (``logresp``);
* ``NAME.json``       the request and every expected value (layout below).

CSV format: header row, comma delimiter, dot decimals, floats written with
``repr(float)`` (the shortest text that reads back as the same double), text
written as is, an empty field for an empty cell. Every training row is
complete, so all of them are used.

The run is deterministic: each training set is drawn from
``numpy.random.default_rng(seed)`` with the seed fixed in ``CASES`` and
recorded in the JSON; the new rows are fixed numbers (a few are copied from
the training file, see "Cases"). Two runs write byte-identical files (well
under a second). The expected values are computed from the CSVs as read back
from disk, so they describe exactly the stored bytes. The script stops with
an AssertionError when a self-check fails (see "Self-checks").

Versions used for the committed files: numpy 2.4.6, scipy 1.17.1, Python
3.11.7 (the ``source`` field of each JSON file records the versions actually
used). Floats in the JSON are written by ``json.dump`` from Python floats,
i.e. with ``repr``, so at full precision.

Request and term syntax
-----------------------
A request has ``response`` (a column name ``y`` or ``log(y)``), ``terms``
(comma-separated) and ``level`` (the interval level, e.g. 0.95). The model
always has an intercept.

* ``x``       the numeric column x; one design column, label ``x``
* ``log(x)``  the natural log of column x; label ``log(x)``
* ``x^2``     the raw (not orthogonalised) square of column x; label ``x^2``
* ``cat(g)``  treatment-coded dummies of the text column g: one 0/1 column
              per level except the reference, the reference being the first
              level in Python string sort order of the cell texts of the
              training rows; dummies in sorted level order, label
              ``g=LEVEL``. A new row gets 1 in the column of its level and 0
              elsewhere (all 0 for the reference level).

Design column order: ``(intercept)``, then the columns of each term in the
order given in ``terms``. p = number of design columns.

Formulas
--------
Training: n rows, X the n x p design, y the response on the model's scale
(``log(y)`` when the response is ``log(y)``).

* beta = ``numpy.linalg.lstsq(X, y, rcond=None)[0]``; e = y - X beta;
  RSS = sum e_i^2; sigma = sqrt(RSS/(n - p)) (``sigma`` in the JSON is this
  square root, sigma-hat, not sigma^2).
* C = (X^T X)^-1. It is used through X = QR (``numpy.linalg.qr``, reduced):
  x^T C x = ||R^-T x||^2, which is the same number computed without forming
  the inverse; the script asserts that it agrees with the explicit
  ``numpy.linalg.inv(X.T @ X)`` form.
* training leverages h_ii = row sums of Q^2 (the diagonal of the hat matrix
  X C X^T); max_training_leverage = max_i h_ii.
* t_quantile = ``scipy.stats.t.ppf(1 - (1 - level)/2, n - p)``.

For each new row, with design row x0 (built with the training levels):

* estimate  yhat = x0^T beta
* leverage  h0 = x0^T C x0
* confidence interval for the mean:  yhat -/+ t sigma sqrt(h0)
  (``ci_low``, ``ci_high``)
* prediction interval:               yhat -/+ t sigma sqrt(1 + h0)
  (``pi_low``, ``pi_high``)
* extrapolation = true when a numeric input column used by the model lies
  outside the training range, i.e. value < min or value > max over the
  training rows (strictly: a value equal to the min or the max is inside),
  OR h0 > max_training_leverage. The numeric input columns are the columns
  named inside the numeric terms: ``x`` for ``x``, ``log(x)`` and ``x^2``
  (the range is that of the raw column x); ``cat`` columns have no range.
  ``training_ranges`` in the JSON lists [min, max] of each of them.

Response ``log(y)``: the intervals above are on the log scale; the
``original`` object gives them on the scale of y, with Duan's smearing
estimate (Duan 1983, "Smearing estimate: a nonparametric retransformation
method", JASA 78, 605-610):

* smearing S = (1/n) sum_i exp(e_i), e_i the log-scale training residuals
* original.estimate = exp(yhat) S            (estimated mean of y)
* original.ci_low, ci_high = exp(ci_low) S, exp(ci_high) S
  (interval for the mean of y)
* original.pi_low, pi_high = exp(pi_low), exp(pi_high), WITHOUT S: the
  prediction bounds are quantiles of log(y), and exp of a quantile of log(y)
  is the same quantile of y.
For a response that is not logged, ``smearing`` is null and every
``original`` is null.

JSON layout (NAME.json)
-----------------------
``name``, ``description``, ``source``, ``seed``,
``request`` {response, terms, level},
``training_csv``, ``new_csv`` (file names, in the same folder as the JSON),
``n``, ``p``, ``columns`` (design labels in order), ``coefficients``
(beta, same order), ``sigma``, ``t_quantile``, ``max_training_leverage``,
``training_ranges`` {column: [min, max]}, ``smearing`` (S or null),
``predictions``: one object per row of the new-rows CSV, in file order:
{estimate, ci_low, ci_high, pi_low, pi_high, leverage, extrapolation,
original: {estimate, ci_low, ci_high, pi_low, pi_high} or null}.

Cases
-----
``linear`` (seed 8101), n = 50: x1 ~ N(10, 3^2), x2 ~ U(0, 5),
y = 2 + 0.8 x1 - 1.5 x2 + N(0, 1.5^2). Response ``y``, terms ``x1, x2``,
level 0.95. Six new rows (x1, x2):
  1. (10.0, 2.5)            central;
  2. a copy of the cell texts of the training row with the smallest x1: x1
     equals the training min exactly, so it is inside the range; h0 equals
     that row's training leverage (about 0.112), which is not the largest
     one (about 0.140, the row with the largest x1), so the row is not
     flagged;
  3. (3.5, 2.5)             x1 just below the training min (3.82...):
                            flagged by the range alone (h0 about 0.121 is
                            below max_training_leverage, about 0.140);
  4. (21.5, 1.0)            x1 far above the training max (17.58...):
                            flagged by the range and by h0 (about 0.29);
  5. (12.0, 0.3)            inside, near the low end of x2;
  6. (7.5, 4.0)             inside.

``logresp`` (seed 8201), n = 60: a ~ lognormal(0.7, 0.6^2), b ~ N(0, 1),
g drawn from the text levels shop, farm, mill (first row: ``mill``), which
sort as farm < mill < shop, so the reference is ``farm`` and the dummies
are ``g=mill``, ``g=shop``; log(y) = 0.5 + 0.6 log(a) + 0.4 b + (farm 0,
mill 0.3, shop -0.25) + N(0, 0.35^2). Response ``log(y)``, terms
``log(a), b, cat(g)``, level 0.9. The new-rows CSV has no ``y`` column.
Five new rows (a, b, g):
  1. (2.0, 0.0, farm)       reference level;
  2. (1.0, 1.0, mill);
  3. (5.0, -0.5, shop);
  4. (2.5, 2.6, mill)       b just above the training max (2.52...):
                            flagged by the range alone (h0 about 0.177,
                            max_training_leverage about 0.210);
  5. (3.0, 0.5, shop).

``poly`` (seed 8301), n = 36: x has 30 values ~ U(0, 2) and 6 ~ U(9, 10)
(shuffled), y = 1 + 0.9 x - 0.05 x^2 + N(0, 0.5^2). Response ``y``, terms
``x, x^2``, level 0.95. Five new rows (x):
  1. 1.0                    inside the dense part;
  2. 5.3                    in the gap between the two groups: inside the
     range of x (1.97... < 5.3 < 9.05... are the neighbouring training
     values) but h0 (about 0.41, near the largest value in the gap) is more
     than twice max_training_leverage (about 0.19), so it is flagged by
     leverage alone;
  3. 9.5                    inside the upper group;
  4. 11.0                   above the training max (9.61...): flagged by
                            the range and by h0 (about 0.63);
  5. the cell text of the training min of x, exactly: inside (boundary), not
     flagged.
A point inside the range with h0 above every training leverage IS possible
in one dimension with a quadratic when the x values leave a wide gap:
h(x) = v(x)^T C v(x), v(x) = (1, x, x^2), is a quartic in x, and with x
spread evenly over its range its largest value on [min, max] is typically
at the ends, i.e. at training points (the script checks this for one
comparison sample, 40 values from U(0, 10) drawn with seed 8399: on a
2001-point grid h never exceeds that sample's largest leverage). With
most x in [0, 2] and a few in [9, 10] the curvature is pinned down by the
lower group mostly, and predictions in the gap have a large variance. The
script asserts that, for the stored data, the gap point is inside the range
and above the largest training leverage; so no second, two-predictor case
was needed.

Self-checks
-----------
* the design has full column rank p; beta from lstsq agrees with a QR solve
  to 1e-10 relative; the training leverages sum to p (1e-10);
* every h0 from the QR form agrees with x0^T inv(X^T X) x0 to 1e-9
  relative, and with the (0, 0) element of the inverse for the design
  re-centred at x0 (columns X_j - x0_j after the intercept), whose intercept
  is yhat (1e-9);
* the prediction interval agrees with an augmented fit: append the new row
  with response 0 and an extra column that is 1 in that row only; the
  coefficient of that column is -yhat and its standard error is
  sigma sqrt(1 + h0) (1e-9 relative);
* t_quantile: ``scipy.stats.t.cdf`` returns 1 - (1 - level)/2 (1e-12) and
  ``scipy.stats.t.isf((1 - level)/2, n - p)`` agrees (1e-12 relative);
* smearing: S recomputed with plain Python loops (residuals from explicit
  sums of products, then math.exp and a running sum) agrees with the numpy
  value to 1e-12 relative; every original-scale value is recomputed the
  same way;
* ci_low < estimate < ci_high and pi_low < ci_low, ci_high < pi_high on both
  scales;
* no extrapolation flag hinges on rounding: every h0 differs from
  max_training_leverage by more than 1e-6 relative; the flags equal the
  intended ones listed above, with the intended reason (range alone,
  leverage alone, or both);
  the copied rows reproduce the training leverage of their source row
  (1e-10).
"""

import csv
import json
import math
import os
import sys

import numpy as np
import scipy
import scipy.stats

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
OUT_DIR = os.path.join(REPO, "tests", "data", "reference", "predict")
SOURCE = "numpy %s / scipy %s / Python %s via tests/reference/predict_reference.py" % (
    np.__version__,
    scipy.__version__,
    "%d.%d.%d" % sys.version_info[:3],
)
LEVERAGE_MARGIN = 1e-6


# --------------------------------------------------------------------------
# CSV writing and reading
# --------------------------------------------------------------------------

def format_cell(value):
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    value = float(value)
    if not math.isfinite(value):
        raise ValueError("non-finite value in data")
    return repr(value)


def write_csv(path, columns):
    """columns: list of (name, list of values); None = empty cell."""
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
    """Return (header, dict name -> list of raw cell strings)."""
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    header = rows[0]
    data = {name: [] for name in header}
    for row in rows[1:]:
        assert len(row) == len(header), "ragged row in %s" % path
        for name, cell in zip(header, row):
            data[name].append(cell)
    return header, data


# --------------------------------------------------------------------------
# Terms and designs
# --------------------------------------------------------------------------

def split_terms(text):
    return [t.strip() for t in text.split(",") if t.strip()]


def term_input(term):
    """(kind, column) of a term: kind in num, log, sq, cat."""
    if term.startswith("cat(") and term.endswith(")"):
        return "cat", term[4:-1]
    if term.startswith("log(") and term.endswith(")"):
        return "log", term[4:-1]
    if term.endswith("^2"):
        return "sq", term[:-2]
    assert all(ch not in term for ch in "()^*,"), term
    return "num", term


def response_values(response, data):
    if response.startswith("log(") and response.endswith(")"):
        v = np.array([float(c) for c in data[response[4:-1]]])
        assert np.all(v > 0)
        return np.log(v), True
    return np.array([float(c) for c in data[response]]), False


class Design:
    """Design builder; the levels of each cat term come from the training rows."""

    def __init__(self, terms, train):
        self.terms = terms
        self.levels = {}
        self.labels = ["(intercept)"]
        self.numeric_inputs = []
        for t in terms:
            kind, col = term_input(t)
            if kind == "cat":
                levels = sorted(set(train[col]))
                assert len(levels) >= 2
                self.levels[t] = levels
                self.labels.extend("%s=%s" % (col, lev) for lev in levels[1:])
            else:
                self.labels.append(t)
                if col not in self.numeric_inputs:
                    self.numeric_inputs.append(col)

    def matrix(self, data):
        n = len(next(iter(data.values())))
        cols = [np.ones(n)]
        for t in self.terms:
            kind, col = term_input(t)
            if kind == "cat":
                cells = data[col]
                levels = self.levels[t]
                assert set(cells) <= set(levels), "unknown level in new rows"
                for lev in levels[1:]:
                    cols.append(np.array([1.0 if c == lev else 0.0 for c in cells]))
                continue
            v = np.array([float(c) for c in data[col]])
            if kind == "num":
                cols.append(v)
            elif kind == "log":
                assert np.all(v > 0)
                cols.append(np.log(v))
            else:
                cols.append(v * v)
        return np.column_stack(cols)


# --------------------------------------------------------------------------
# Fit and prediction
# --------------------------------------------------------------------------

def rel_close(a, b, tol):
    return abs(a - b) <= tol * max(abs(a), abs(b), 1e-300)


def fit(X, y):
    n, p = X.shape
    assert np.linalg.matrix_rank(X) == p
    beta = np.linalg.lstsq(X, y, rcond=None)[0]
    q, r = np.linalg.qr(X, mode="reduced")
    beta_qr = np.linalg.solve(r, q.T @ y)
    assert np.allclose(beta, beta_qr, rtol=1e-10, atol=1e-12 * np.max(np.abs(beta)))
    e = y - X @ beta
    rss = float(e @ e)
    sigma = math.sqrt(rss / (n - p))
    h = np.sum(q * q, axis=1)
    assert abs(h.sum() - p) <= 1e-10 * p
    return beta, e, sigma, r, h


def quad_form_qr(r, x0):
    z = np.linalg.solve(r.T, x0)
    return float(z @ z)


def check_h0(X, x0, h0, cinv):
    explicit = float(x0 @ cinv @ x0)
    assert rel_close(h0, explicit, 1e-9), (h0, explicit)
    # re-centred design: intercept of the fit equals x0^T beta, var = sigma^2 h0
    Xc = X - x0[None, :]
    Xc[:, 0] = 1.0
    h_centred = float(np.linalg.inv(Xc.T @ Xc)[0, 0])
    assert rel_close(h0, h_centred, 1e-9), (h0, h_centred)


def check_augmented(X, y, x0, yhat, sigma, h0):
    """Dummy-row fit: coefficient -yhat, standard error sigma sqrt(1 + h0)."""
    n, p = X.shape
    Xa = np.zeros((n + 1, p + 1))
    Xa[:n, :p] = X
    Xa[n, :p] = x0
    Xa[n, p] = 1.0
    ya = np.append(y, 0.0)
    ba = np.linalg.lstsq(Xa, ya, rcond=None)[0]
    ea = ya - Xa @ ba
    s2 = float(ea @ ea) / (n + 1 - (p + 1))
    se = math.sqrt(s2 * np.linalg.inv(Xa.T @ Xa)[p, p])
    assert rel_close(-ba[p], yhat, 1e-9) or abs(ba[p] + yhat) < 1e-9 * sigma, (ba[p], yhat)
    assert rel_close(se, sigma * math.sqrt(1.0 + h0), 1e-9), (se, sigma, h0)


def smearing_plain(X, y, beta):
    """S with plain Python loops: residuals from explicit sums, then exp."""
    Xl = X.tolist()
    yl = y.tolist()
    bl = [float(b) for b in beta]
    total = 0.0
    for row, yi in zip(Xl, yl):
        fitted = 0.0
        for xij, bj in zip(row, bl):
            fitted += xij * bj
        total += math.exp(yi - fitted)
    return total / len(yl)


def t_quantile(level, df):
    alpha = 1.0 - level
    t = float(scipy.stats.t.ppf(1.0 - alpha / 2.0, df))
    assert abs(float(scipy.stats.t.cdf(t, df)) - (1.0 - alpha / 2.0)) < 1e-12
    assert rel_close(t, float(scipy.stats.t.isf(alpha / 2.0, df)), 1e-12)
    return t


def run(case):
    name = case["name"]
    rng = np.random.default_rng(case["seed"])
    train_cols = case["make_train"](rng)
    train_file = "%s_train.csv" % name
    new_file = "%s_new.csv" % name
    train_path = os.path.join(OUT_DIR, train_file)
    write_csv(train_path, train_cols)
    _, train = read_csv(train_path)
    assert all(c != "" for v in train.values() for c in v), "training rows must be complete"

    new_cols, intended = case["make_new"](train)
    new_path = os.path.join(OUT_DIR, new_file)
    write_csv(new_path, new_cols)
    new_header, new = read_csv(new_path)

    req = case["request"]
    terms = split_terms(req["terms"])
    design = Design(terms, train)
    X = design.matrix(train)
    y, logged = response_values(req["response"], train)
    n, p = X.shape
    beta, e, sigma, r, h = fit(X, y)
    cinv = np.linalg.inv(X.T @ X)
    h_max = float(h.max())
    t = t_quantile(req["level"], n - p)

    ranges = {}
    for col in design.numeric_inputs:
        v = [float(c) for c in train[col]]
        ranges[col] = [min(v), max(v)]

    smear = None
    if logged:
        smear = float(np.mean(np.exp(e)))
        plain = smearing_plain(X, y, beta)
        assert rel_close(smear, plain, 1e-12), (smear, plain)
        assert smear > 1.0  # Jensen: mean of exp(e) with mean(e) = 0

    X0 = design.matrix(new)
    preds = []
    for i in range(X0.shape[0]):
        x0 = X0[i]
        yhat = float(x0 @ beta)
        h0 = quad_form_qr(r, x0)
        check_h0(X, x0, h0, cinv)
        check_augmented(X, y, x0, yhat, sigma, h0)
        half_ci = t * sigma * math.sqrt(h0)
        half_pi = t * sigma * math.sqrt(1.0 + h0)
        out_range = [col for col in design.numeric_inputs
                     if float(new[col][i]) < ranges[col][0] or float(new[col][i]) > ranges[col][1]]
        assert not rel_close(h0, h_max, LEVERAGE_MARGIN), (name, i, h0, h_max)
        high_lev = h0 > h_max
        pred = {
            "estimate": yhat,
            "ci_low": yhat - half_ci,
            "ci_high": yhat + half_ci,
            "pi_low": yhat - half_pi,
            "pi_high": yhat + half_pi,
            "leverage": h0,
            "extrapolation": bool(out_range) or high_lev,
            "original": None,
        }
        assert pred["pi_low"] < pred["ci_low"] < yhat < pred["ci_high"] < pred["pi_high"]
        if logged:
            o = {
                "estimate": float(np.exp(yhat) * smear),
                "ci_low": float(np.exp(pred["ci_low"]) * smear),
                "ci_high": float(np.exp(pred["ci_high"]) * smear),
                "pi_low": float(np.exp(pred["pi_low"])),
                "pi_high": float(np.exp(pred["pi_high"])),
            }
            plain_s = smearing_plain(X, y, beta)
            assert rel_close(o["estimate"], math.exp(yhat) * plain_s, 1e-12)
            assert rel_close(o["ci_low"], math.exp(yhat - half_ci) * plain_s, 1e-12)
            assert rel_close(o["ci_high"], math.exp(yhat + half_ci) * plain_s, 1e-12)
            assert rel_close(o["pi_low"], math.exp(yhat - half_pi), 1e-12)
            assert rel_close(o["pi_high"], math.exp(yhat + half_pi), 1e-12)
            assert o["pi_low"] < o["ci_low"] < o["estimate"] < o["ci_high"] < o["pi_high"]
            pred["original"] = o
        # intended flag and reason
        want = intended[i]
        reason = {(False, False): None, (True, False): "range",
                  (False, True): "leverage", (True, True): "both"}[(bool(out_range), high_lev)]
        assert reason == want["reason"], (name, i, reason, want)
        if "copy_of" in want:
            assert rel_close(h0, float(h[want["copy_of"]]), 1e-10), (h0, h[want["copy_of"]])
        preds.append(pred)

    if "extra_check" in case:
        case["extra_check"](X, r, h_max, ranges, preds)

    doc = {
        "name": name,
        "description": case["description"],
        "source": SOURCE,
        "seed": case["seed"],
        "request": {"response": req["response"], "terms": req["terms"], "level": req["level"]},
        "training_csv": train_file,
        "new_csv": new_file,
        "n": n,
        "p": p,
        "columns": design.labels,
        "coefficients": [float(b) for b in beta],
        "sigma": sigma,
        "t_quantile": t,
        "max_training_leverage": h_max,
        "training_ranges": ranges,
        "smearing": smear,
        "predictions": preds,
    }
    with open(os.path.join(OUT_DIR, "%s.json" % name), "w") as fh:
        json.dump(doc, fh, indent=1)
        fh.write("\n")
    return doc, new_header


# --------------------------------------------------------------------------
# Cases
# --------------------------------------------------------------------------

def linear_train(rng):
    n = 50
    x1 = rng.normal(10.0, 3.0, n)
    x2 = rng.uniform(0.0, 5.0, n)
    y = 2.0 + 0.8 * x1 - 1.5 * x2 + rng.normal(0.0, 1.5, n)
    return [("y", list(y)), ("x1", list(x1)), ("x2", list(x2))]


def linear_new(train):
    x1 = [float(c) for c in train["x1"]]
    j = min(range(len(x1)), key=lambda k: x1[k])
    rows = [
        (10.0, 2.5, {"reason": None}),
        (train["x1"][j], train["x2"][j], {"reason": None, "copy_of": j}),
        (3.5, 2.5, {"reason": "range"}),
        (21.5, 1.0, {"reason": "both"}),
        (12.0, 0.3, {"reason": None}),
        (7.5, 4.0, {"reason": None}),
    ]
    cols = [("y", [None] * len(rows)), ("x1", [r[0] for r in rows]), ("x2", [r[1] for r in rows])]
    return cols, [r[2] for r in rows]


def logresp_train(rng):
    n = 60
    a = rng.lognormal(0.7, 0.6, n)
    b = rng.normal(0.0, 1.0, n)
    g = [str(s) for s in rng.choice(["shop", "farm", "mill"], n)]
    effect = {"farm": 0.0, "mill": 0.3, "shop": -0.25}
    logy = 0.5 + 0.6 * np.log(a) + 0.4 * b + np.array([effect[s] for s in g]) + rng.normal(0.0, 0.35, n)
    return [("y", list(np.exp(logy))), ("a", list(a)), ("b", list(b)), ("g", g)]


def logresp_new(train):
    assert train["g"][0] == "mill"
    rows = [
        (2.0, 0.0, "farm", {"reason": None}),
        (1.0, 1.0, "mill", {"reason": None}),
        (5.0, -0.5, "shop", {"reason": None}),
        (2.5, 2.6, "mill", {"reason": "range"}),
        (3.0, 0.5, "shop", {"reason": None}),
    ]
    cols = [("a", [r[0] for r in rows]), ("b", [r[1] for r in rows]), ("g", [r[2] for r in rows])]
    return cols, [r[3] for r in rows]


def poly_train(rng):
    x = np.concatenate([rng.uniform(0.0, 2.0, 30), rng.uniform(9.0, 10.0, 6)])
    rng.shuffle(x)
    y = 1.0 + 0.9 * x - 0.05 * x * x + rng.normal(0.0, 0.5, x.size)
    return [("y", list(y)), ("x", list(x))]


def poly_new(train):
    x = [float(c) for c in train["x"]]
    j = min(range(len(x)), key=lambda k: x[k])
    rows = [
        (1.0, {"reason": None}),
        (5.3, {"reason": "leverage"}),
        (9.5, {"reason": None}),
        (11.0, {"reason": "both"}),
        (train["x"][j], {"reason": None, "copy_of": j}),
    ]
    return [("y", [None] * len(rows)), ("x", [r[0] for r in rows])], [r[1] for r in rows]


def poly_check(X, r, h_max, ranges, preds):
    """The gap really produces interior leverage above every training one."""
    lo, hi = ranges["x"]
    assert lo < 5.3 < hi
    assert preds[1]["leverage"] > 2.0 * h_max, (preds[1]["leverage"], h_max)
    grid = np.linspace(lo, hi, 2001)
    hg = [quad_form_qr(r, np.array([1.0, v, v * v])) for v in grid]
    assert max(hg) > h_max
    # comparison: evenly spread x (no gap) gives no interior exceedance
    xs = np.random.default_rng(8399).uniform(0.0, 10.0, 40)
    Xs = np.column_stack([np.ones_like(xs), xs, xs * xs])
    qs, rs = np.linalg.qr(Xs, mode="reduced")
    hs_max = float(np.sum(qs * qs, axis=1).max())
    grid = np.linspace(xs.min(), xs.max(), 2001)
    hg = [quad_form_qr(rs, np.array([1.0, v, v * v])) for v in grid]
    assert max(hg) <= hs_max * (1.0 + 1e-9), (max(hg), hs_max)


CASES = [
    {
        "name": "linear",
        "seed": 8101,
        "description": "OLS on x1, x2 (n = 50); new rows: central, an exact copy of the training row "
                       "with the smallest x1 (boundary, not flagged), x1 just below the training range "
                       "(flagged by the range alone), x1 far above it (flagged by range and "
                       "leverage), two inside.",
        "request": {"response": "y", "terms": "x1, x2", "level": 0.95},
        "make_train": linear_train,
        "make_new": linear_new,
    },
    {
        "name": "logresp",
        "seed": 8201,
        "description": "log(y) on log(a), b, cat(g) with levels farm (reference), mill, shop (n = 60); "
                       "back-transformed with Duan's smearing; new rows without a y column, one with "
                       "b just above the training range (flagged by the range alone).",
        "request": {"response": "log(y)", "terms": "log(a), b, cat(g)", "level": 0.9},
        "make_train": logresp_train,
        "make_new": logresp_new,
    },
    {
        "name": "poly",
        "seed": 8301,
        "description": "y on x, x^2 with x in two groups, [0, 2] and [9, 10] (n = 36); new rows: "
                       "x = 5.3 in the gap is inside the range but has leverage above every training "
                       "leverage (flagged by leverage alone), x = 11 above the range (flagged by range "
                       "and leverage), x = training min exactly "
                       "(not flagged), two ordinary points.",
        "request": {"response": "y", "terms": "x, x^2", "level": 0.95},
        "make_train": poly_train,
        "make_new": poly_new,
        "extra_check": poly_check,
    },
]


def summary(doc):
    flags = "".join("X" if p["extrapolation"] else "." for p in doc["predictions"])
    lev = ", ".join("%.4g" % p["leverage"] for p in doc["predictions"])
    print("%-8s n=%d p=%d sigma=%.6g t=%.6g max_h=%.4g smearing=%s flags=%s h0=[%s]" % (
        doc["name"], doc["n"], doc["p"], doc["sigma"], doc["t_quantile"],
        doc["max_training_leverage"],
        "null" if doc["smearing"] is None else "%.6g" % doc["smearing"], flags, lev))


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    for case in CASES:
        doc, _ = run(case)
        summary(doc)
    print("wrote %d cases to %s (%s)" % (len(CASES), os.path.relpath(OUT_DIR, REPO), SOURCE))
    return 0


if __name__ == "__main__":
    sys.exit(main())
