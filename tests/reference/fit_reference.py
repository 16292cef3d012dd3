#!/usr/bin/env python3
"""Reference fixtures for plumbline's least-squares inference.

What it does
------------
For every case in ``CASES`` this script

1. simulates a small data set with ``numpy.random.default_rng(seed)`` (one
   fixed seed per case),
2. writes it to ``tests/data/reference/fit/NAME.csv`` (header row, comma
   delimiter, dot decimals, an empty field means missing; floats written with
   ``repr(float)`` so they round-trip exactly, integer-coded columns written
   as plain integers, text written as is),
3. reads that CSV back and fits the request from the parsed text only, so the
   expected values describe exactly the bytes in the CSV,
4. writes the request and the expected values to
   ``tests/data/reference/fit/NAME.json``.

How to rerun
------------
From the repository root::

    python3 tests/reference/fit_reference.py

The run is deterministic and overwrites every fixture. It needs only numpy
and scipy; the fixtures in the repository were produced with numpy 2.4.6 and
scipy 1.17.1 on Python 3.11 (the versions actually used are recorded in the
``source`` field of each JSON file). Each run also performs self-checks
(see ``sanity_checks``) and stops with an error if one fails.

Request and term syntax
-----------------------
A request has ``response`` (a column name or ``log(col)``), ``terms`` (a
comma-separated string), ``intercept`` (bool), ``level`` (confidence level),
``weights`` (a column name or null) and ``hc3`` (bool).

Terms (commas inside parentheses do not split terms):

* ``x``            the column itself; label ``x``
* ``log(x)``       natural log; label ``log(x)``
* ``sqrt(x)``      square root; label ``sqrt(x)``
* ``x^k``          raw power, k = 2..10; label ``x^k``
* ``cat(g)``       treatment-coded dummies, one 0/1 column per level except
                   the reference; label ``g=L`` for level L
* ``cat(g, ref=L)`` the same with reference level L
* ``a*b``          elementwise product of the columns of two terms; when one
                   side is a ``cat`` there is one column per dummy; label
                   ``<left label>*<right label>``, e.g. ``a*c``, ``g=b*x``

Levels of a ``cat`` are taken from the rows used only. If every non-empty
cell of the column parses as a number the levels are sorted numerically,
otherwise they are sorted as Python strings. The reference is the first level
in that order unless ``ref=`` is given. Numeric levels are labelled with the
cell text as written in the CSV (the fixtures use plain integers, e.g.
``zone=4``). Dummies appear in sorted level order.

Design column order: ``(intercept)`` first when ``intercept`` is true, then
each term's columns in the order the terms are given.

Complete cases: a row is dropped when the response, any column used by any
term, or the weight column has an empty cell. Other columns of the file do
not matter. ``n`` is the number of rows used and ``n_dropped`` the number of
rows dropped.

Formulas
--------
X is the n x p design (intercept included), y the (possibly logged) response,
w the weights (w_i = 1 without a weight column), W = diag(w).

* Estimate: b minimizes sum w_i r_i^2; solved by ``numpy.linalg.lstsq`` on
  (sqrt(w) X, sqrt(w) y).
* Residuals r_i = y_i - x_i b (unweighted residuals).
* RSS = sum w_i r_i^2; df_residual = n - p;
  df_model = p - 1 with an intercept, p without.
* With intercept: ybar_w = sum w y / sum w, TSS = sum w (y - ybar_w)^2,
  R^2 = 1 - RSS/TSS, adj R^2 = 1 - (1 - R^2)(n - 1)/(n - p).
  Without intercept (uncentred): TSS = sum w y^2, R^2 = 1 - RSS/TSS,
  adj R^2 = 1 - (1 - R^2) n/(n - p).
* residual_std_error s = sqrt(RSS/(n - p)).
* Cov = s^2 (X'WX)^-1; std_error = sqrt(diag Cov); t = estimate/std_error;
  p_value = 2 * t.sf(|t|, df_residual);
  ci = estimate -/+ t.ppf(1 - (1 - level)/2, df_residual) * std_error.
* F = ((TSS - RSS)/df_model) / (RSS/df_residual);
  f_p_value = f.sf(F, df_model, df_residual).
* log_likelihood = -n/2 (ln(2 pi) + ln(RSS/n) + 1) + 1/2 sum ln w_i
  (the last sum is 0 without weights);
  aic = -2 LL + 2 (p + 1); bic = -2 LL + ln(n) (p + 1)
  (the error variance counts as a parameter).
* standardized_j = estimate_j * sd_w(X_j) / sd_w(y) for every non-intercept
  column, with sd_w(v) = sqrt(sum w (v - mean_w(v))^2 / sum w); null for the
  intercept.
* Leverage h_i = diag(W^1/2 X (X'WX)^-1 X' W^1/2)_i
  = w_i x_i (X'WX)^-1 x_i'; for unweighted cases this is
  diag(X (X'X)^-1 X'). Reported for every used row in row order.
* HC3 (only when ``hc3`` is true, and only for unweighted cases):
  Cov_HC3 = (X'X)^-1 X' diag(r_i^2 / (1 - h_i)^2) X (X'X)^-1; its
  std_error, t, p_value (t distribution with df_residual) and ci use the same
  formulas as above with the HC3 std_error.

Every case is checked to be well-conditioned: the condition number of
sqrt(w) X with each column scaled to unit Euclidean norm is below 1e3.
"""

import csv
import json
import math
import os
import re
import sys

import numpy as np
import scipy
from scipy import stats

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
OUT_DIR = os.path.join(REPO, "tests", "data", "reference", "fit")
SOURCE = "numpy %s / scipy %s via tests/reference/fit_reference.py" % (
    np.__version__,
    scipy.__version__,
)
MAX_SCALED_CONDITION = 1e3


# --------------------------------------------------------------------------
# CSV writing and reading
# --------------------------------------------------------------------------

def format_cell(value):
    """Text for one CSV cell: None -> empty, float -> repr, int -> str."""
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    if isinstance(value, (bool, np.bool_)):
        raise TypeError("booleans are not used in the fixtures")
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    value = float(value)
    if not math.isfinite(value):
        raise ValueError("non-finite value in data")
    return repr(value)


def write_csv(path, columns):
    """columns: list of (name, list of cell values). Returns nothing."""
    names = [c[0] for c in columns]
    n = len(columns[0][1])
    for name, values in columns:
        if len(values) != n:
            raise ValueError("column %s has the wrong length" % name)
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
        if len(row) != len(header):
            raise ValueError("ragged row in %s" % path)
        for name, cell in zip(header, row):
            data[name].append(cell)
    return header, data


def is_numeric_column(cells):
    for cell in cells:
        if cell == "":
            continue
        try:
            float(cell)
        except ValueError:
            return False
    return True


# --------------------------------------------------------------------------
# Term parsing
# --------------------------------------------------------------------------

def split_top_level(text, sep):
    """Split on sep outside parentheses."""
    parts, depth, current = [], 0, []
    for ch in text:
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth -= 1
            if depth < 0:
                raise ValueError("unbalanced parentheses in %r" % text)
        if ch == sep and depth == 0:
            parts.append("".join(current))
            current = []
        else:
            current.append(ch)
    if depth != 0:
        raise ValueError("unbalanced parentheses in %r" % text)
    parts.append("".join(current))
    return [p.strip() for p in parts]


NAME = r"[A-Za-z_][A-Za-z0-9_.]*"
RE_PLAIN = re.compile(r"^(%s)$" % NAME)
RE_FUNC = re.compile(r"^(log|sqrt)\(\s*(%s)\s*\)$" % NAME)
RE_POWER = re.compile(r"^(%s)\s*\^\s*([0-9]+)$" % NAME)
RE_CAT = re.compile(r"^cat\(\s*(%s)\s*(?:,\s*ref\s*=\s*([^)]*?)\s*)?\)$" % NAME)


def parse_factor(text):
    """One factor of a term: a dict describing it."""
    m = RE_CAT.match(text)
    if m:
        return {"kind": "cat", "col": m.group(1), "ref": m.group(2)}
    m = RE_FUNC.match(text)
    if m:
        return {"kind": m.group(1), "col": m.group(2)}
    m = RE_POWER.match(text)
    if m:
        k = int(m.group(2))
        if not 2 <= k <= 10:
            raise ValueError("power must be 2..10 in %r" % text)
        return {"kind": "power", "col": m.group(1), "k": k}
    m = RE_PLAIN.match(text)
    if m:
        return {"kind": "plain", "col": m.group(1)}
    raise ValueError("cannot parse term %r" % text)


def parse_terms(text):
    """List of terms; each term is a list of one or two factors."""
    terms = []
    for part in split_top_level(text, ","):
        if part == "":
            raise ValueError("empty term in %r" % text)
        factors = [parse_factor(f) for f in split_top_level(part, "*")]
        if len(factors) > 2:
            raise ValueError("only products of two terms are used: %r" % part)
        if len(factors) == 2 and all(f["kind"] == "cat" for f in factors):
            raise ValueError("cat*cat products are not used: %r" % part)
        terms.append(factors)
    return terms


def parse_response(text):
    m = RE_FUNC.match(text.strip())
    if m:
        if m.group(1) != "log":
            raise ValueError("response may be a column or log(col)")
        return {"kind": "log", "col": m.group(2)}
    m = RE_PLAIN.match(text.strip())
    if m:
        return {"kind": "plain", "col": m.group(1)}
    raise ValueError("cannot parse response %r" % text)


# --------------------------------------------------------------------------
# Design matrix
# --------------------------------------------------------------------------

def numeric_values(cells, col):
    try:
        return np.array([float(c) for c in cells], dtype=float)
    except ValueError:
        raise ValueError("column %s is not numeric" % col)


def factor_columns(factor, data, used):
    """Return (labels, list of 1-d arrays) for one factor on the used rows."""
    col = factor["col"]
    cells = [data[col][i] for i in used]
    if factor["kind"] == "cat":
        numeric = is_numeric_column(data[col])
        if numeric:
            by_value = {}
            for c in cells:
                by_value.setdefault(float(c), c)
            order = sorted(by_value)
            if len(set(by_value[v] for v in order)) != len(order):
                raise ValueError("ambiguous level text in %s" % col)
            levels = [(v, by_value[v]) for v in order]
            keys = [float(c) for c in cells]
        else:
            order = sorted(set(cells))
            levels = [(v, v) for v in order]
            keys = cells
        if len(levels) < 2:
            raise ValueError("cat(%s) needs at least two levels" % col)
        if factor["ref"] is None:
            ref_key = levels[0][0]
        else:
            ref_key = float(factor["ref"]) if numeric else factor["ref"]
            if ref_key not in [k for k, _ in levels]:
                raise ValueError("reference %r not a level of %s" % (factor["ref"], col))
        labels, arrays = [], []
        for key, text in levels:
            if key == ref_key:
                continue
            labels.append("%s=%s" % (col, text))
            arrays.append(np.array([1.0 if k == key else 0.0 for k in keys]))
        return labels, arrays
    v = numeric_values(cells, col)
    kind = factor["kind"]
    if kind == "plain":
        return [col], [v]
    if kind == "log":
        if np.any(v <= 0):
            raise ValueError("log of a non-positive value in %s" % col)
        return ["log(%s)" % col], [np.log(v)]
    if kind == "sqrt":
        if np.any(v < 0):
            raise ValueError("sqrt of a negative value in %s" % col)
        return ["sqrt(%s)" % col], [np.sqrt(v)]
    if kind == "power":
        return ["%s^%d" % (col, factor["k"])], [v ** factor["k"]]
    raise AssertionError(kind)


def build_design(request, header, data):
    """Return dict with X, y, w, labels, used (row indices), n_total."""
    response = parse_response(request["response"])
    terms = parse_terms(request["terms"])
    needed = [response["col"]]
    for term in terms:
        for factor in term:
            needed.append(factor["col"])
    if request.get("weights"):
        needed.append(request["weights"])
    for col in needed:
        if col not in data:
            raise ValueError("unknown column %s" % col)
    n_total = len(data[header[0]])
    used = [i for i in range(n_total) if all(data[c][i] != "" for c in needed)]

    y = numeric_values([data[response["col"]][i] for i in used], response["col"])
    if response["kind"] == "log":
        if np.any(y <= 0):
            raise ValueError("log of a non-positive response")
        y = np.log(y)
    if request.get("weights"):
        w = numeric_values([data[request["weights"]][i] for i in used], request["weights"])
        if np.any(w <= 0):
            raise ValueError("weights must be positive")
    else:
        w = np.ones(len(used))

    labels, columns = [], []
    if request["intercept"]:
        labels.append("(intercept)")
        columns.append(np.ones(len(used)))
    for term in terms:
        if len(term) == 1:
            lab, arr = factor_columns(term[0], data, used)
        else:
            lab_l, arr_l = factor_columns(term[0], data, used)
            lab_r, arr_r = factor_columns(term[1], data, used)
            lab, arr = [], []
            for ll, al in zip(lab_l, arr_l):
                for lr, ar in zip(lab_r, arr_r):
                    lab.append("%s*%s" % (ll, lr))
                    arr.append(al * ar)
        labels.extend(lab)
        columns.extend(arr)
    if len(set(labels)) != len(labels):
        raise ValueError("duplicate design column labels: %r" % labels)
    X = np.column_stack(columns)
    return {"X": X, "y": y, "w": w, "labels": labels, "used": used, "n_total": n_total}


# --------------------------------------------------------------------------
# Fit
# --------------------------------------------------------------------------

def weighted_sd(v, w):
    mean = np.sum(w * v) / np.sum(w)
    return math.sqrt(np.sum(w * (v - mean) ** 2) / np.sum(w))


def scaled_condition(X, w):
    Xw = X * np.sqrt(w)[:, None]
    Xs = Xw / np.linalg.norm(Xw, axis=0)
    return float(np.linalg.cond(Xs))


def fit(request, design):
    X, y, w, labels = design["X"], design["y"], design["w"], design["labels"]
    n, p = X.shape
    if n <= p:
        raise ValueError("need n > p")
    sw = np.sqrt(w)
    beta, _, rank, _ = np.linalg.lstsq(X * sw[:, None], y * sw, rcond=None)
    if rank != p:
        raise ValueError("design is rank deficient")
    resid = y - X @ beta
    rss = float(np.sum(w * resid ** 2))
    df_res = n - p
    if request["intercept"]:
        df_model = p - 1
        ybar = np.sum(w * y) / np.sum(w)
        tss = float(np.sum(w * (y - ybar) ** 2))
        r2 = 1.0 - rss / tss
        adj = 1.0 - (1.0 - r2) * (n - 1) / (n - p)
    else:
        df_model = p
        tss = float(np.sum(w * y ** 2))
        r2 = 1.0 - rss / tss
        adj = 1.0 - (1.0 - r2) * n / (n - p)
    sigma2 = rss / df_res
    sigma = math.sqrt(sigma2)
    xtwx_inv = np.linalg.inv(X.T @ (X * w[:, None]))
    cov = sigma2 * xtwx_inv
    se = np.sqrt(np.diag(cov))
    tval = beta / se
    pval = 2.0 * stats.t.sf(np.abs(tval), df_res)
    q = stats.t.ppf(1.0 - (1.0 - request["level"]) / 2.0, df_res)
    fstat = ((tss - rss) / df_model) / (rss / df_res)
    fp = stats.f.sf(fstat, df_model, df_res)
    ll = -n / 2.0 * (math.log(2.0 * math.pi) + math.log(rss / n) + 1.0) + 0.5 * float(np.sum(np.log(w)))
    k = p + 1
    aic = -2.0 * ll + 2.0 * k
    bic = -2.0 * ll + math.log(n) * k
    sd_y = weighted_sd(y, w)
    leverage = w * np.einsum("ij,jk,ik->i", X, xtwx_inv, X)

    coefs = []
    for j, lab in enumerate(labels):
        std = None if lab == "(intercept)" else float(beta[j] * weighted_sd(X[:, j], w) / sd_y)
        coefs.append({
            "term": lab,
            "estimate": float(beta[j]),
            "std_error": float(se[j]),
            "t": float(tval[j]),
            "p_value": float(pval[j]),
            "ci_low": float(beta[j] - q * se[j]),
            "ci_high": float(beta[j] + q * se[j]),
            "standardized": std,
        })

    hc3 = None
    if request["hc3"]:
        if request.get("weights"):
            raise ValueError("HC3 is computed only for unweighted cases")
        xtx_inv = np.linalg.inv(X.T @ X)
        h = np.einsum("ij,jk,ik->i", X, xtx_inv, X)
        omega = resid ** 2 / (1.0 - h) ** 2
        cov_hc3 = xtx_inv @ (X.T @ (X * omega[:, None])) @ xtx_inv
        se3 = np.sqrt(np.diag(cov_hc3))
        t3 = beta / se3
        p3 = 2.0 * stats.t.sf(np.abs(t3), df_res)
        hc3 = [{
            "term": lab,
            "std_error": float(se3[j]),
            "t": float(t3[j]),
            "p_value": float(p3[j]),
            "ci_low": float(beta[j] - q * se3[j]),
            "ci_high": float(beta[j] + q * se3[j]),
        } for j, lab in enumerate(labels)]

    expected = {
        "n": int(n),
        "n_dropped": int(design["n_total"] - n),
        "df_model": int(df_model),
        "df_residual": int(df_res),
        "coefficients": coefs,
        "hc3": hc3,
        "r_squared": float(r2),
        "adj_r_squared": float(adj),
        "residual_std_error": float(sigma),
        "rss": rss,
        "tss": tss,
        "f_statistic": float(fstat),
        "f_p_value": float(fp),
        "log_likelihood": float(ll),
        "aic": float(aic),
        "bic": float(bic),
        "leverage": [float(v) for v in leverage],
        "residuals": [float(v) for v in resid],
    }
    return expected, beta


def sanity_checks(name, request, design, expected, beta, r2_range):
    """Raise AssertionError when a fixture looks wrong."""
    X, y, w = design["X"], design["y"], design["w"]
    n, p = X.shape
    assert len(expected["coefficients"]) == p, name
    assert [c["term"] for c in expected["coefficients"]] == design["labels"], name
    # lstsq against a direct solve of the normal equations X'WX b = X'Wy.
    normal = np.linalg.solve(X.T @ (X * w[:, None]), X.T @ (w * y))
    assert np.allclose(beta, normal, rtol=1e-10, atol=1e-12), (name, beta, normal)
    # Leverages sum to p.
    assert abs(sum(expected["leverage"]) - p) < 1e-9 * p, name
    assert len(expected["residuals"]) == n == expected["n"], name
    cond = scaled_condition(X, w)
    assert cond < MAX_SCALED_CONDITION, (name, cond)
    lo, hi = r2_range
    assert lo <= expected["r_squared"] <= hi, (name, expected["r_squared"])
    # p-values against the regularized incomplete beta form.
    df = expected["df_residual"]
    for c in expected["coefficients"]:
        alt = scipy.special.betainc(df / 2.0, 0.5, df / (df + c["t"] ** 2))
        assert math.isclose(c["p_value"], alt, rel_tol=1e-9), (name, c["term"], c["p_value"], alt)
    if request["intercept"]:
        # F equals the R^2 form.
        r2 = expected["r_squared"]
        f2 = (r2 / expected["df_model"]) / ((1 - r2) / df)
        assert math.isclose(expected["f_statistic"], f2, rel_tol=1e-9), name
    return cond


# --------------------------------------------------------------------------
# Cases
# --------------------------------------------------------------------------

def case_basic(rng):
    n = 60
    x1 = rng.normal(5.0, 2.0, n)
    x2 = rng.normal(0.0, 1.0, n)
    x3 = rng.uniform(-3.0, 3.0, n)
    y = 2.0 + 0.8 * x1 - 1.1 * x2 + 0.4 * x3 + rng.normal(0.0, 2.0, n)
    cols = [("y", y), ("x1", x1), ("x2", x2), ("x3", x3)]
    req = {"response": "y", "terms": "x1, x2, x3", "intercept": True, "level": 0.95,
           "weights": None, "hc3": False}
    return cols, req, (0.3, 0.95)


def case_categorical_text(rng):
    n = 80
    regions = np.array(["north", "south", "east", "west"])
    region = regions[np.arange(n) % 4]
    rng.shuffle(region)
    x = rng.uniform(0.0, 10.0, n)
    effect = {"east": 0.0, "north": 1.5, "south": -1.0, "west": 2.5}
    y = 3.0 + 0.6 * x + np.array([effect[r] for r in region]) + rng.normal(0.0, 2.0, n)
    cols = [("y", y), ("x", x), ("region", [str(r) for r in region])]
    req = {"response": "y", "terms": "x, cat(region)", "intercept": True, "level": 0.95,
           "weights": None, "hc3": False}
    return cols, req, (0.3, 0.95)


def case_categorical_coded_ref(rng):
    n = 90
    zone = (np.arange(n) % 5) + 1
    rng.shuffle(zone)
    amount = rng.normal(10.0, 3.0, n)
    effect = {1: -1.0, 2: 0.5, 3: 0.0, 4: 2.0, 5: 1.0}
    y = 1.0 + 0.5 * amount + np.array([effect[int(z)] for z in zone]) + rng.normal(0.0, 1.8, n)
    cols = [("y", y), ("zone", [int(z) for z in zone]), ("amount", amount)]
    req = {"response": "y", "terms": "cat(zone, ref=3), amount", "intercept": True, "level": 0.95,
           "weights": None, "hc3": False}
    return cols, req, (0.3, 0.95)


def case_transforms(rng):
    n = 100
    a = rng.uniform(0.5, 5.0, n)
    b = rng.uniform(1.0, 25.0, n)
    c = rng.uniform(-2.0, 2.0, n)
    y = (1.0 + 1.2 * np.log(a) + 0.5 * np.sqrt(b) - 0.4 * c ** 2 + 0.7 * c
         + 0.3 * a * c + rng.normal(0.0, 1.2, n))
    cols = [("y", y), ("a", a), ("b", b), ("c", c)]
    req = {"response": "y", "terms": "log(a), sqrt(b), c^2, c, a*c", "intercept": True,
           "level": 0.95, "weights": None, "hc3": False}
    return cols, req, (0.3, 0.95)


def case_log_response(rng):
    n = 50
    x1 = rng.uniform(0.0, 4.0, n)
    x2 = rng.normal(0.0, 1.0, n)
    y = np.exp(0.5 + 0.3 * x1 - 0.25 * x2 + rng.normal(0.0, 0.4, n))
    cols = [("y", y), ("x1", x1), ("x2", x2)]
    req = {"response": "log(y)", "terms": "x1, x2", "intercept": True, "level": 0.95,
           "weights": None, "hc3": False}
    return cols, req, (0.3, 0.95)


def case_no_intercept(rng):
    n = 40
    x1 = rng.normal(0.0, 1.5, n)
    x2 = rng.uniform(-2.0, 2.0, n)
    y = 0.9 * x1 - 0.6 * x2 + rng.normal(0.0, 1.3, n)
    cols = [("y", y), ("x1", x1), ("x2", x2)]
    req = {"response": "y", "terms": "x1, x2", "intercept": False, "level": 0.95,
           "weights": None, "hc3": False}
    return cols, req, (0.3, 0.95)


def case_weighted(rng):
    n = 75
    x1 = rng.normal(2.0, 1.0, n)
    x2 = rng.uniform(0.0, 5.0, n)
    x3 = rng.normal(0.0, 2.0, n)
    w = rng.uniform(0.5, 3.0, n)
    y = 4.0 + 1.0 * x1 + 0.5 * x2 - 0.3 * x3 + rng.normal(0.0, 1.0, n) * 1.6 / np.sqrt(w)
    cols = [("y", y), ("x1", x1), ("x2", x2), ("x3", x3), ("w", w)]
    req = {"response": "y", "terms": "x1, x2, x3", "intercept": True, "level": 0.95,
           "weights": "w", "hc3": False}
    return cols, req, (0.3, 0.95)


def case_hc3(rng):
    n = 120
    x1 = rng.uniform(-3.0, 3.0, n)
    x2 = rng.normal(1.0, 1.0, n)
    noise = rng.normal(0.0, 1.0, n) * (0.3 + 0.6 * np.abs(x1))
    y = 1.5 + 0.7 * x1 + 0.8 * x2 + noise
    cols = [("y", y), ("x1", x1), ("x2", x2)]
    req = {"response": "y", "terms": "x1, x2", "intercept": True, "level": 0.9,
           "weights": None, "hc3": True}
    return cols, req, (0.3, 0.95)


def case_missing_cells(rng):
    n = 70
    x1 = rng.normal(0.0, 1.0, n)
    x2 = rng.uniform(0.0, 4.0, n)
    g = np.array(["a", "b", "c"])[np.arange(n) % 3]
    rng.shuffle(g)
    extra = rng.normal(0.0, 1.0, n)
    effect = {"a": 0.0, "b": 1.0, "c": -0.8, "d": 5.0}
    y = 2.0 + 0.9 * x1 + 0.5 * x2 + rng.normal(0.0, 1.0, n)
    y = y + np.array([effect[v] for v in g])
    cols = {"y": list(y), "x1": list(x1), "x2": list(x2), "g": [str(v) for v in g],
            "extra": list(extra)}
    # Five incomplete rows: two empty responses, two empty x1/x2 cells and
    # one empty category cell.
    cols["y"][3] = None
    cols["y"][41] = None
    cols["x1"][17] = None
    cols["x2"][58] = None
    cols["g"][29] = None
    # A level that appears only in a dropped row: it must not become a dummy.
    cols["g"][17] = "d"
    # An unused column with empty cells in otherwise complete rows: these rows
    # must be kept.
    cols["extra"][10] = None
    cols["extra"][50] = None
    out = [(k, cols[k]) for k in ["y", "x1", "x2", "g", "extra"]]
    req = {"response": "y", "terms": "x1, x2, cat(g)", "intercept": True, "level": 0.95,
           "weights": None, "hc3": False}
    return out, req, (0.3, 0.95)


def case_small_p_values(rng):
    n = 60
    x1 = rng.uniform(-2.0, 2.0, n)
    x2 = rng.normal(0.0, 1.0, n)
    y = 0.5 + 3.0 * x1 + 0.1 * x2 + rng.normal(0.0, 0.25, n)
    cols = [("y", y), ("x1", x1), ("x2", x2)]
    req = {"response": "y", "terms": "x1, x2", "intercept": True, "level": 0.95,
           "weights": None, "hc3": False}
    return cols, req, (0.0, 1.0)


def case_interaction_cat(rng):
    n = 90
    g = np.array(["a", "b", "c"])[np.arange(n) % 3]
    rng.shuffle(g)
    x = rng.uniform(0.0, 6.0, n)
    intercept = {"a": 1.0, "b": 2.0, "c": 0.0}
    slope = {"a": 0.5, "b": 0.1, "c": 0.9}
    y = (np.array([intercept[v] for v in g]) + np.array([slope[v] for v in g]) * x
         + rng.normal(0.0, 0.9, n))
    cols = [("y", y), ("x", x), ("g", [str(v) for v in g])]
    req = {"response": "y", "terms": "x, cat(g), cat(g)*x", "intercept": True, "level": 0.95,
           "weights": None, "hc3": False}
    return cols, req, (0.3, 0.95)


# name, seed, builder
CASES = [
    ("basic", 1001, case_basic),
    ("categorical_text", 1002, case_categorical_text),
    ("categorical_coded_ref", 1003, case_categorical_coded_ref),
    ("transforms", 1004, case_transforms),
    ("log_response", 1005, case_log_response),
    ("no_intercept", 1006, case_no_intercept),
    ("weighted", 1007, case_weighted),
    ("hc3", 1008, case_hc3),
    ("missing_cells", 1009, case_missing_cells),
    ("small_p_values", 1010, case_small_p_values),
    ("interaction_cat", 1011, case_interaction_cat),
]


def to_cells(values):
    out = []
    for v in values:
        if v is None or isinstance(v, str):
            out.append(v)
        elif isinstance(v, (int, np.integer)):
            out.append(int(v))
        else:
            out.append(float(v))
    return out


def run_case(name, seed, builder, verbose=True):
    rng = np.random.default_rng(seed)
    columns, request, r2_range = builder(rng)
    columns = [(col, to_cells(vals)) for col, vals in columns]
    csv_path = os.path.join(OUT_DIR, name + ".csv")
    json_path = os.path.join(OUT_DIR, name + ".json")
    write_csv(csv_path, columns)
    header, data = read_csv(csv_path)
    design = build_design(request, header, data)
    expected, beta = fit(request, design)
    cond = sanity_checks(name, request, design, expected, beta, r2_range)
    doc = {"name": name, "source": SOURCE, "seed": seed, "request": request, "expected": expected}
    with open(json_path, "w") as fh:
        json.dump(doc, fh, indent=2, allow_nan=False)
        fh.write("\n")
    if verbose:
        max_abs_t = max(abs(c["t"]) for c in expected["coefficients"])
        min_p = min(c["p_value"] for c in expected["coefficients"])
        print("%-22s n=%3d dropped=%d p=%2d R2=%.3f cond=%7.1f max|t|=%6.1f min p=%.3g"
              % (name, expected["n"], expected["n_dropped"], len(design["labels"]),
                 expected["r_squared"], cond, max_abs_t, min_p))
    return doc


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    for name, seed, builder in CASES:
        run_case(name, seed, builder)
    print("wrote %d cases to %s (%s)" % (len(CASES), os.path.relpath(OUT_DIR, REPO), SOURCE))
    return 0


if __name__ == "__main__":
    sys.exit(main())
