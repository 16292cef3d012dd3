#!/usr/bin/env python3
"""Reference values for plumbline's column profiler.

What it does
------------
For every sample in ``SAMPLES`` this script draws the values with
``numpy.random.default_rng(seed)`` (one fixed seed per sample, so adding a
sample never changes another) and computes, with numpy and scipy only, the
summaries and transform parameters the profiler reports. Everything goes to
``tests/data/reference/profile/samples.json``: one object per sample with
``name``, ``description``, ``seed``, ``n``, ``values`` (floats written with
``repr``, so they round-trip exactly) and ``expected``.

The expected values are computed from the values exactly as stored (each is a
float64 that ``json`` writes with full ``repr`` precision).

How to rerun
------------
From the repository root::

    python3 tests/reference/profile_reference.py

Deterministic; overwrites ``samples.json`` (two runs give byte-identical
output). The committed file was produced with Python 3.11.7, numpy 2.4.6 and
scipy 1.17.1 (recorded in the ``source`` field). mpmath, when importable, is
used only for an extra check and does not change the output. The script stops
with an error if a check fails.

Exact calls (``x`` is the float64 sample, ``n = len(x)``)
-----------------------------------------------------------
* ``mean`` = ``np.mean(x)``; ``median`` = ``np.median(x)`` (mean of the two
  middle values for even n); ``sd`` = ``np.std(x, ddof=1)``; ``min``, ``max``.
* ``skewness`` = ``scipy.stats.skew(x, bias=False)``: the adjusted
  Fisher-Pearson coefficient G1 = g1 * sqrt(n (n-1)) / (n-2), with
  g1 = m3 / m2^1.5 and m_k the central moments with divisor n.
* ``skewness_se`` = sqrt(6 n (n-1) / ((n-2)(n+1)(n+3))).
* ``kurtosis`` = ``scipy.stats.kurtosis(x, fisher=True, bias=False)``: excess
  kurtosis G2 = ((n+1) g2 + 6)(n-1) / ((n-2)(n-3)), g2 = m4/m2^2 - 3.
* Positive samples (min > 0), Box-Cox:

  - ``boxcox_lambda`` = the lambda returned by ``scipy.stats.boxcox(x)``
    (maximum likelihood, found by ``scipy.optimize.brent`` with its default
    tolerance, relative 1.48e-8);
  - ``boxcox_ci`` = the ``(low, high)`` returned by
    ``scipy.stats.boxcox(x, alpha=0.05)``: the profile-likelihood interval
    {lambda : llf(lambda) >= llf(lambda_hat) - chi2_{0.95,1}/2};
  - ``boxcox_llf_at_lambda`` = ``scipy.stats.boxcox_llf(boxcox_lambda, x)``,
    with llf(lambda) = (lambda - 1) sum log x_i - n/2 log(s2), s2 the variance
    (divisor n) of y = (x^lambda - 1)/lambda (log x at lambda = 0);
  - ``boxcox_lambda_bounded`` = ``scipy.optimize.minimize_scalar(lambda l:
    -boxcox_llf(l, x), bounds=(-10, 10), method='bounded',
    options={'xatol': 1e-12}).x``;
  - ``boxcox_lambda_refined``: see "Refined lambdas" below; this is the value
    to compare an optimiser against;
  - ``boxcox_llf_at_lambda_refined`` = ``boxcox_llf(boxcox_lambda_refined, x)``;
  - ``boxcox_ci_refined``: the same interval with ``scipy.optimize.brentq``
    (xtol 1e-14) around ``boxcox_lambda_refined``;
  - ``skewness_after_boxcox`` = ``skew(scipy.stats.boxcox(x,
    boxcox_lambda_refined), bias=False)`` and
    ``skewness_after_boxcox_at_scipy_lambda`` the same at ``boxcox_lambda``;
  - ``skewness_after_log`` = ``skew(np.log(x), bias=False)``.
* Every sample, Yeo-Johnson:

  - ``yeojohnson_lambda`` = the lambda from ``scipy.stats.yeojohnson(x)``
    (scipy 1.17 finds it with ``optimize.fminbound`` over a range that avoids
    overflow, xtol 1.48e-8);
  - ``yeojohnson_llf_at_lambda`` = ``scipy.stats.yeojohnson_llf(lmbda, x)``,
    with llf(lambda) = -n/2 log(s2) + (lambda - 1) sum sign(x_i) log(1 + |x_i|),
    s2 the variance (divisor n) of the transformed values;
  - ``yeojohnson_lambda_bounded``, ``yeojohnson_lambda_refined``,
    ``yeojohnson_llf_at_lambda_refined`` as for Box-Cox;
  - ``skewness_after_yeojohnson`` = ``skew(scipy.stats.yeojohnson(x,
    yeojohnson_lambda_refined), bias=False)`` and
    ``skewness_after_yeojohnson_at_scipy_lambda``.
* Non-negative samples: ``skewness_after_sqrt`` = ``skew(np.sqrt(x),
  bias=False)``.

Refined lambdas
---------------
The bounded minimiser asked for with ``xatol=1e-12`` cannot get that close:
scipy's bounded Brent method stops at a tolerance of
``sqrt(eps) * |lambda| + xatol / 3`` (about 1.5e-8 relative), and no method
that only compares function values can locate the maximum of a smooth llf
much better than sqrt(eps), because the llf is flat there. So the
``*_lambda_refined`` values are the root of the analytic derivative (the
score) d llf / d lambda, found by ``scipy.optimize.brentq`` with xtol 1e-15
and rtol 4 eps on a bracket of +-0.01 around the bounded minimiser's result.
The score is

    Box-Cox:     sum log x_i - sum (y_i - ybar) dy_i / s2,
                 dy_i = (x_i^l log x_i - y_i) / l
    Yeo-Johnson: sum sign(x_i) log(1 + |x_i|) - sum (y_i - ybar) dy_i / s2,
                 dy_i = ((x_i + 1)^l log(x_i + 1) - y_i) / l          (x_i >= 0)
                 dy_i = ((1 - x_i)^m log(1 - x_i) + y_i) / m, m = 2 - l (x_i < 0)

(the fixtures need no lambda = 0 or lambda = 2 special case: every refined
lambda is well away from both). The sum uses dy minus its mean: the same sum
in exact arithmetic, but without the centring the rounding left in sum(d),
times the large common part of dy, divided by a small s2 moves the root by
up to 3e-7 (seen for ``outlier``, lambda about -2.9, where the transformed
values agree in their first four digits). An implementation that locates
lambda from a derivative has to take the same care. The script checks that

* the refined lambda is inside (-10, 10) and the llf there is at least the
  llf at scipy's lambda and at the bounded minimiser's lambda;
* it agrees with the bounded minimiser within 1e-5 and with scipy's own
  lambdas within 1e-4. In this run the largest gaps were, for Box-Cox,
  2.6e-7 to the bounded minimiser (``left_skewed``, lambda about 3.9) and
  5.8e-8 to scipy's; for Yeo-Johnson 1.5e-6 to the bounded minimiser and
  7.5e-7 to scipy's, both for ``outlier`` (lambda about -3.0), where
  ``scipy.stats.yeojohnson_llf`` is noisy by about 1e-11 near the top (the
  transformed values agree in their first digits and its variance is not
  computed in log space as Box-Cox's is), so a minimiser that compares values
  stops on the noise. Every other gap is below 2e-7;
* when mpmath is importable, it agrees within 1e-10 (relative to
  max(1, |lambda|)) with the maximum of the same llf evaluated in 40-digit
  arithmetic (largest gap in this run 2.6e-12);
* the reported skewness equals the G1 formula computed by hand, the kurtosis
  the G2 formula, and scipy's confidence interval the refined one within 1e-9.

So an optimiser that is tight should match ``*_lambda_refined`` to 1e-9 or
better; one that only compares llf values should be held to about 1e-5.
Skewness after a transform moves by about as much as lambda does, so compare
it at the same tolerance as lambda. The summaries are computed by numpy with
pairwise summation; an implementation that sums in order differs in the last
bits, so compare them to about 1e-12 relative (1e-9 for skewness and
kurtosis of ``near_constant``, whose moments are taken of differences of
about 1e-5 of the mean).

The near-constant sample
------------------------
``near_constant`` has a relative spread of about 1e-5. Both llfs are then
nearly flat and keep rising towards a huge negative lambda: there is no
maximum inside [-10, 10] (checked in 40-digit arithmetic, see
``rises_towards``). scipy's ``boxcox`` returns about -12518 for it, and
``yeojohnson`` about -3.8, a point it finds on rounding noise: below about
-1 the float64 Yeo-Johnson llf of such data has lost most of its digits. For it every lambda, llf, interval and
after-transform skewness is ``null``; ``boxcox_no_interior_maximum`` /
``yeojohnson_no_interior_maximum`` are ``true`` and
``*_llf_rises_towards`` says which bound (+10 or -10) the llf rises towards.
Its summaries (mean, sd, skewness, kurtosis) are still given: they test that
the moments are computed without cancellation (two-pass, about the mean).
"""

import json
import math
import pathlib
import platform
import sys
import warnings

import numpy as np
import scipy
from scipy import optimize, stats

try:
    import mpmath
except ImportError:  # the extra check is skipped
    mpmath = None

OUT = pathlib.Path(__file__).resolve().parents[1] / "data" / "reference" / "profile" / "samples.json"
BOUNDS = (-10.0, 10.0)
# Samples whose llfs have no maximum inside BOUNDS (checked, see rises_towards).
NO_INTERIOR = {"near_constant"}


def _near_constant(rng):
    return np.round(250.0 + rng.normal(0.0, 0.002, 40), 4)


# name, seed, description, generator
SAMPLES = [
    ("lognormal_right", 101, "right-skewed: lognormal(mean=1.0, sigma=0.8), n = 200",
     lambda r: r.lognormal(1.0, 0.8, 200)),
    ("left_skewed", 102, "left-skewed, positive: 40 - lognormal(mean=2.0, sigma=0.5), n = 150",
     lambda r: 40.0 - r.lognormal(2.0, 0.5, 150)),
    ("normal_symmetric", 103, "symmetric: normal(50, 10), n = 100",
     lambda r: r.normal(50.0, 10.0, 100)),
    ("poisson_counts", 104, "counts with zeros: poisson(1.2) as floats, n = 120",
     lambda r: r.poisson(1.2, 120).astype(float)),
    ("exponential", 105, "exponential(scale=3), n = 80",
     lambda r: r.exponential(3.0, 80)),
    ("small_n8", 106, "small sample: lognormal(mean=0.5, sigma=0.7), n = 8",
     lambda r: r.lognormal(0.5, 0.7, 8)),
    ("mixed_sign_skewed", 107, "negatives and positives, right-skewed: lognormal(0.8, 0.7) - 3, n = 150",
     lambda r: r.lognormal(0.8, 0.7, 150) - 3.0),
    ("near_constant", 108, "near-constant, not constant: round(250 + normal(0, 0.002), 4), n = 40",
     _near_constant),  # in NO_INTERIOR
    ("ties", 109, "many ties: round(2 * gamma(2, scale=1.5)) / 2 + 0.5 (steps of 0.5), n = 60",
     lambda r: np.round(r.gamma(2.0, 1.5, 60) * 2.0) / 2.0 + 0.5),
    ("gamma_large", 110, "largest sample: gamma(2, scale=10), n = 500",
     lambda r: r.gamma(2.0, 10.0, 500)),
    ("outlier", 111, "normal(20, 2) with one value replaced by 60, n = 30",
     lambda r: np.concatenate([r.normal(20.0, 2.0, 29), [60.0]])),
]


def fail(msg):
    sys.exit(f"profile_reference: check failed: {msg}")


# ---------------------------------------------------------------- formulas

def g1_by_hand(x):
    n = len(x)
    d = x - x.mean()
    m2, m3 = np.mean(d**2), np.mean(d**3)
    return (m3 / m2**1.5) * math.sqrt(n * (n - 1)) / (n - 2)


def g2_by_hand(x):
    n = len(x)
    d = x - x.mean()
    m2, m4 = np.mean(d**2), np.mean(d**4)
    g2 = m4 / m2**2 - 3.0
    return ((n + 1) * g2 + 6.0) * (n - 1) / ((n - 2) * (n - 3))


def skew_se(n):
    return math.sqrt(6.0 * n * (n - 1) / ((n - 2) * (n + 1) * (n + 3)))


def boxcox_score(lmb, x):
    lx = np.log(x)
    y = np.expm1(lmb * lx) / lmb
    dy = (np.exp(lmb * lx) * lx - y) / lmb
    d = y - y.mean()
    s2 = np.mean(d * d)
    # Centring dy removes its large common part, which would otherwise
    # multiply the rounding left in sum(d) (see "Refined lambdas").
    return lx.sum() - np.sum(d * (dy - dy.mean())) / s2


def yeojohnson_score(lmb, x):
    pos = x >= 0
    y = np.empty_like(x)
    dy = np.empty_like(x)
    lp = np.log1p(x[pos])
    y[pos] = np.expm1(lmb * lp) / lmb
    dy[pos] = (np.exp(lmb * lp) * lp - y[pos]) / lmb
    m = 2.0 - lmb
    ln = np.log1p(-x[~pos])
    y[~pos] = -np.expm1(m * ln) / m
    dy[~pos] = (np.exp(m * ln) * ln + y[~pos]) / m
    d = y - y.mean()
    s2 = np.mean(d * d)
    return np.sum(np.sign(x) * np.log1p(np.abs(x))) - np.sum(d * (dy - dy.mean())) / s2


def bounded_max(llf, x):
    res = optimize.minimize_scalar(lambda l: -llf(l, x), bounds=BOUNDS, method="bounded",
                                   options={"xatol": 1e-12})
    return float(res.x)


def score_root(score, x, start):
    a, b = start - 0.01, start + 0.01
    fa, fb = score(a, x), score(b, x)
    if not (fa > 0 > fb):
        fail(f"score does not change sign around {start}: {fa}, {fb}")
    return float(optimize.brentq(score, a, b, args=(x,), xtol=1e-15, rtol=4 * np.finfo(float).eps,
                                 maxiter=200))


def mp_llf(kind, x):
    """The llf in 40-digit arithmetic (mpmath) as a function of lambda."""
    mpmath.mp.dps = 40
    xs = [mpmath.mpf(float(v)) for v in x]
    n = len(xs)

    def llf(l):
        l = mpmath.mpf(l)
        if kind == "boxcox":
            y = [(v**l - 1) / l for v in xs]
            jac = (l - 1) * mpmath.fsum(mpmath.log(v) for v in xs)
        else:
            y = [((v + 1)**l - 1) / l if v >= 0 else -((1 - v)**(2 - l) - 1) / (2 - l) for v in xs]
            jac = (l - 1) * mpmath.fsum(mpmath.sign(v) * mpmath.log(1 + abs(v)) for v in xs)
        mean = mpmath.fsum(y) / n
        s2 = mpmath.fsum((v - mean)**2 for v in y) / n
        return jac - mpmath.mpf(n) / 2 * mpmath.log(s2)

    return llf


def mp_max(kind, x, start):
    """The maximum of the llf in 40-digit arithmetic, or None without mpmath."""
    if mpmath is None:
        return None
    llf = mp_llf(kind, x)
    root = mpmath.findroot(lambda l: mpmath.diff(llf, l), mpmath.mpf(start), tol=mpmath.mpf(10)**-30)
    return float(root)


def rises_towards(kind, x):
    """Checks that the llf is monotone on [-10, 10] (no interior maximum) and
    returns the bound it rises towards. With mpmath the llf is evaluated in
    40 digits on a grid of step 0.5 (shifted by 0.1 to avoid 0 and 2); without it, scipy's llf on [-2, 10]
    (further out the float64 Yeo-Johnson llf of such data loses all digits)."""
    if mpmath is not None:
        llf = mp_llf(kind, x)
        grid = [-10.0] + [i / 2 + 0.1 for i in range(-20, 20)] + [10.0]  # avoids 0 and 2
    else:
        f = stats.boxcox_llf if kind == "boxcox" else stats.yeojohnson_llf
        llf = lambda l: f(l, x)  # noqa: E731
        grid = [i / 2 + 0.1 for i in range(-4, 20)] + [10.0]
    v = [llf(l) for l in grid]
    if all(a > b for a, b in zip(v, v[1:])):
        return -10.0
    if all(a < b for a, b in zip(v, v[1:])):
        return 10.0
    fail(f"{kind}: the llf is not monotone on the grid, so there is an interior maximum")


def ci_refined(x, lmax, alpha=0.05):
    target = stats.boxcox_llf(lmax, x) - 0.5 * stats.chi2.ppf(1 - alpha, 1)

    def f(l):
        return stats.boxcox_llf(l, x) - target

    out = []
    for step in (-0.1, 0.1):
        b = lmax + 5 * step
        while f(b) > 0:
            b += step
        lo, hi = sorted((lmax, b))
        out.append(float(optimize.brentq(f, lo, hi, xtol=1e-14, rtol=4 * np.finfo(float).eps)))
    return out


# ---------------------------------------------------------------- per sample

GAPS = {"bc_bounded": 0.0, "bc_scipy": 0.0, "yj_bounded": 0.0, "yj_scipy": 0.0, "mp": 0.0}


def fl(v):
    return None if v is None else float(v)


def profile(name, x):
    n = len(x)
    e = {}
    e["mean"] = float(np.mean(x))
    e["median"] = float(np.median(x))
    e["sd"] = float(np.std(x, ddof=1))
    e["min"] = float(np.min(x))
    e["max"] = float(np.max(x))
    e["skewness"] = float(stats.skew(x, bias=False))
    e["skewness_se"] = skew_se(n)
    e["kurtosis"] = float(stats.kurtosis(x, fisher=True, bias=False))
    if abs(e["skewness"] - g1_by_hand(x)) > 1e-12 * max(1.0, abs(e["skewness"])):
        fail(f"{name}: skewness {e['skewness']} vs G1 by hand {g1_by_hand(x)}")
    if abs(e["kurtosis"] - g2_by_hand(x)) > 1e-11 * max(1.0, abs(e["kurtosis"])):
        fail(f"{name}: kurtosis {e['kurtosis']} vs G2 by hand {g2_by_hand(x)}")
    positive = bool(np.min(x) > 0)
    nonneg = bool(np.min(x) >= 0)
    e["positive"] = positive
    e["non_negative"] = nonneg

    if positive:
        if name in NO_INTERIOR:
            e.update(no_interior("boxcox", rises_towards("boxcox", x)))
        else:
            lb = bounded_max(stats.boxcox_llf, x)
            with warnings.catch_warnings():
                warnings.simplefilter("error")
                _, l_scipy = stats.boxcox(x)
                _, _, ci = stats.boxcox(x, alpha=0.05)
            lr = score_root(boxcox_score, x, lb)
            check_lambda(name, "boxcox", stats.boxcox_llf, x, float(l_scipy), lb, lr)
            cir = ci_refined(x, lr)
            if max(abs(ci[0] - cir[0]), abs(ci[1] - cir[1])) > 1e-9:
                fail(f"{name}: boxcox interval {ci} vs refined {cir}")
            e["boxcox_no_interior_maximum"] = False
            e["boxcox_lambda"] = float(l_scipy)
            e["boxcox_ci"] = [float(ci[0]), float(ci[1])]
            e["boxcox_llf_at_lambda"] = float(stats.boxcox_llf(l_scipy, x))
            e["boxcox_lambda_bounded"] = lb
            e["boxcox_lambda_refined"] = lr
            e["boxcox_llf_at_lambda_refined"] = float(stats.boxcox_llf(lr, x))
            e["boxcox_ci_refined"] = cir
            e["skewness_after_boxcox"] = float(stats.skew(stats.boxcox(x, lr), bias=False))
            e["skewness_after_boxcox_at_scipy_lambda"] = float(stats.skew(stats.boxcox(x, l_scipy), bias=False))
        e["skewness_after_log"] = float(stats.skew(np.log(x), bias=False))

    if name in NO_INTERIOR:
        e.update(no_interior("yeojohnson", rises_towards("yeojohnson", x)))
    else:
        lb = bounded_max(stats.yeojohnson_llf, x)
        _, l_scipy = stats.yeojohnson(x)
        lr = score_root(yeojohnson_score, x, lb)
        check_lambda(name, "yeojohnson", stats.yeojohnson_llf, x, float(l_scipy), lb, lr)
        e["yeojohnson_no_interior_maximum"] = False
        e["yeojohnson_lambda"] = float(l_scipy)
        e["yeojohnson_llf_at_lambda"] = float(stats.yeojohnson_llf(l_scipy, x))
        e["yeojohnson_lambda_bounded"] = lb
        e["yeojohnson_lambda_refined"] = lr
        e["yeojohnson_llf_at_lambda_refined"] = float(stats.yeojohnson_llf(lr, x))
        e["skewness_after_yeojohnson"] = float(stats.skew(stats.yeojohnson(x, lr), bias=False))
        e["skewness_after_yeojohnson_at_scipy_lambda"] = float(
            stats.skew(stats.yeojohnson(x, l_scipy), bias=False))

    if nonneg:
        e["skewness_after_sqrt"] = float(stats.skew(np.sqrt(x), bias=False))
    return e


def no_interior(kind, towards):
    keys = {
        "boxcox": ["boxcox_lambda", "boxcox_ci", "boxcox_llf_at_lambda", "boxcox_lambda_bounded",
                   "boxcox_lambda_refined", "boxcox_llf_at_lambda_refined", "boxcox_ci_refined",
                   "skewness_after_boxcox", "skewness_after_boxcox_at_scipy_lambda"],
        "yeojohnson": ["yeojohnson_lambda", "yeojohnson_llf_at_lambda", "yeojohnson_lambda_bounded",
                       "yeojohnson_lambda_refined", "yeojohnson_llf_at_lambda_refined",
                       "skewness_after_yeojohnson", "skewness_after_yeojohnson_at_scipy_lambda"],
    }[kind]
    out = {f"{kind}_no_interior_maximum": True, f"{kind}_llf_rises_towards": towards}
    out.update({k: None for k in keys})
    return out


def check_lambda(name, kind, llf, x, l_scipy, lb, lr):
    if not (BOUNDS[0] < lr < BOUNDS[1]):
        fail(f"{name} {kind}: refined lambda {lr} outside the bounds")
    f_r, f_s, f_b = llf(lr, x), llf(l_scipy, x), llf(lb, x)
    # The llf is flat at the top: allow a few ulps of rounding in its value.
    slack = 1e-12 * max(1.0, abs(f_r))
    if f_r < f_s - slack or f_r < f_b - slack:
        fail(f"{name} {kind}: llf at refined {f_r} below scipy's {f_s} or bounded {f_b}")
    key = "bc" if kind == "boxcox" else "yj"
    GAPS[f"{key}_bounded"] = max(GAPS[f"{key}_bounded"], abs(lr - lb))
    GAPS[f"{key}_scipy"] = max(GAPS[f"{key}_scipy"], abs(lr - l_scipy))
    if abs(lr - lb) > 1e-5:
        fail(f"{name} {kind}: refined {lr} vs bounded {lb}")
    if abs(lr - l_scipy) > 1e-4:
        fail(f"{name} {kind}: refined {lr} vs scipy {l_scipy}")
    lm = mp_max(kind, x, lr)
    if lm is not None:
        gap = abs(lm - lr) / max(1.0, abs(lr))
        GAPS["mp"] = max(GAPS["mp"], gap)
        if gap > 1e-10:
            fail(f"{name} {kind}: refined {lr} vs 40-digit maximum {lm}")


def main():
    out = []
    for name, seed, desc, gen in SAMPLES:
        x = np.asarray(gen(np.random.default_rng(seed)), dtype=float)
        # What is stored is what is checked: round-trip through repr.
        x = np.array([float(repr(float(v))) for v in x])
        if not (8 <= len(x) <= 500):
            fail(f"{name}: n = {len(x)}")
        if np.ptp(x) == 0:
            fail(f"{name}: constant")
        out.append({"name": name, "description": desc, "seed": seed, "n": len(x),
                    "values": [float(v) for v in x], "expected": profile(name, x)})
    doc = {
        "source": (f"tests/reference/profile_reference.py; Python {platform.python_version()}, "
                   f"numpy {np.__version__}, scipy {scipy.__version__}"),
        "samples": out,
    }
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(json.dumps(doc, indent=1) + "\n")
    print(f"wrote {OUT} ({len(out)} samples)")
    print("largest |refined - other| lambda gaps: " + ", ".join(f"{k} {v:.2g}" for k, v in GAPS.items())
          + ("" if mpmath else " (mpmath missing: 40-digit check skipped)"))


if __name__ == "__main__":
    main()
