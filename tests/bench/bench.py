#!/usr/bin/env python3
"""The benchmark behind BENCHMARKS.md: native fits against numpy.linalg.lstsq
on the same matrix in the same run, the machine's peak GFLOP/s, the wasm
build against native, the exhaustive subset search, file loads and peak
memory. Run through tests/bench/run.sh, on demand; not part of CI.

The fit data are the ones `plumbline bench fit` generates: this file
re-implements its SplitMix64 recipe in numpy and checks bit-for-bit against
`--write-csv` before timing anything, so both tools factor the same matrix.
"""

import argparse
import json
import os
import platform
import re
import statistics
import subprocess
import sys
import time
from datetime import datetime, timezone
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
WORK = Path(os.environ.get("PLUMBLINE_BENCH_TMP", "/tmp/plumbline-bench"))


# ---------------------------------------------------------------- the data

def splitmix_draws(seed, start, count):
    """Outputs start .. start+count-1 (0-based) of SplitMix64(seed)."""
    import numpy as np

    with np.errstate(over="ignore"):
        k = np.arange(start + 1, start + count + 1, dtype=np.uint64)
        z = np.uint64(seed) + k * np.uint64(0x9E3779B97F4A7C15)
        z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
        z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
        z = z ^ (z >> np.uint64(31))
    return z


def unit(z):
    import numpy as np

    return (z >> np.uint64(11)).astype(np.float64) * (1.0 / float(1 << 53))


def fit_problem(rows, cols, seed):
    """X (rows x cols, intercept first) and y, as src/bench.rs makes them."""
    import numpy as np

    u = unit(splitmix_draws(seed, 0, 4 * rows)).reshape(rows, 4)
    s = ((u[:, 0] + u[:, 1]) + u[:, 2]) + u[:, 3]
    y = 1.0 + 0.1 * ((s - 2.0) * np.sqrt(3.0))
    X = np.empty((rows, cols), order="F")
    X[:, 0] = 1.0
    for j in range(1, cols):
        x = 2.0 * unit(splitmix_draws(seed, 4 * rows + (j - 1) * rows, rows)) - 1.0
        y += (1.0 / j) * x
        X[:, j] = x
    return X, y


def check_recipe(binary):
    """The numpy recipe equals `plumbline bench fit --write-csv` bit for bit."""
    import numpy as np

    path = WORK / "recipe-check.csv"
    run_json([binary, "bench", "fit", "--rows", "64", "--cols", "5", "--seed", "9", "--write-csv", str(path), "--json"])
    rows = [line.split(",") for line in path.read_text().splitlines()[1:]]
    got = np.array([[float(v) for v in r] for r in rows])
    X, y = fit_problem(64, 5, 9)
    if not (np.array_equal(got[:, 0], y) and np.array_equal(got[:, 1:], X[:, 1:])):
        sys.exit("bench.py: the numpy recipe does not reproduce `plumbline bench fit` data; fix fit_problem()")


# ---------------------------------------------------------------- helpers

def run_json(cmd, env=None, timeout=None):
    out = subprocess.run([str(c) for c in cmd], capture_output=True, text=True, env=env, timeout=timeout)
    if out.returncode != 0:
        raise RuntimeError(f"{' '.join(map(str, cmd))}: exit {out.returncode}: {out.stderr.strip()[:500]}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def max_rss_mb(cmd, env=None):
    """Runs cmd under /usr/bin/time -v; returns (max RSS in MB, wall seconds)."""
    t0 = time.perf_counter()
    out = subprocess.run(["/usr/bin/time", "-v"] + [str(c) for c in cmd], capture_output=True, text=True, env=env)
    wall = time.perf_counter() - t0
    if out.returncode != 0:
        raise RuntimeError(f"{cmd}: {out.stderr.strip()[-500:]}")
    m = re.search(r"Maximum resident set size \(kbytes\): (\d+)", out.stderr)
    return int(m.group(1)) / 1024.0, wall


def load_average():
    return " ".join(Path("/proc/loadavg").read_text().split()[:3])


def threads_env(n):
    env = dict(os.environ)
    for v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        if n is None:
            env.pop(v, None)
        else:
            env[v] = str(n)
    return env


def fmt(x, digits=3):
    if x is None:
        return "–"
    if isinstance(x, str):
        return x
    if x == 0:
        return "0"
    if abs(x) >= 100:
        return f"{x:,.0f}"
    return f"{x:.{digits}g}"


def human_n(n):
    return {10**4: "1e4", 10**5: "1e5", 10**6: "1e6"}.get(n, str(n))


# ---------------------------------------------------------------- subprocess modes

def mode_numpy_fit(rows, cols, seed, repeats):
    import numpy as np

    X, y = fit_problem(rows, cols, seed)
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        np.linalg.lstsq(X, y, rcond=None)
        best = min(best, time.perf_counter() - t0)
    print(json.dumps({"seconds": best}))


def mode_matmul(size, repeats):
    import numpy as np

    rng = np.random.default_rng(1)
    a = rng.standard_normal((size, size))
    b = rng.standard_normal((size, size))
    a @ b  # warm-up
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        a @ b
        best = min(best, time.perf_counter() - t0)
    print(json.dumps({"seconds": best, "gflops": 2.0 * size**3 / best / 1e9}))


def self_cmd(*args):
    return [sys.executable, str(Path(__file__).resolve())] + [str(a) for a in args]


# ---------------------------------------------------------------- the parts

def peak(quick):
    size = 2000 if quick else 4000
    one = run_json(self_cmd("--matmul", size, 3), env=threads_env(1))
    alln = run_json(self_cmd("--matmul", size, 3), env=threads_env(None))
    return {"size": size, "one_thread": one["gflops"], "all_threads": alln["gflops"]}


def fits(binary, quick, seed=1):
    ns = [10**4, 10**5] if quick else [10**4, 10**5, 10**6]
    ps = [10, 50] if quick else [10, 50, 100]
    out = []
    for n in ns:
        for p in ps:
            reps = 3 if n <= 10**5 else 1
            native = [run_json([binary, "bench", "fit", "--rows", n, "--cols", p, "--seed", seed, "--json"]) for _ in range(reps)]
            nat = min(native, key=lambda r: r["seconds"])
            one = min(run_json([binary, "bench", "fit", "--rows", n, "--cols", p, "--seed", seed, "--threads", 1, "--json"])["seconds"]
                      for _ in range(reps))
            streaming = min(run_json([binary, "bench", "fit", "--rows", n, "--cols", p, "--seed", seed, "--streaming", "--json"])["seconds"]
                            for _ in range(reps))
            np1 = run_json(self_cmd("--numpy-fit", n, p, seed, reps), env=threads_env(1))["seconds"]
            npall = run_json(self_cmd("--numpy-fit", n, p, seed, reps), env=threads_env(None))["seconds"]
            row = {"rows": n, "cols": p, "native": nat["seconds"], "gflops": nat["gflops"], "flops": nat["flops"],
                   "path": nat["solver_path"], "numpy_1": np1, "numpy_all": npall, "repeats": reps, "streaming": streaming,
                   "leverage": nat.get("leverage_seconds") or 0.0, "native_1": one, "threads": nat.get("threads", 1)}
            print(f"  fit {human_n(n)} x {p}: native {row['native']:.3f} s ({row['threads']} threads), {one:.3f} s (1 thread), streaming {streaming:.3f} s, numpy {np1:.3f} s (1 thread), "
                  f"{npall:.3f} s (all)", flush=True)
            out.append(row)
    return out


def memory(binary, quick):
    n, p = (10**5, 50) if quick else (10**6, 50)
    rss, wall = max_rss_mb([binary, "bench", "fit", "--rows", n, "--cols", p, "--json"])
    streaming, _ = max_rss_mb([binary, "bench", "fit", "--rows", n, "--cols", p, "--streaming", "--json"])
    base, _ = max_rss_mb([binary, "bench", "fit", "--rows", 100, "--cols", 2, "--json"])
    np_rss, _ = max_rss_mb(self_cmd("--numpy-fit", n, p, 1, 1), env=threads_env(1))
    data_mb = n * p * 8 / 2**20  # y and the p − 1 columns: the table as generated
    return {"rows": n, "cols": p, "rss_mb": rss, "streaming_rss_mb": streaming, "base_mb": base, "data_mb": data_mb,
            "numpy_rss_mb": np_rss}


def subsets(binary, quick):
    ks = [10, 15, 20, 25] if quick else [10, 15, 20, 25, 28, 30, 32, 35]
    cap = 60 if quick else 600
    out = []
    for k in ks:
        try:
            r = run_json([binary, "bench", "select", "--terms", k, "--rows", 300, "--json"], timeout=cap)
            out.append({"terms": k, "seconds": r["seconds"], "models": r["models_examined"], "rate": r["models_per_second"],
                        "complete": r["exhaustive_complete"]})
            print(f"  select {k} terms: {r['seconds']:.2f} s, {r['models_examined']} models", flush=True)
        except subprocess.TimeoutExpired:
            out.append({"terms": k, "seconds": None, "capped": cap})
            print(f"  select {k} terms: stopped at the {cap} s cap", flush=True)
            break
    return out


def make_csv(path, target_mb):
    """A mixed CSV of about target_mb: an id, a date, a text category and numbers."""
    import random

    if path.exists() and abs(path.stat().st_size / 1e6 - target_mb) < 0.1 * target_mb:
        return
    r = random.Random(20261201)
    regions = ["north", "south", "east", "west", "central"]
    with open(path, "w") as f:
        f.write("id,date,region,amount,rate,count,score,flag,cost,temp,load\n")
        size, i = 0, 0
        while size < target_mb * 1e6:
            i += 1
            line = (f"{i},2026-{1 + i % 12:02d}-{1 + i % 28:02d},{regions[i % 5]},{r.lognormvariate(3, 1):.2f},"
                    f"{r.random():.6f},{r.randint(0, 500)},{r.gauss(50, 10):.3f},{r.randint(0, 1)},"
                    f"{r.uniform(10, 1e4):.2f},{r.gauss(15, 8):.1f},{100 * r.random():.4f}\n")
            f.write(line)
            size += len(line)


def make_xlsx(path, target_mb):
    """A workbook of about target_mb (compressed), written by openpyxl."""
    import random

    import openpyxl

    if path.exists() and abs(path.stat().st_size / 1e6 - target_mb) < 0.15 * target_mb:
        return
    rows = int(target_mb / 3.76 * 50000)  # measured: 50,000 such rows make 3.76 MB
    r = random.Random(20261202)
    wb = openpyxl.Workbook(write_only=True)
    ws = wb.create_sheet("data")
    ws.append(["id", "region", "amount", "rate", "count", "score", "flag", "cost", "temp", "load"])
    regions = ["north", "south", "east", "west"]
    for i in range(rows):
        ws.append([i + 1, regions[i % 4], round(r.lognormvariate(3, 1), 2), r.random(), r.randint(0, 500),
                   round(r.gauss(50, 10), 3), r.randint(0, 1), round(r.uniform(10, 1e4), 2), round(r.gauss(15, 8), 1),
                   r.random() * 100])
    wb.save(path)


def loads(binary, quick, pkg):
    sizes = [("csv", 10 if quick else 100), ("xlsx", 5 if quick else 50)]
    out = []
    for kind, mb in sizes:
        path = WORK / f"load-{mb}mb.{kind}"
        t0 = time.perf_counter()
        (make_csv if kind == "csv" else make_xlsx)(path, mb)
        print(f"  {path.name}: ready in {time.perf_counter() - t0:.1f} s", flush=True)
        r = run_json([binary, "bench", "read", path, "--json"])
        rss, wall = max_rss_mb([binary, "profile", path, "--json"])
        row = {"kind": kind, "file": path.name, "mb": path.stat().st_size / 1e6, "rows": r["rows"], "cols": r["cols"],
               "read": r["seconds"], "profile_wall": wall, "profile_rss_mb": rss, "wasm_inspect": None, "wasm_error": None}
        if pkg:
            try:
                w = run_json(["node", ROOT / "tests/bench/wasm.mjs", pkg, "inspect", path, '{"preview_rows":50}'], timeout=900)
                row["wasm_inspect"] = w["seconds"] if w["ok"] else None
                row["wasm_error"] = w["error"]
            except Exception as e:  # a failure is a finding, recorded in the table
                row["wasm_error"] = str(e)[:200]
        row["page"], row["page_error"] = None, None
        if (ROOT / "dist" / "plumbline.html").exists():
            try:
                row["page"] = run_json(["node", ROOT / "tests/bench/page.mjs", "load", path], timeout=900)["best"]
            except Exception as e:  # a failure is a finding, recorded in the table
                row["page_error"] = str(e)[:200]
        else:
            row["page_error"] = "dist/plumbline.html is not built"
        print(f"  load {path.name}: read {row['read']:.2f} s, profile {wall:.2f} s, wasm inspect {fmt(row['wasm_inspect'])} s, "
              f"page {fmt(row['page'])} s", flush=True)
        out.append(row)
    return out


def wasm_vs_native(binary, quick, pkg):
    cases = [("fit", 10**4, 10), ("fit", 10**5, 10), ("fit", 10**5, 50), ("select", 300, 20)]
    if not quick:
        cases += [("fit", 10**6, 10), ("select", 300, 25)]
    out = []
    for what, n, p in cases:
        csv = WORK / f"wasm-{what}-{n}-{p}.csv"
        if what == "fit":
            args = ["bench", "fit", "--rows", n, "--cols", p]
            request = {"response": "y", "terms": ", ".join(f"x{j}" for j in range(1, p))}
        else:
            args = ["bench", "select", "--terms", p, "--rows", n]
            request = {"response": "y", "candidates": ", ".join(f"x{j}" for j in range(1, p + 1))}
        reps = 3 if n <= 10**5 else 2
        native = min(run_json([binary] + args + ["--through-read", "--write-csv", csv, "--json"])["seconds"] for _ in range(reps))
        w = run_json(["node", ROOT / "tests/bench/wasm.mjs", pkg, what, csv, json.dumps(request), reps], timeout=1800)
        row = {"what": what, "rows": n, "cols": p, "native": native, "wasm": w["seconds"] if w["ok"] else None,
               "first": w.get("first") if w["ok"] else None, "error": w["error"], "mb": csv.stat().st_size / 1e6, "repeats": reps}
        print(f"  wasm {what} {n} x {p}: native {native:.3f} s, wasm {fmt(row['wasm'])} s {w['error'] or ''}", flush=True)
        out.append(row)
        csv.unlink()
    return out


def page_time():
    try:
        return run_json(["node", ROOT / "tests/bench/page.mjs", "5"], timeout=300)
    except Exception as e:
        return {"error": str(e)[:300]}


# ---------------------------------------------------------------- the report

def machine():
    cpu = "unknown"
    for line in Path("/proc/cpuinfo").read_text().splitlines():
        if line.startswith("model name"):
            cpu = line.split(":", 1)[1].strip()
            break
    import numpy as np

    blas = "unknown"
    try:
        cfg = np.show_config(mode="dicts")
        blas = f"{cfg['Build Dependencies']['blas']['name']} {cfg['Build Dependencies']['blas']['version']}"
    except Exception:
        pass
    git = subprocess.run(["git", "-C", ROOT, "rev-parse", "--short", "HEAD"], capture_output=True, text=True).stdout.strip()
    # BENCHMARKS.md itself (written by the last run) does not count as a change of the code.
    dirty = "\n".join(l for l in subprocess.run(["git", "-C", ROOT, "status", "--porcelain", "--untracked-files=no"], capture_output=True,
                                                 text=True).stdout.splitlines() if not l.endswith("BENCHMARKS.md")).strip()
    return {"cpu": cpu, "cores": os.cpu_count(), "numpy": np.__version__, "blas": blas, "python": platform.python_version(),
            "git": git + (" with uncommitted changes" if dirty else ""), "rustc": subprocess.run(["rustc", "--version"], capture_output=True, text=True).stdout.strip(),
            "node": subprocess.run(["node", "--version"], capture_output=True, text=True).stdout.strip()}


def status(met, how):
    return f"**met** ({how})" if met else f"**missed** ({how})"


def report(res, quick):
    m, pk = res["machine"], res["peak"]
    L = []
    w = L.append
    w("# Benchmarks")
    w("")
    w("Written by `bash tests/bench/run.sh" + (" --quick" if quick else "") + f"` on {res['date']}; every figure below comes from that one run. "
      "The script is run on demand, never by CI, and no test asserts a time.")
    w("")
    w("**These numbers are noisy.** The machine has "
      f"{m['cores']} cores shared with other developers who compile while it runs: the load average was {res['load_start']} "
      f"(1, 5, 15 min) at the start and {res['load_end']} at the end. Small cases take the best of 3 runs; cases of 10⁶ rows run once. "
      "Read ratios to a factor of about 1.5, not to the digit.")
    w("")
    w(f"Machine: {m['cpu']}, {m['cores']} cores. Code: {m['git']}; {m['rustc']}; numpy {m['numpy']} with {m['blas']}; node {m['node']}.")
    w("")
    w("Reproduce: `bash tests/bench/run.sh` (`--quick` for a smaller run written to `target/bench/BENCHMARKS.quick.md`; raw figures go to "
      f"`{WORK}/results.json`). Single cases: `target/release/plumbline bench fit --rows 1e6 --cols 50 --json` (add `--streaming` for the "
      "bare streaming kernel), `target/release/plumbline bench select --terms 30 --rows 300 --json`, `target/release/plumbline bench read FILE --json`.")
    w("")

    # targets
    w("## Targets (issue 8)")
    w("")
    w("| target | measured | verdict | what limits it |")
    w("|---|---|---|---|")
    f = {(r["rows"], r["cols"]): r for r in res["fits"]}
    big = f.get((10**6, 50)) or f.get((10**5, 50))
    if big:
        ratio_all = big["native"] / big["numpy_all"]
        one = big["native_1"] / big["numpy_1"]
        lr = (big["native"] + big["leverage"]) / big["numpy_all"]
        w(f"| native fit at n = {human_n(big['rows'])}, p = 50 no slower than numpy.linalg.lstsq | `model::fit` {big['native']:.2f} s on "
          f"{big['threads']} threads, {big['native_1']:.2f} s on 1 (its leverages, computed on first use, {big['leverage']:.2f} s more); "
          f"numpy {big['numpy_all']:.2f} s on all threads, {big['numpy_1']:.2f} s on 1 | "
          + status(ratio_all <= 1.0 and one <= 1.0, f"all threads against all threads {ratio_all:.2f}×, one against one {one:.2f}×; "
                   f"with the leverages {lr:.2f}×")
          + " | one pass of blocked QR over the rows (chunks of 32,768 rows on the threads, their R factors merged), then three passes of residuals and Xᵀr to twice double precision (refinement) and the "
            "inference's sums; a third of the time is the factorization. See *Where the fit's time goes*. |")
    wv = [r for r in res.get("wasm", []) if r.get("wasm")]
    if wv:
        worst = max(wv, key=lambda r: r["wasm"] / r["native"])
        ratios = ", ".join("%.2f×" % (r["wasm"] / r["native"]) for r in wv)
        w(f"| wasm at most 2.5× native | {ratios} (the cases of the wasm table) | "
          + status(worst["wasm"] / worst["native"] <= 2.5, f"worst {worst['wasm'] / worst['native']:.2f}×, {worst['what']} {worst['rows']:,} × {worst['cols']}")
          + " | the same scalar code, compiled by node's V8 from wasm32; there is no FMA on either side (on purpose: results are bit-identical). |")
    else:
        w(f"| wasm at most 2.5× native | not measured: {res.get('wasm_missing', 'no wasm run')} | – | – |")
    s30 = next((r for r in res["subsets"] if r["terms"] == 30 and r.get("seconds")), None)
    if s30:
        rate21 = 21_239_972 / s30["rate"]
        w(f"| exhaustive search over 30 terms at most 10 s natively | {s30['seconds']:.2f} s for {s30['models']:,} models "
          f"({s30['rate'] / 1e6:.2f} M models/s, whole `select`) | " + status(s30["seconds"] <= 10, f"{s30['seconds'] / 10:.2f}× the limit")
          + f" | the models examined depend on the data: the first session's 30-term problem needed 21,239,972, which at this rate takes "
            f"{rate21:.1f} s. Per node: Givens updates of R, O(p²), and the bound check; the rest of `select` (CV, the p-value route, refits) is about a sixth. |")
    else:
        w("| exhaustive search over 30 terms at most 10 s natively | not measured in this run" + (" (`--quick` stops at 25 terms)" if quick else "") + " | – | – |")
    pg = res.get("page", {})
    if "median" in pg:
        w(f"| the page shows the demo's first result within 1.5 s | median {pg['median']:.2f} s, best {pg['best']:.2f} s of {len(pg['seconds'])} opens "
          "(headless Chromium, `dist/plumbline.html#demo` from disk, navigation start to a filled coefficient table) | "
          + status(pg["median"] <= 1.5, f"{pg['median'] / 1.5:.2f}× the limit") + " | starting the worker and compiling the wasm, then the demo's read and fit. |")
    else:
        w(f"| the page shows the demo's first result within 1.5 s | not measured: {pg.get('error', 'not run')} | – | – |")
    mem = res["memory"]
    ratio = mem["rss_mb"] / mem["data_mb"]
    sratio = mem["streaming_rss_mb"] / mem["data_mb"]
    w(f"| peak memory of the {human_n(mem['rows'])} × {mem['cols']} fit at most 1.5× the data | `model::fit`: {mem['rss_mb']:,.0f} MB max RSS "
      f"for {mem['data_mb']:,.0f} MB of data; streaming kernel: {mem['streaming_rss_mb']:,.0f} MB | " + status(ratio <= 1.5, f"{ratio:.1f}× the data; "
      f"the streaming kernel {sratio:.1f}×")
      + " | the table (1×), shared by the design and the solution, plus the residuals in double-double (16 bytes a row), the response "
        "scaled (8 bytes a row) and a few vectors of n for the inference. See *Memory*. |")
    w("")

    # peak
    w("## The hardware limit")
    w("")
    w(f"Peak measured by a {pk['size']} × {pk['size']} matrix product in numpy (dgemm, 2n³ flops): **{pk['one_thread']:.1f} GFLOP/s on one thread** "
      f"(OPENBLAS_NUM_THREADS=1) and **{pk['all_threads']:.1f} GFLOP/s on all threads** (the second core is shared, so this can come out lower). "
      "The fit uses every core natively (one in wasm), so its GFLOP/s on all threads are set against the all-thread figure; the search and the "
      "readers run on one thread.")
    w("")

    # fits
    w("## Fit against numpy.linalg.lstsq")
    w("")
    w("The same matrix (the intercept and p − 1 uniform columns, seed 1, from `plumbline bench fit`; the script checks its numpy copy bit for bit) "
      "solved by `model::fit` (the design, sharing the table's columns; the R factor of the scaled [X y] by blocked Householder QR, "
      "256 rows a block; rank, the condition bound and β from R; two refinement steps by the corrected semi-normal equations with residuals "
      "and Xᵀr accumulated to twice double precision; the final residuals; inference), by the bare streaming kernel (`bench fit --streaming`: "
      "`lstsq::tsqr` with its own refinement in double-double arithmetic; no bound, no inference), and by `numpy.linalg.lstsq` (LAPACK gelsd). "
      "The fit's leverages (a pass computing rows of Q = XR⁻¹) are computed on first use, by the diagnostics or HC3, and timed apart. "
      "Flops are Householder QR's 2np² − 2p³/3; GFLOP/s is that count over the whole fit's time, so it understates the kernel alone.")
    w("")
    w("| n | p | QR flops | `model::fit`, all threads (s) | `model::fit`, 1 thread (s) | leverages (s) | bare streaming kernel, 1 thread (s) | numpy, all threads (s) | numpy, 1 thread (s) | fit / numpy, all threads | fit / numpy, 1 thread | fit + leverages / numpy, all threads | fit GFLOP/s (all threads) | % of all-thread peak | path |")
    w("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    for r in res["fits"]:
        w(f"| {human_n(r['rows'])} | {r['cols']} | {r['flops']:.3g} | {r['native']:.3f} | {r['native_1']:.3f} | {r['leverage']:.3f} | {r['streaming']:.3f} | {r['numpy_all']:.3f} | {r['numpy_1']:.3f} | "
          f"{r['native'] / r['numpy_all']:.2f}× | {r['native_1'] / r['numpy_1']:.2f}× | {(r['native'] + r['leverage']) / r['numpy_all']:.2f}× | {r['gflops']:.2f} | {100 * r['gflops'] / pk['all_threads']:.1f}% | {r['path']} |")
    w("")
    w("### Where the fit's time goes")
    w("")
    w("- A profile of `plumbline bench fit --rows 1e6 --cols 50` on one thread (perf, one run on 2026-12-02, the whole process: generating the "
      "data, the fit, the leverages) put 24% in the blocked factorization, 19% in the passes of residuals and Xᵀr, 11% in the leverage pass, "
      "11% in the inference (sums of squares in double-double, the standardized coefficients), 6% in generating the data and 6% in the "
      "design's checks.")
    w("- On several threads the factorization, the residual passes and the leverages run in chunks of 32,768 rows, one chunk per task; "
      "the inference, the design's checks and the bound stay on one thread. The chunks and the order their results are combined in depend "
      "only on the number of rows, so the bits are the same on any number of threads (a unit test checks one against three).")
    w("- The hot loops are portable Rust without FMA, on purpose: native and wasm results are bit-identical. On x86-64 the same loops are "
      "also compiled for AVX2 and chosen at run time (same bits; a unit test compares both builds); wasm runs 128-bit or scalar code. "
      "LAPACK's blocked, vectorised kernels with FMA reach a larger share of the dgemm peak; at small p (10) and 10⁴ rows the fixed costs of "
      "the fit (the inference, the bound, several passes of O(np)) weigh more than the factorization, and numpy stays ahead.")
    w("- Accuracy is not traded for speed: the residuals are still accumulated to twice double precision, and a design whose condition bound "
      "promises fewer than 13 digits still goes to the double-double path (tests/nist.rs is the contract).")
    w("")

    # wasm
    w("## wasm against native")
    w("")
    if res.get("wasm"):
        w("The release wasm (`cargo build --release --target wasm32-unknown-unknown --lib`, `wasm-bindgen --target nodejs`) in node, calling the page's "
          "own exports `fit_bytes` and `select_bytes` on the CSV bytes, against `plumbline bench ... --through-read` on the same bytes (reading the CSV "
          "from memory and fitting, in-process). Both include reading the CSV; node also copies the bytes into wasm memory and returns JSON. "
          "Both sides take the best of the same number of calls in one process (3, or 2 at 10⁶ rows); the wasm's first call is shown apart, "
          "since it also pays for V8's tiering (baseline code first, optimised code later). The ratio is of the best times. The native fit may use "
          "every core (here 2) and the wasm one; most of these calls' time is reading the CSV, on one thread on both sides.")
        w("")
        w("| call | rows | p / terms | CSV MB | native (s) | wasm (s) | wasm / native | wasm first call (s) |")
        w("|---|---|---|---|---|---|---|---|")
        for r in res["wasm"]:
            ratio = f"{r['wasm'] / r['native']:.2f}×" if r.get("wasm") else f"failed: {r.get('error')}"
            w(f"| {r['what']} | {r['rows']:,} | {r['cols']} | {r['mb']:.1f} | {r['native']:.3f} | {fmt(r.get('wasm'))} | {ratio} | {fmt(r.get('first'))} |")
        w("")
        w("The 10⁶ × 50 fit is not run in wasm: its CSV is about 1 GB of text, and reading it takes minutes on each side, so the comparison would "
          "time the reader, not the fit. The fit no longer copies the data, but the 1 GB of bytes and the table must both sit in wasm32's 4 GiB.")
    else:
        w(f"Not measured in this run: {res.get('wasm_missing', 'skipped')}.")
    w("")

    # subsets
    w("## Exhaustive subset search")
    w("")
    w("`plumbline bench select --terms K --rows 300`: K independent, roughly normal candidates, the first K/2 with effects 2^(−j/2), unit noise; "
      "the whole `select::select` with its defaults (importance order, branch and bound, BIC winner, 5-fold CV of the best set of each size, "
      "the p-value route, PRESS, the refit). Models examined is the search's own count.")
    w("")
    w("| terms | all subsets | models examined | seconds | models per second |")
    w("|---|---|---|---|---|")
    for r in res["subsets"]:
        if r.get("seconds") is None:
            w(f"| {r['terms']} | {2 ** r['terms']:,} | – | stopped at the {r['capped']} s cap | – |")
        else:
            w(f"| {r['terms']} | {2 ** r['terms']:,} | {r['models']:,} | {r['seconds']:.3f} | {r['rate']:,.0f} |")
    w("")
    last = res["subsets"][-1]["terms"] if res["subsets"] else None
    if quick:
        w("`--quick` stops at 25 terms.")
        w("")
    elif last and last < 35:
        w(f"Sizes after {last} terms were not run: the cap is 600 s per size.")
        w("")
    w("What changed in the search (issue 8): it allocated a new R and a scratch matrix for every node and a model list for every visit "
      "(30 terms: 15.2 s for 21,239,972 models in the first session, about 1.4 M models/s). It now keeps one R per depth of the tree, copies "
      "only the columns the previous sibling changed, holds the model as a membership mask and checks the hierarchy only for a model that "
      "would be recorded. Measured once in one process, old and new search alone on this benchmark's 30-term problem (load average about 4): "
      "8.6 s and 2.1 s, with the same results bit for bit. Then the rotations' √(x² + y²) was taken from IEEE operations instead of libm's "
      "`hypot`, which differs between glibc and the wasm build: the CLI and the page gave search RSS values differing in the last digits "
      "(12 of 21 sizes on the 20-term problem), and now agree bit for bit; `hypot` was also a quarter of the search's time in a profile (perf, 28 terms). Over 400 seeded "
      "problems with groups and hierarchy (10,378 best sets) the sets are the same and the RSS values agree to 2.6e-15 relative.")
    w("")

    # loads
    w("## Loading files")
    w("")
    w(f"Generated by the script into `{WORK}` (a seeded mix of an id, a date, a text category and numbers; the workbook written by openpyxl). "
      "`read` is `read_table` on bytes already in memory (`plumbline bench read`); `profile` is the whole `plumbline profile FILE --json` command "
      "(reading the file from disk, the table, the profile, the JSON) with its peak memory; `wasm inspect` is the page's `inspect` export "
      "(read, profile, preview) in node, the call the page's worker makes when a file is opened; `page` is the built page in headless Chromium "
      "(`node tests/bench/page.mjs load FILE`), from choosing the file in the Data step until the page names it as the data open: the browser "
      "reading the file, the copy to the worker, the worker's `inspect_progress`, and showing the columns.")
    w("")
    w("| file | MB | rows × columns | read (s) | MB/s | profile command (s) | its max RSS (MB) | wasm inspect, node (s) | page, Chromium (s) |")
    w("|---|---|---|---|---|---|---|---|---|")
    for r in res["loads"]:
        wasm = fmt(r["wasm_inspect"]) if r["wasm_inspect"] else (f"failed: {r['wasm_error']}" if r.get("wasm_error") else "–")
        pg = fmt(r["page"]) if r.get("page") else (f"failed: {r['page_error']}" if r.get("page_error") else "–")
        w(f"| {r['file']} | {r['mb']:.1f} | {r['rows']:,} × {r['cols']} | {r['read']:.2f} | {r['mb'] / r['read']:.0f} | "
          f"{r['profile_wall']:.2f} | {r['profile_rss_mb']:,.0f} | {wasm} | {pg} |")
    w("")
    w("In the page the same `inspect` runs in the worker, which shows the reader's progress in a bar and can stop it (issue 8, item 2); "
      "an .xlsx reports it as its rows are parsed, other workbooks only at the start and the end; the profile reports each column. The issue names no target time for loads.")
    w("")

    # memory
    w("## Memory")
    w("")
    w(f"`/usr/bin/time -v plumbline bench fit --rows {human_n(mem['rows'])} --cols {mem['cols']}`: maximum resident set "
      f"**{mem['rss_mb']:,.0f} MB**, against {mem['data_mb']:,.0f} MB of data (the table of y and {mem['cols'] - 1} columns, 8 bytes a cell): "
      f"**{mem['rss_mb'] / mem['data_mb']:.2f}×** (the leverages, computed after the fit, included). With `--streaming`: **{mem['streaming_rss_mb']:,.0f} MB, "
      f"{mem['streaming_rss_mb'] / mem['data_mb']:.2f}×**. The program alone (100 × 2) peaks at {mem['base_mb']:.0f} MB. "
      f"numpy.linalg.lstsq on the same matrix peaks at {mem['numpy_rss_mb']:,.0f} MB (its matrix, gelsd's copy and the interpreter).")
    w("")
    w("Where `model::fit`'s memory goes, in units of the data (D): the table (1 D), which the design, the kernel and the solution share "
      "(`values::Values`, reference-counted); the R factor and one block of 256 rows (O(p²)); the residuals in double-double (16 bytes a row), "
      "the scaled response and the rows used (8 bytes a row each), and the inference's vectors of n; the leverages (8 bytes a row) once asked "
      "for. What still costs a copy: a transformed term (log, power, product, dummies), a plain column when rows are left out for missing "
      "values (the rows used are copied), a weighted fit (the √w-weighted system, in double-double), and the double-double path of an "
      "ill-conditioned design, which factors the whole matrix in double-double (about 2 D more, plus Q while refining).")
    w("")
    return "\n".join(L) + "\n"


def main():
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--out")
    ap.add_argument("--bin", default=str(ROOT / "target/release/plumbline"))
    ap.add_argument("--node-pkg", help="wasm-bindgen --target nodejs output; without it the wasm parts are skipped")
    ap.add_argument("--wasm-missing", default="the wasm build was not made")
    ap.add_argument("--numpy-fit", nargs=4, type=int, metavar=("ROWS", "COLS", "SEED", "REPEATS"), help=argparse.SUPPRESS)
    ap.add_argument("--matmul", nargs=2, type=int, metavar=("SIZE", "REPEATS"), help=argparse.SUPPRESS)
    a = ap.parse_args()
    if a.numpy_fit:
        return mode_numpy_fit(*a.numpy_fit)
    if a.matmul:
        return mode_matmul(*a.matmul)

    WORK.mkdir(parents=True, exist_ok=True)
    out = Path(a.out) if a.out else (ROOT / "target/bench/BENCHMARKS.quick.md" if a.quick else ROOT / "BENCHMARKS.md")
    out.parent.mkdir(parents=True, exist_ok=True)
    res = {"date": datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC"), "load_start": load_average(), "machine": machine()}
    check_recipe(a.bin)
    print("peak GFLOP/s", flush=True)
    res["peak"] = peak(a.quick)
    print(f"  {res['peak']}", flush=True)
    print("fits", flush=True)
    res["fits"] = fits(a.bin, a.quick)
    print("memory", flush=True)
    res["memory"] = memory(a.bin, a.quick)
    print(f"  {res['memory']}", flush=True)
    print("subset search", flush=True)
    res["subsets"] = subsets(a.bin, a.quick)
    if a.node_pkg:
        print("wasm", flush=True)
        try:
            res["wasm"] = wasm_vs_native(a.bin, a.quick, a.node_pkg)
        except Exception as e:
            res["wasm_missing"] = f"the wasm run failed: {str(e)[:300]}"
    else:
        res["wasm_missing"] = a.wasm_missing
    print("page", flush=True)
    res["page"] = page_time()
    print(f"  {res['page']}", flush=True)
    print("loads", flush=True)
    res["loads"] = loads(a.bin, a.quick, a.node_pkg)
    res["load_end"] = load_average()
    (WORK / "results.json").write_text(json.dumps(res, indent=1))
    out.write_text(report(res, a.quick))
    print(f"wrote {out} (raw figures in {WORK / 'results.json'})")


if __name__ == "__main__":
    main()
