//! What each diagnostic plot shows, as plain data: the same figures feed
//! the canvas on the page and the PNG files of the CLI.

use crate::diagnostics::lowess::lowess;
use crate::diagnostics::CheckReport;
use crate::model::Fitted;
use crate::table::Table;
use serde::{Deserialize, Serialize};
use statrs::distribution::{Beta, ContinuousCDF, Normal};

/// A set of points, each tied to its row in the user's file.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Points {
    pub label: String,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// Source row numbers, for hovering.
    pub rows: Vec<usize>,
}

/// What a line is for, which sets its look.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LineRole {
    Smooth,
    Reference,
    Band,
    Contour,
    Fit,
}

/// A polyline.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Line {
    pub label: String,
    pub role: LineRole,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
}

/// A histogram: bin edges and counts.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Bars {
    pub edges: Vec<f64>,
    pub counts: Vec<usize>,
}

/// A labelled square matrix of values in [-1, 1].
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Heatmap {
    pub labels: Vec<String>,
    pub values: Vec<Vec<f64>>,
}

/// One figure.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Figure {
    /// A stable identifier, also the PNG file name.
    pub id: String,
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub points: Vec<Points>,
    pub lines: Vec<Line>,
    pub bars: Option<Bars>,
    pub heatmap: Option<Heatmap>,
}

impl Figure {
    fn new(id: &str, title: &str, x_label: &str, y_label: &str) -> Figure {
        Figure {
            id: id.to_string(),
            title: title.to_string(),
            x_label: x_label.to_string(),
            y_label: y_label.to_string(),
            points: Vec::new(),
            lines: Vec::new(),
            bars: None,
            heatmap: None,
        }
    }

    /// Drops points and line vertices that are not finite numbers (JSON
    /// cannot carry them, and they cannot be drawn).
    fn finite(mut self) -> Figure {
        for p in &mut self.points {
            let keep: Vec<usize> = (0..p.x.len()).filter(|&i| p.x[i].is_finite() && p.y[i].is_finite()).collect();
            p.x = keep.iter().map(|&i| p.x[i]).collect();
            p.y = keep.iter().map(|&i| p.y[i]).collect();
            p.rows = keep.iter().map(|&i| p.rows[i]).collect();
        }
        for l in &mut self.lines {
            let keep: Vec<usize> = (0..l.x.len()).filter(|&i| l.x[i].is_finite() && l.y[i].is_finite()).collect();
            l.x = keep.iter().map(|&i| l.x[i]).collect();
            l.y = keep.iter().map(|&i| l.y[i]).collect();
        }
        if let Some(h) = &mut self.heatmap {
            for row in &mut h.values {
                for v in row.iter_mut() {
                    if !v.is_finite() {
                        *v = 0.0;
                    }
                }
            }
        }
        self
    }

    /// A file name for the figure, without extension.
    pub fn file_stem(&self) -> String {
        self.id.chars().map(|c| if c.is_ascii_alphanumeric() || c == '-' { c } else { '_' }).collect()
    }
}

/// Smoothing span of the plots' LOWESS (Cleveland's suggested default).
const SPAN: f64 = 2.0 / 3.0;
/// Robustness passes of the plots' LOWESS (Cleveland's suggestion).
const ROBUST_PASSES: usize = 3;

fn smooth_line(x: &[f64], y: &[f64]) -> Line {
    let s = lowess(x, y, SPAN, ROBUST_PASSES);
    let mut pairs: Vec<(f64, f64)> = x.iter().copied().zip(s).collect();
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    Line { label: "smoother (LOWESS)".into(), role: LineRole::Smooth, x: pairs.iter().map(|p| p.0).collect(), y: pairs.iter().map(|p| p.1).collect() }
}

fn span(v: &[f64]) -> (f64, f64) {
    let lo = v.iter().copied().filter(|x| x.is_finite()).fold(f64::INFINITY, f64::min);
    let hi = v.iter().copied().filter(|x| x.is_finite()).fold(f64::NEG_INFINITY, f64::max);
    (lo, hi)
}

fn hline(y: f64, x: &[f64], label: &str) -> Line {
    let (lo, hi) = span(x);
    Line { label: label.into(), role: LineRole::Reference, x: vec![lo, hi], y: vec![y, y] }
}

/// Every diagnostic figure of a checked model.
pub fn all_plots(c: &CheckReport, f: &Fitted, table: &Table) -> Vec<Figure> {
    let rows: Vec<usize> = c.rows.iter().map(|r| r.row).collect();
    let fitted: Vec<f64> = c.rows.iter().map(|r| r.fitted).collect();
    let resid: Vec<f64> = c.rows.iter().map(|r| r.residual).collect();
    let std: Vec<f64> = c.rows.iter().map(|r| r.standardized).collect();
    let stud: Vec<f64> = c.rows.iter().map(|r| r.studentized).collect();
    let lev: Vec<f64> = c.rows.iter().map(|r| r.leverage).collect();
    let response = &c.fit.response;
    let mut out = Vec::new();

    let mut g = Figure::new("residuals-vs-fitted", "Residuals against fitted values", &format!("fitted {response}"), "residual");
    g.points.push(Points { label: "rows".into(), x: fitted.clone(), y: resid.clone(), rows: rows.clone() });
    g.lines.push(hline(0.0, &fitted, "zero"));
    g.lines.push(smooth_line(&fitted, &resid));
    out.push(g);

    out.push(qq_figure(&std, &rows));

    let root: Vec<f64> = std.iter().map(|v| v.abs().sqrt()).collect();
    let mut g = Figure::new("scale-location", "Spread against fitted values", &format!("fitted {response}"), "√|standardized residual|");
    g.points.push(Points { label: "rows".into(), x: fitted.clone(), y: root.clone(), rows: rows.clone() });
    g.lines.push(smooth_line(&fitted, &root));
    out.push(g);

    out.push(leverage_figure(c, &lev, &stud, &rows));
    out.push(histogram_figure(&resid));
    out.extend(component_residual_figures(f, &resid, &rows));
    out.extend(response_figures(c, f, table, &rows));
    out.push(correlation_figure(f));
    out.into_iter().map(Figure::finite).collect()
}

/// Normal Q–Q plot of the standardized residuals with Blom's plotting
/// positions (i − 3/8)/(n + 1/4) and a pointwise 95% band from the Beta
/// distribution of uniform order statistics.
fn qq_figure(std: &[f64], rows: &[usize]) -> Figure {
    let n = std.len();
    let mut idx: Vec<usize> = (0..n).collect();
    idx.sort_by(|&a, &b| std[a].total_cmp(&std[b]));
    let z = Normal::new(0.0, 1.0).expect("unit normal");
    let nf = n as f64;
    let theo: Vec<f64> = (1..=n).map(|i| z.inverse_cdf((i as f64 - 0.375) / (nf + 0.25))).collect();
    let mut g = Figure::new("normal-qq", "Normal Q–Q plot of the residuals", "normal quantile", "standardized residual");
    g.points.push(Points {
        label: "rows".into(),
        x: theo.clone(),
        y: idx.iter().map(|&i| std[i]).collect(),
        rows: idx.iter().map(|&i| rows[i]).collect(),
    });
    let (mut lo, mut hi) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for i in 1..=n {
        let b = Beta::new(i as f64, nf + 1.0 - i as f64).expect("positive shapes");
        lo.push(z.inverse_cdf(b.inverse_cdf(0.025)));
        hi.push(z.inverse_cdf(b.inverse_cdf(0.975)));
    }
    let (a, b) = span(&theo);
    g.lines.push(Line { label: "normal line".into(), role: LineRole::Reference, x: vec![a, b], y: vec![a, b] });
    g.lines.push(Line { label: "95% band (pointwise)".into(), role: LineRole::Band, x: theo.clone(), y: lo });
    g.lines.push(Line { label: "95% band (pointwise)".into(), role: LineRole::Band, x: theo, y: hi });
    g
}

/// Leverage against studentized residual with Cook's distance contours.
/// A contour D = c satisfies r² = c·p(1 − h)/h in standardized units,
/// converted to studentized units by t = r·√((n − p − 1)/(n − p − r²)).
fn leverage_figure(c: &CheckReport, lev: &[f64], stud: &[f64], rows: &[usize]) -> Figure {
    let n = lev.len() as f64;
    let p = c.fit.rank as f64;
    let mut g = Figure::new("leverage", "Leverage and influence", "leverage", "studentized residual");
    g.points.push(Points { label: "rows".into(), x: lev.to_vec(), y: stud.to_vec(), rows: rows.to_vec() });
    let (_, hmax) = span(lev);
    let top = (hmax * 1.1).clamp(0.05, 0.999);
    for level in [0.5, 1.0] {
        for sign in [1.0, -1.0] {
            let mut xs = Vec::new();
            let mut ys = Vec::new();
            for k in 1..=60 {
                let h = top * k as f64 / 60.0;
                let r2 = level * p * (1.0 - h) / h;
                if r2 >= n - p {
                    continue;
                }
                let t = r2.sqrt() * ((n - p - 1.0) / (n - p - r2)).sqrt();
                xs.push(h);
                ys.push(sign * t);
            }
            g.lines.push(Line { label: format!("Cook's distance {level}"), role: LineRole::Contour, x: xs, y: ys });
        }
    }
    g
}

/// Histogram with Sturges' number of bins, and the normal density with the
/// residuals' mean and sd, scaled to counts.
fn histogram_figure(resid: &[f64]) -> Figure {
    let n = resid.len();
    let (lo, hi) = span(resid);
    let bins = ((n as f64).log2().ceil() as usize + 1).max(1);
    let width = if hi > lo { (hi - lo) / bins as f64 } else { 1.0 };
    let edges: Vec<f64> = (0..=bins).map(|k| lo + width * k as f64).collect();
    let mut counts = vec![0usize; bins];
    for &r in resid {
        let k = (((r - lo) / width) as usize).min(bins - 1);
        counts[k] += 1;
    }
    let mean = resid.iter().sum::<f64>() / n as f64;
    let sd = (resid.iter().map(|r| (r - mean) * (r - mean)).sum::<f64>() / (n as f64 - 1.0).max(1.0)).sqrt();
    let mut g = Figure::new("residual-histogram", "Distribution of the residuals", "residual", "rows");
    if sd > 0.0 {
        let xs: Vec<f64> = (0..=80).map(|k| lo - width + (hi - lo + 2.0 * width) * k as f64 / 80.0).collect();
        let ys: Vec<f64> = xs
            .iter()
            .map(|x| n as f64 * width * (-(x - mean).powi(2) / (2.0 * sd * sd)).exp() / (sd * (2.0 * std::f64::consts::PI).sqrt()))
            .collect();
        g.lines.push(Line { label: "normal curve".into(), role: LineRole::Fit, x: xs, y: ys });
    }
    g.bars = Some(Bars { edges, counts });
    g
}

/// Component-plus-residual plots, one per single-column numeric term:
/// β̂ⱼxⱼ + e against xⱼ, with the line β̂ⱼxⱼ and a smoother.
fn component_residual_figures(f: &Fitted, resid: &[f64], rows: &[usize]) -> Vec<Figure> {
    let d = &f.design;
    let mut out = Vec::new();
    for (t, term) in f.report.terms.iter().enumerate() {
        let cols: Vec<usize> = (0..d.columns.len()).filter(|&j| d.columns[j].term == Some(t)).collect();
        let [j] = cols[..] else { continue };
        if f.solution.aliased.contains(&j) {
            continue;
        }
        let b = f.solution.coef[j];
        let x: Vec<f64> = (0..resid.len()).map(|i| d.columns[j].values.get(i).to_f64()).collect();
        if span(&x).0 == span(&x).1 {
            continue;
        }
        let y: Vec<f64> = x.iter().zip(resid).map(|(xi, e)| b * xi + e).collect();
        let mut g = Figure::new(
            &format!("component-residual-{}", t + 1),
            &format!("Component plus residual: {term}"),
            term,
            &format!("{}·{term} + residual", crate::text::short(b, 3)),
        );
        g.points.push(Points { label: "rows".into(), x: x.clone(), y: y.clone(), rows: rows.to_vec() });
        let (lo, hi) = span(&x);
        g.lines.push(Line { label: "the model's line".into(), role: LineRole::Fit, x: vec![lo, hi], y: vec![b * lo, b * hi] });
        g.lines.push(smooth_line(&x, &y));
        out.push(g);
    }
    out
}

/// The response as modelled against each numeric column the model reads.
fn response_figures(c: &CheckReport, f: &Fitted, table: &Table, rows: &[usize]) -> Vec<Figure> {
    let d = &f.design;
    let y: Vec<f64> = (0..rows.len()).map(|i| d.response.get(i).to_f64()).collect();
    let mut names: Vec<String> = Vec::new();
    for term in &c.fit.terms {
        if let Ok(t) = crate::terms::parse_term(term) {
            if t.has_category() {
                continue;
            }
            for col in t.columns() {
                if !names.iter().any(|n| n == col) {
                    names.push(col.to_string());
                }
            }
        }
    }
    let mut out = Vec::new();
    for (k, name) in names.iter().enumerate() {
        let Some(col) = table.column(name) else { continue };
        let x: Vec<f64> = match &col.data {
            crate::table::ColumnData::Numeric(v) | crate::table::ColumnData::Date(v) => d.rows.iter().map(|&i| v[i]).collect(),
            crate::table::ColumnData::Text(_) => continue,
        };
        let mut g = Figure::new(&format!("response-vs-{}", k + 1), &format!("{} against {name}", c.fit.response), name, &c.fit.response);
        g.points.push(Points { label: "rows".into(), x: x.clone(), y: y.clone(), rows: rows.to_vec() });
        g.lines.push(smooth_line(&x, &y));
        out.push(g);
    }
    out
}

/// Correlations among the response and the model's columns.
fn correlation_figure(f: &Fitted) -> Figure {
    let d = &f.design;
    let n = d.rows.len();
    let mut labels = vec![f.report.response.clone()];
    let mut vals: Vec<Vec<f64>> = vec![(0..n).map(|i| d.response.get(i).to_f64()).collect()];
    for (j, c) in d.columns.iter().enumerate() {
        if c.term.is_some() && !f.solution.aliased.contains(&j) {
            labels.push(c.label.clone());
            vals.push((0..n).map(|i| c.values.get(i).to_f64()).collect());
        }
    }
    let centred: Vec<Vec<f64>> = vals
        .iter()
        .map(|v| {
            let m = v.iter().sum::<f64>() / n as f64;
            let c: Vec<f64> = v.iter().map(|x| x - m).collect();
            let s = c.iter().map(|x| x * x).sum::<f64>().sqrt();
            c.iter().map(|x| if s > 0.0 { x / s } else { 0.0 }).collect()
        })
        .collect();
    let k = centred.len();
    let values: Vec<Vec<f64>> =
        (0..k).map(|a| (0..k).map(|b| centred[a].iter().zip(&centred[b]).map(|(x, y)| x * y).sum::<f64>().clamp(-1.0, 1.0)).collect()).collect();
    let mut g = Figure::new("correlations", "Correlations between the response and the model's columns", "", "");
    g.heatmap = Some(Heatmap { labels, values });
    g
}
