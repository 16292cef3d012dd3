//! The streaming (blocked) least squares of `lstsq::tsqr` against the main
//! kernel `lstsq::solve_lstsq` on seeded problems with block sizes around
//! the edges (1, p, p + 1, uneven tails, one block for everything), merged
//! R factors against XᵀX, aliasing against the kernel's, and the NIST StRD
//! Norris and Longley certified values (tests/data/nist-strd-lls).

mod common;

use common::{data_dir, lre, read_json};
use plumbline::lstsq::dd::DD;
use plumbline::lstsq::tsqr::{factor_r, merge_r, refine_tsqr, solve_lstsq_tsqr, RFactor, StreamingQr, TsqrOptions, TsqrParams};
use plumbline::lstsq::{solve_lstsq, DdColumn, LstsqOptions};
use plumbline::read::csv::read_csv;
use plumbline::select::cv::SplitMix64;
use plumbline::table::ColumnData;

fn unit(rng: &mut SplitMix64) -> f64 {
    (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64
}

/// A seeded problem: the intercept and p − 1 columns of mixed scales, and
/// y = Xβ + noise.
fn problem(n: usize, p: usize, seed: u64) -> (Vec<DdColumn>, DdColumn) {
    let mut rng = SplitMix64::new(seed);
    let mut cols = vec![DdColumn::from_f64(vec![1.0; n])];
    for j in 1..p {
        let scale = 10f64.powi((j % 5) as i32 * 2 - 4);
        cols.push(DdColumn::from_f64((0..n).map(|_| scale * (unit(&mut rng) * 2.0 - 1.0) + 0.3 * scale).collect()));
    }
    let y: Vec<f64> = (0..n)
        .map(|i| {
            let mut s = 0.5 * (unit(&mut rng) - 0.5);
            for (j, c) in cols.iter().enumerate() {
                s += (j as f64 + 1.0) * 0.7 / c.hi.iter().fold(0.0f64, |m, v| m.max(v.abs())) * c.hi[i];
            }
            s
        })
        .collect();
    (cols, DdColumn::from_f64(y))
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    a == b || (a - b).abs() <= rel * a.abs().max(b.abs())
}

#[test]
fn tsqr_matches_the_kernel_on_seeded_problems_at_block_edges() {
    for (case, &(n, p)) in [(10usize, 3usize), (257, 5), (1000, 12), (513, 1), (64, 8)].iter().enumerate() {
        let (x, y) = problem(n, p, 1000 + case as u64);
        let want = solve_lstsq(&x, &y, &LstsqOptions::default());
        for block in [1, p, p + 1, 7, 256, n, n + 5] {
            let o = TsqrOptions { tsqr: TsqrParams { block_rows: block }, ..TsqrOptions::default() };
            let got = solve_lstsq_tsqr::<f64>(&x, &y, &o);
            assert_eq!(got.rank, want.rank, "n {n} p {p} block {block}: rank");
            for j in 0..p {
                assert!(
                    close(got.coef[j], want.coef[j], 1e-10),
                    "n {n} p {p} block {block}: β{j} streaming {} kernel {}",
                    got.coef[j],
                    want.coef[j]
                );
            }
            let (a, b) = (got.rss.to_f64(), want.rss.to_f64());
            assert!(close(a, b, 1e-9), "n {n} p {p} block {block}: RSS streaming {a} kernel {b}");
        }
    }
}

#[test]
fn double_double_tsqr_matches_the_kernel_to_more_digits() {
    let (x, y) = problem(300, 6, 7);
    let want = solve_lstsq(&x, &y, &LstsqOptions::default());
    let got = solve_lstsq_tsqr::<DD>(&x, &y, &TsqrOptions { tsqr: TsqrParams { block_rows: 37 }, ..TsqrOptions::default() });
    for j in 0..6 {
        assert!(close(got.coef[j], want.coef[j], 1e-14), "β{j}: {} against {}", got.coef[j], want.coef[j]);
    }
}

/// The column-major matrix of a problem, with y last.
fn matrix(x: &[DdColumn], y: &DdColumn) -> Vec<f64> {
    let mut a = Vec::new();
    for c in x {
        a.extend_from_slice(&c.hi);
    }
    a.extend_from_slice(&y.hi);
    a
}

/// RᵀR, which must equal XᵀX whatever the block order.
fn gram(r: &RFactor<f64>) -> Vec<f64> {
    let m = r.cols;
    let mut g = vec![0.0; m * m];
    for a in 0..m {
        for b in 0..m {
            g[a * m + b] = (0..=a.min(b)).map(|i| r.get(i, a) * r.get(i, b)).sum();
        }
    }
    g
}

#[test]
fn merged_r_factors_give_the_gram_matrix_in_any_order() {
    let (n, p) = (900, 6);
    let (x, y) = problem(n, p, 42);
    let m = p + 1;
    let a = matrix(&x, &y);
    // XᵀX in double-double, as the reference.
    let mut want = vec![0.0; m * m];
    for i in 0..m {
        for j in 0..m {
            let s = (0..n).fold(DD::ZERO, |s, r| s + DD::from_f64(a[i * n + r]) * DD::from_f64(a[j * n + r]));
            want[i * m + j] = s.to_f64();
        }
    }
    let part = |lo: usize, hi: usize| -> RFactor<f64> {
        let mut sub = Vec::new();
        for j in 0..m {
            sub.extend_from_slice(&a[j * n + lo..j * n + hi]);
        }
        factor_r(&sub, hi - lo, m, TsqrParams { block_rows: 64 })
    };
    let (r1, r2, r3) = (part(0, 250), part(250, 251), part(251, n));
    let whole = factor_r(&a, n, m, TsqrParams::default());
    let left = merge_r(&merge_r(&r1, &r2), &r3);
    let right = merge_r(&r3, &merge_r(&r2, &r1));
    assert_eq!(left.rows, n);
    assert_eq!(right.rows, n);
    for r in [&whole, &left, &right] {
        let g = gram(r);
        for k in 0..m * m {
            let scale = (want[(k / m) * m + k / m] * want[(k % m) * m + k % m]).sqrt();
            assert!((g[k] - want[k]).abs() <= 1e-13 * scale, "entry {k}: RᵀR {} XᵀX {}", g[k], want[k]);
        }
        // R is unique up to the signs of its rows.
        for i in 0..m {
            for j in i..m {
                let (u, v) = (r.get(i, j).abs(), whole.get(i, j).abs());
                assert!((u - v).abs() <= 1e-12 * whole.get(i, i).abs().max(v), "R({i},{j}) {u} against {v}");
            }
        }
    }
}

#[test]
fn streaming_rows_one_at_a_time_equals_factoring_the_matrix() {
    let (n, p) = (300, 4);
    let (x, y) = problem(n, p, 5);
    let a = matrix(&x, &y);
    let params = TsqrParams { block_rows: 64 };
    let mut s = StreamingQr::<f64>::new(p + 1, params);
    for i in 0..n {
        let row: Vec<f64> = (0..=p).map(|j| a[j * n + i]).collect();
        s.push_row(&row);
    }
    assert_eq!(s.finish(), factor_r(&a, n, p + 1, params), "the same blocks give the same R, bit for bit");
}

#[test]
fn tsqr_aliases_the_columns_the_kernel_aliases() {
    let (mut x, y) = problem(200, 5, 9);
    // x5 duplicates x2; x6 = x1 − 2·x3 exactly (small integers keep it exact).
    let ints = |seed: u64| -> Vec<f64> {
        let mut rng = SplitMix64::new(seed);
        (0..200).map(|_| (rng.below(21) as f64) - 10.0).collect()
    };
    x[1] = DdColumn::from_f64(ints(1));
    x[3] = DdColumn::from_f64(ints(3));
    x.push(x[2].clone());
    x.push(DdColumn::from_f64((0..200).map(|i| x[1].hi[i] - 2.0 * x[3].hi[i]).collect()));
    let want = solve_lstsq(&x, &y, &LstsqOptions::default());
    let got = solve_lstsq_tsqr::<f64>(&x, &y, &TsqrOptions::default());
    assert_eq!(want.aliased, vec![5, 6]);
    assert_eq!(got.aliased, want.aliased);
    assert_eq!(got.rank, want.rank);
    for j in 0..x.len() {
        assert_eq!(got.coef[j].is_nan(), want.coef[j].is_nan(), "β{j}");
        if !want.coef[j].is_nan() {
            assert!(close(got.coef[j], want.coef[j], 1e-10), "β{j}: {} against {}", got.coef[j], want.coef[j]);
        }
    }
}

/// A NIST set with a plain design (intercept and columns): X, y and the
/// certified coefficients.
fn nist(name: &str) -> (Vec<DdColumn>, DdColumn, Vec<f64>) {
    let dir = data_dir().join("nist-strd-lls");
    let meta = read_json(&dir.join(format!("{name}.json")));
    assert_eq!(meta["design"], "columns");
    let table = read_csv(&std::fs::read(dir.join(format!("{name}.csv"))).unwrap()).unwrap();
    let col = |k: usize| match &table.columns[k].data {
        ColumnData::Numeric(v) => v.to_vec(),
        _ => panic!("{name}: column {k} is not numeric"),
    };
    let n = table.n_rows();
    let mut x = vec![DdColumn::from_f64(vec![1.0; n])];
    for k in 1..table.columns.len() {
        x.push(DdColumn::from_f64(col(k)));
    }
    let beta = meta["certified"]["beta"].as_array().unwrap().iter().map(|v| v.as_str().unwrap().parse().unwrap()).collect();
    (x, DdColumn::from_f64(col(0)), beta)
}

fn min_lre(coef: &[f64], certified: &[f64]) -> f64 {
    coef.iter().zip(certified).map(|(&c, &t)| lre(c, t, 15.0)).fold(15.0, f64::min)
}

#[test]
fn nist_norris_and_longley_certified_coefficients() {
    // Norris is well conditioned: double precision is enough.
    let (x, y, beta) = nist("Norris");
    let small = TsqrOptions { tsqr: TsqrParams { block_rows: 7 }, ..TsqrOptions::default() };
    let mut got = solve_lstsq_tsqr::<f64>(&x, &y, &small);
    // One pass, no refinement: about 12 digits (11.9 measured).
    assert!(min_lre(&got.coef, &beta) >= 11.0, "Norris in f64: {:.1} digits", min_lre(&got.coef, &beta));
    refine_tsqr::<f64>(&x, &y, &mut got, 2);
    assert!(min_lre(&got.coef, &beta) >= 13.0, "Norris in f64, refined: {:.1} digits", min_lre(&got.coef, &beta));
    let rss: f64 = read_json(&data_dir().join("nist-strd-lls/Norris.json"))["certified"]["anova"]["ss_residual"].as_str().unwrap().parse().unwrap();
    assert!(lre(got.rss.to_f64(), rss, 15.0) >= 13.0, "Norris RSS {} against {rss}", got.rss.to_f64());
    let got = solve_lstsq_tsqr::<DD>(&x, &y, &small);
    assert!(min_lre(&got.coef, &beta) >= 13.0, "Norris in double-double: {:.1} digits", min_lre(&got.coef, &beta));
    // Longley is ill conditioned (the main kernel takes its double-double
    // path); the streaming path in double-double reaches the certified
    // digits too, block size 3 included.
    let (x, y, beta) = nist("Longley");
    for block in [3, 16, 256] {
        let o = TsqrOptions { tsqr: TsqrParams { block_rows: block }, ..TsqrOptions::default() };
        let got = solve_lstsq_tsqr::<DD>(&x, &y, &o);
        assert!(min_lre(&got.coef, &beta) >= 13.0, "Longley, block {block}: {:.1} digits", min_lre(&got.coef, &beta));
        let rss: f64 = read_json(&data_dir().join("nist-strd-lls/Longley.json"))["certified"]["anova"]["ss_residual"]
            .as_str()
            .unwrap()
            .parse()
            .unwrap();
        assert!(lre(got.rss.to_f64(), rss, 15.0) >= 12.0, "Longley RSS {} against {rss}", got.rss.to_f64());
    }
    // In double precision with two refinement passes (13.9 digits before
    // refinement and 14.6 after, measured).
    let mut fast = solve_lstsq_tsqr::<f64>(&x, &y, &TsqrOptions::default());
    refine_tsqr::<f64>(&x, &y, &mut fast, 2);
    assert!(min_lre(&fast.coef, &beta) >= 13.0, "Longley in f64, refined: {:.1} digits", min_lre(&fast.coef, &beta));
    let kernel = solve_lstsq(&x, &y, &LstsqOptions::default());
    let got = solve_lstsq_tsqr::<DD>(&x, &y, &TsqrOptions::default());
    for j in 0..x.len() {
        assert!(close(got.coef[j], kernel.coef[j], 1e-13), "Longley β{j}: {} against the kernel's {}", got.coef[j], kernel.coef[j]);
    }
}
