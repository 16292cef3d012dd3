//! The column profile: for each column, what kind of thing it holds, its
//! summaries, and what a careful analyst would do about it before fitting
//! (treat codes as categories, transform a skewed amount, leave an
//! identifier out), each with its reason in one plain sentence.
//!
//! Thresholds (all common practice, no source, except where named):
//! * skew: |G1| > 1 is strong, 0.5–1 moderate;
//! * coded category: whole numbers with 3–12 distinct values that are
//!   (nearly) consecutive small codes starting at 0 or 1, or up to 20
//!   distinct whole numbers in a column whose name reads like a code
//!   (zone, region, type, class, group, code, district, ...);
//! * identifier: every value distinct, and either text or a run of
//!   consecutive whole numbers (or any whole numbers, when the name reads
//!   like an identifier), with at least 5 values.

pub mod stats;
pub mod transform;

use crate::table::{Column, ColumnData, Table};
use serde::Serialize;
use stats::{skewness, summarise, Summary};

/// What a column holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    Identifier,
    Numeric,
    CodedCategory,
    TextCategory,
    Binary,
    Date,
    Constant,
    Empty,
}

impl Kind {
    pub fn parse(s: &str) -> Option<Kind> {
        Some(match s {
            "identifier" => Kind::Identifier,
            "numeric" => Kind::Numeric,
            "coded_category" | "category" => Kind::CodedCategory,
            "text_category" => Kind::TextCategory,
            "binary" => Kind::Binary,
            "date" => Kind::Date,
            "constant" => Kind::Constant,
            "empty" => Kind::Empty,
            _ => return None,
        })
    }
}

/// A transform suggested for a skewed column.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Suggestion {
    /// `log`, `sqrt`, `boxcox` or `yeojohnson`.
    pub name: &'static str,
    /// The term to use, e.g. `log(area)` or `boxcox(area, 0.21)`.
    pub term: String,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub lambda: Option<f64>,
    /// Box–Cox 95% likelihood interval for λ.
    pub lambda_ci: Option<[f64; 2]>,
    /// When λ was estimated from evenly spaced quantiles of a long column
    /// (see [`LAMBDA_SAMPLE`]): how many values it was estimated from.
    pub lambda_from: Option<usize>,
    #[serde(serialize_with = "crate::schema::num")]
    pub skewness_after: f64,
}

/// One column's profile.
#[derive(Clone, Debug, Serialize)]
pub struct ColumnProfile {
    pub name: String,
    pub kind: Kind,
    /// True when the user set the kind.
    pub kind_set_by_user: bool,
    pub missing: usize,
    /// Spreadsheet error values (read as missing, included in `missing`).
    pub errors: usize,
    /// Cells that were neither a value nor missing in a numeric column.
    pub invalid: usize,
    pub distinct: usize,
    /// Summaries of the numbers (or of the dates, as days).
    pub summary: Summary,
    #[serde(serialize_with = "crate::schema::opt_num")]
    pub skewness: Option<f64>,
    /// `strong`, `moderate` or `none` (for numeric columns).
    pub skew: Option<&'static str>,
    pub suggested_transform: Option<Suggestion>,
    /// Whether the column is offered as a predictor by default.
    pub offer_as_predictor: bool,
    /// The verdict in one plain sentence.
    pub reason: String,
    /// The first distinct values, for display.
    pub examples: Vec<String>,
}

/// The profile of a whole table.
#[derive(Clone, Debug, Serialize)]
pub struct TableProfile {
    pub rows: usize,
    pub columns: Vec<ColumnProfile>,
}

/// Options of the profile.
#[derive(Clone, Debug, Default)]
pub struct ProfileOptions {
    /// Kinds the user has set, by column name; they replace the detected kind.
    pub kinds: Vec<(String, Kind)>,
}

const CODE_WORDS: [&str; 22] = [
    "zone", "region", "type", "class", "group", "code", "district", "category", "cat", "grade", "level", "site",
    "dept", "department", "segment", "tier", "band", "status", "kind", "sector", "branch", "depot",
];
const ID_WORDS: [&str; 6] = ["id", "key", "number", "no", "ref", "identifier"];

/// Words of a column name, split at non-letters and camel case.
fn name_words(name: &str) -> Vec<String> {
    let mut words = Vec::new();
    let mut cur = String::new();
    let mut prev_lower = false;
    for ch in name.chars() {
        if !ch.is_alphanumeric() {
            if !cur.is_empty() {
                words.push(std::mem::take(&mut cur));
            }
            prev_lower = false;
            continue;
        }
        if ch.is_uppercase() && prev_lower && !cur.is_empty() {
            words.push(std::mem::take(&mut cur));
        }
        prev_lower = ch.is_lowercase();
        cur.extend(ch.to_lowercase());
    }
    if !cur.is_empty() {
        words.push(cur);
    }
    words
}

fn has_word(name: &str, list: &[&str]) -> bool {
    name_words(name).iter().any(|w| list.contains(&w.as_str()))
}

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// A count with thousands separated by commas: 1,382,206.
fn thousands(n: usize) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

fn fmt(v: f64) -> String {
    crate::text::short(v, 3)
}

/// The terms the profile suggests as candidates: categories as `cat()`,
/// skewed columns with their suggested transform, other numeric columns as
/// they are; identifiers, constants, empty and date columns are left out,
/// and so are the columns named in `exclude` (the response).
pub fn default_terms(profile: &TableProfile, exclude: &[&str]) -> Vec<String> {
    let mut out = Vec::new();
    for c in &profile.columns {
        if exclude.contains(&c.name.as_str()) || !c.offer_as_predictor {
            continue;
        }
        let q = crate::terms::parse::quote_name(&c.name);
        let is_text = c.summary.mean.is_none();
        let term = match c.kind {
            Kind::CodedCategory | Kind::TextCategory => format!("cat({q})"),
            Kind::Binary if is_text => format!("cat({q})"),
            Kind::Numeric => c.suggested_transform.as_ref().map_or(q.clone(), |t| t.term.clone()),
            Kind::Binary => q,
            _ => continue,
        };
        out.push(term);
    }
    out
}

/// Profiles every column.
pub fn profile_table(table: &Table, options: &ProfileOptions) -> TableProfile {
    profile_table_progress(table, options, &mut |_| true).expect("never stopped")
}

/// As [`profile_table`], calling `progress` with the share of columns
/// profiled after each column; `None` when `progress` returns `false`
/// (the caller stopped it).
pub fn profile_table_progress(table: &Table, options: &ProfileOptions, progress: crate::read::Progress) -> Option<TableProfile> {
    let total = table.columns.len().max(1) as f64;
    let mut columns = Vec::with_capacity(table.columns.len());
    for (j, c) in table.columns.iter().enumerate() {
        let forced = options.kinds.iter().find(|(n, _)| *n == c.name).map(|(_, k)| *k);
        columns.push(profile_column(c, forced));
        if !progress((j + 1) as f64 / total) {
            return None;
        }
    }
    Some(TableProfile { rows: table.n_rows(), columns })
}

/// Profiles one column; `forced` is the kind the user set, if any.
pub fn profile_column(col: &Column, forced: Option<Kind>) -> ColumnProfile {
    let n = col.data.len();
    let name = col.name.as_str();
    let mut p = ColumnProfile {
        name: name.to_string(),
        kind: Kind::Empty,
        kind_set_by_user: false,
        missing: (0..n).filter(|&i| col.data.is_missing(i)).count(),
        errors: col.errors,
        invalid: col.invalid_count,
        distinct: 0,
        summary: Summary::default(),
        skewness: None,
        skew: None,
        suggested_transform: None,
        offer_as_predictor: false,
        reason: String::new(),
        examples: Vec::new(),
    };
    match &col.data {
        ColumnData::Numeric(v) | ColumnData::Date(v) => {
            let vals: Vec<f64> = v.iter().copied().filter(|x| !x.is_nan()).collect();
            let mut sorted = vals.clone();
            sorted.sort_by(|a, b| a.total_cmp(b));
            sorted.dedup();
            p.distinct = sorted.len();
            p.summary = summarise(&vals);
            let is_date = matches!(col.data, ColumnData::Date(_));
            p.examples = sorted
                .iter()
                .take(8)
                .map(|&x| if is_date { crate::read::cells::format_date(x) } else { format!("{x}") })
                .collect();
            if is_date {
                p.kind = Kind::Date;
                p.reason = format!("Dates from {} to {}.", p.examples.first().cloned().unwrap_or_default(), {
                    sorted.last().map(|&x| crate::read::cells::format_date(x)).unwrap_or_default()
                });
            } else {
                numeric_verdict(&mut p, &vals, &sorted);
            }
        }
        ColumnData::Text(cells) => {
            let mut seen: Vec<&str> = Vec::new();
            let mut distinct = std::collections::HashSet::new();
            for s in cells.iter().flatten() {
                if distinct.insert(s.as_str()) && seen.len() < 8 {
                    seen.push(s);
                }
            }
            p.distinct = distinct.len();
            p.summary.count = n - p.missing;
            p.examples = seen.iter().map(|s| s.to_string()).collect();
            text_verdict(&mut p, n);
        }
    }
    if let Some(k) = forced {
        if k != p.kind {
            p.kind = k;
            p.kind_set_by_user = true;
            p.reason = format!("Set by you to {}.", serde_json::to_string(&k).unwrap_or_default().trim_matches('"'));
            p.offer_as_predictor = !matches!(k, Kind::Identifier | Kind::Constant | Kind::Empty);
            if k != Kind::Numeric {
                p.suggested_transform = None;
            }
        }
    }
    p
}

fn numeric_verdict(p: &mut ColumnProfile, vals: &[f64], distinct: &[f64]) {
    let name = p.name.clone();
    let k = distinct.len();
    let count = vals.len();
    if count == 0 {
        p.kind = Kind::Empty;
        p.reason = "Every cell is missing.".into();
        return;
    }
    if k == 1 {
        p.kind = Kind::Constant;
        p.reason = format!("Every value is {}: it cannot explain anything.", distinct[0]);
        return;
    }
    p.offer_as_predictor = true;
    let whole = distinct.iter().all(|x| x.fract() == 0.0);
    if k == 2 {
        p.kind = Kind::Binary;
        p.reason = format!("Two values, {} and {}: a yes/no or two-group column.", distinct[0], distinct[1]);
        return;
    }
    let consecutive = whole && distinct.windows(2).all(|w| w[1] - w[0] == 1.0);
    if whole && k == count && count >= 5 && (consecutive || has_word(&name, &ID_WORDS)) {
        p.kind = Kind::Identifier;
        p.offer_as_predictor = false;
        p.reason = format!(
            "{} whole numbers, one per row ({}, {}, ...): this labels the rows rather than measuring anything.",
            k,
            distinct[0],
            distinct[1]
        );
        return;
    }
    let (lo, hi) = (distinct[0], distinct[k - 1]);
    let span = hi - lo + 1.0;
    let small_codes = whole && (3..=12).contains(&k) && (lo == 0.0 || lo == 1.0) && span <= (k + 2) as f64;
    let named_codes = whole && (3..=20).contains(&k) && has_word(&name, &CODE_WORDS) && count >= 2 * k;
    if (small_codes && count >= 2 * k) || named_codes {
        p.kind = Kind::CodedCategory;
        p.reason = coded_reason(&name, distinct);
        return;
    }
    p.kind = Kind::Numeric;
    let g1 = skewness(vals);
    p.skewness = g1;
    let Some(g) = g1 else {
        p.reason = format!("Numbers, {} distinct.", k);
        return;
    };
    let strength = if g.abs() > 1.0 {
        "strong"
    } else if g.abs() > 0.5 {
        "moderate"
    } else {
        "none"
    };
    p.skew = Some(strength);
    let side = if g > 0.0 { "right" } else { "left" };
    let se = p.summary.skewness_se.unwrap_or(f64::NAN);
    if strength == "none" {
        p.reason = format!("Numbers, {} distinct, roughly symmetric (skewness {}).", k, fmt(g));
        return;
    }
    p.suggested_transform = suggest(&name, vals, whole && lo >= 0.0);
    p.reason = match &p.suggested_transform {
        Some(s) if s.lambda_from.is_some() => format!(
            "Numbers, {}ly {side}-skewed (skewness {} ± {}); {} brings the skewness to {} (λ estimated from {} evenly spaced \
             quantiles of the {} values, to keep the profile quick).",
            strength,
            fmt(g),
            fmt(se),
            s.term,
            fmt(s.skewness_after),
            thousands(s.lambda_from.unwrap_or(0)),
            thousands(vals.len())
        ),
        Some(s) => format!(
            "Numbers, {}ly {side}-skewed (skewness {} ± {}); {} brings the skewness to {}.",
            strength,
            fmt(g),
            fmt(se),
            s.term,
            fmt(s.skewness_after)
        ),
        None => format!("Numbers, {}ly {side}-skewed (skewness {} ± {}).", strength, fmt(g), fmt(se)),
    };
}

/// "5 distinct whole numbers 1–5: as an amount this would say zone 4 is
/// twice zone 2."
fn coded_reason(name: &str, codes: &[f64]) -> String {
    let k = codes.len();
    let (lo, hi) = (codes[0], codes[k - 1]);
    let head = format!("{k} distinct whole numbers {lo}–{hi}");
    let pair = codes.iter().rev().find(|&&a| a > 0.0 && codes.contains(&(2.0 * a))).copied();
    match pair {
        Some(a) => format!(
            "{head}: as an amount this would say {name} {} is twice {name} {a}; they read as codes, so use cat({}).",
            2.0 * a,
            crate::terms::parse::quote_name(name)
        ),
        None => format!(
            "{head}: as an amount this would treat the step from {name} {lo} to {} like every other step; \
             they read as codes, so use cat({}).",
            codes[1],
            crate::terms::parse::quote_name(name)
        ),
    }
}

/// The transform with the smallest remaining |skewness|, preferring the
/// simpler log or sqrt when within 0.1 of the best.
fn suggest(name: &str, vals: &[f64], counts: bool) -> Option<Suggestion> {
    let q = crate::terms::parse::quote_name(name);
    let positive = vals.iter().all(|&v| v > 0.0);
    let mut options: Vec<Suggestion> = Vec::new();
    let after = |f: &dyn Fn(f64) -> f64| skewness(&vals.iter().map(|&v| f(v)).collect::<Vec<_>>());
    if positive {
        if let Some(s) = after(&f64::ln) {
            options.push(Suggestion { name: "log", term: format!("log({q})"), lambda: None, lambda_ci: None, lambda_from: None, skewness_after: s });
        }
    }
    if counts {
        if let Some(s) = after(&f64::sqrt) {
            options.push(Suggestion { name: "sqrt", term: format!("sqrt({q})"), lambda: None, lambda_ci: None, lambda_from: None, skewness_after: s });
        }
    }
    // λ comes from a quantile sample of a long column; the skewness after
    // each transform is measured on every value.
    let sample = lambda_sample(vals);
    let lambda_from = (sample.len() < vals.len()).then_some(sample.len());
    if positive {
        if let Some(fit) = transform::fit_boxcox(&sample, 0.95) {
            let l = round_lambda(fit.lambda);
            if let Some(s) = after(&|v| transform::boxcox(v, l)) {
                options.push(Suggestion {
                    name: "boxcox",
                    term: format!("boxcox({q}, {l})"),
                    lambda: Some(fit.lambda),
                    lambda_ci: Some([fit.ci_low, fit.ci_high]),
                    lambda_from,
                    skewness_after: s,
                });
            }
        }
    } else if let Some(l) = transform::fit_yeojohnson(&sample) {
        let lr = round_lambda(l);
        if let Some(s) = after(&|v| transform::yeojohnson(v, lr)) {
            options.push(Suggestion {
                name: "yeojohnson",
                term: format!("yeojohnson({q}, {lr})"),
                lambda: Some(l),
                lambda_ci: None,
                lambda_from,
                skewness_after: s,
            });
        }
    }
    // When the Box–Cox interval contains 0 the likelihood does not tell log
    // apart from the fitted power, and log is easier to explain.
    let log_in_ci = options.iter().any(|o| o.lambda_ci.is_some_and(|[a, b]| a <= 0.0 && 0.0 <= b));
    if log_in_ci {
        if let Some(l) = options.iter().find(|o| o.name == "log") {
            return Some(l.clone());
        }
    }
    let best = options.iter().map(|o| o.skewness_after.abs()).fold(f64::INFINITY, f64::min);
    let simple = options.iter().find(|o| matches!(o.name, "log" | "sqrt") && o.skewness_after.abs() <= best + 0.1);
    simple.or_else(|| options.iter().find(|o| o.skewness_after.abs() == best)).cloned()
}

/// Values beyond which λ is estimated from a sample: Box–Cox and
/// Yeo–Johnson take a few hundred evaluations of a likelihood over every
/// value, which for a column of a million rows is seconds per column.
/// 50,000 values pin λ to about ±0.01 for smooth data (the likelihood
/// interval narrows as 1/√n; common practice, no source for the number).
pub const LAMBDA_SAMPLE: usize = 50_000;

/// The values λ is estimated from: all of them, or for a longer column
/// [`LAMBDA_SAMPLE`] evenly spaced quantiles (the value at rank
/// ⌊(i + ½)·n/m⌋ of the sorted column for i = 0..m), which keep the shape
/// of the distribution, tails included, without drawing at random.
fn lambda_sample(vals: &[f64]) -> std::borrow::Cow<'_, [f64]> {
    let (n, m) = (vals.len(), LAMBDA_SAMPLE);
    if n <= m {
        return std::borrow::Cow::Borrowed(vals);
    }
    let mut sorted = vals.to_vec();
    sorted.sort_unstable_by(f64::total_cmp);
    std::borrow::Cow::Owned((0..m).map(|i| sorted[((2 * i + 1) * n) / (2 * m)]).collect())
}

/// λ to two decimals, for a readable term.
fn round_lambda(l: f64) -> f64 {
    (l * 100.0).round() / 100.0
}

fn text_verdict(p: &mut ColumnProfile, n: usize) {
    let k = p.distinct;
    let filled = n - p.missing;
    if filled == 0 {
        p.kind = Kind::Empty;
        p.reason = "Every cell is missing.".into();
        return;
    }
    if k == 1 {
        p.kind = Kind::Constant;
        p.reason = format!("Every value is \"{}\": it cannot explain anything.", p.examples[0]);
        return;
    }
    if k == 2 {
        p.kind = Kind::Binary;
        p.offer_as_predictor = true;
        p.reason = format!("Two values, \"{}\" and \"{}\": a two-group column; use cat({}).", p.examples[0], p.examples[1], crate::terms::parse::quote_name(&p.name));
        return;
    }
    if filled >= 5 && (k == filled || (filled >= 50 && k * 10 >= filled * 9)) {
        p.kind = Kind::Identifier;
        p.reason = format!(
            "{} different texts in {} ({}, {}, ...): this labels the rows rather than grouping them.",
            k,
            plural(filled, "row", "rows"),
            p.examples[0],
            p.examples[1]
        );
        return;
    }
    p.kind = Kind::TextCategory;
    p.offer_as_predictor = true;
    p.reason = format!(
        "Text with {} values ({}{}); use cat({}).",
        k,
        p.examples.iter().take(4).map(|s| format!("\"{s}\"")).collect::<Vec<_>>().join(", "),
        if k > 4 { ", ..." } else { "" },
        crate::terms::parse::quote_name(&p.name)
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_profile_reports_each_column_done_and_can_be_stopped() {
        let t = Table::from_numeric(vec![("a".into(), vec![1.0, 2.0, 4.0]), ("b".into(), vec![3.0, 1.0, 2.0]), ("c".into(), vec![0.0; 3])]);
        let mut seen = Vec::new();
        let p = profile_table_progress(&t, &ProfileOptions::default(), &mut |s| {
            seen.push(s);
            true
        });
        assert_eq!(p.map(|p| p.columns.len()), Some(3));
        assert_eq!(seen, [1.0 / 3.0, 2.0 / 3.0, 1.0]);
        let mut calls = 0;
        let stopped = profile_table_progress(&t, &ProfileOptions::default(), &mut |_| {
            calls += 1;
            calls < 2
        });
        assert!(stopped.is_none());
        assert_eq!(calls, 2, "stops right after the column whose report said stop");
    }

    #[test]
    fn counts_are_written_with_thousands_separated() {
        assert_eq!(thousands(7), "7");
        assert_eq!(thousands(50_000), "50,000");
        assert_eq!(thousands(1_382_206), "1,382,206");
    }

    /// A long skewed column: λ from the quantile sample is the λ of all
    /// the values to within 0.02, and the reason says it was sampled.
    #[test]
    fn lambda_of_a_long_column_comes_from_quantiles_and_says_so() {
        let mut rng = crate::select::cv::SplitMix64::new(5);
        let n = 120_000;
        let v: Vec<f64> = (0..n)
            .map(|_| {
                let u = ((rng.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
                // Right-skewed, positive, not exactly lognormal: λ̂ is not 0.
                1.0 + (-u.ln()).powf(1.6) * 10.0
            })
            .collect();
        let sample = lambda_sample(&v);
        assert_eq!(sample.len(), LAMBDA_SAMPLE);
        assert!(sample.windows(2).all(|w| w[0] <= w[1]), "quantiles in order");
        let full = transform::fit_boxcox(&v, 0.95).unwrap().lambda;
        let p = profile_column(&Column::new("wait", ColumnData::Numeric(v.clone().into())), None);
        let t = p.suggested_transform.expect("a transform for a skewed column");
        assert_eq!(t.lambda_from, Some(LAMBDA_SAMPLE));
        assert_eq!(t.name, "boxcox", "{t:?}");
        let l = t.lambda.unwrap();
        assert!((l - full).abs() < 0.02, "λ {l} from the sample, {full} from all values");
        assert!(p.reason.contains("50,000 evenly spaced quantiles of the 120,000 values"), "{}", p.reason);
        let short = profile_column(&Column::new("wait", ColumnData::Numeric(v[..2000].to_vec().into())), None);
        assert_eq!(short.suggested_transform.unwrap().lambda_from, None);
    }

    fn kind_of(name: &str, v: Vec<f64>) -> ColumnProfile {
        profile_column(&Column::new(name, ColumnData::Numeric(v.into())), None)
    }

    #[test]
    fn codes_counts_and_identifiers() {
        let zone: Vec<f64> = (0..40).map(|i| (i % 5 + 1) as f64).collect();
        let p = kind_of("district", zone);
        assert_eq!(p.kind, Kind::CodedCategory);
        assert!(p.reason.starts_with("5 distinct whole numbers 1–5: as an amount this would say district 4 is twice district 2"), "{}", p.reason);
        let ids: Vec<f64> = (1001..1041).map(|i| i as f64).collect();
        assert_eq!(kind_of("site_code", ids).kind, Kind::Identifier);
        let area: Vec<f64> = (0..40).map(|i| 100.0 * 1.1f64.powi(i)).collect();
        let p = kind_of("area", area);
        assert_eq!(p.kind, Kind::Numeric);
        assert_eq!(p.skew, Some("strong"));
        assert_eq!(p.suggested_transform.as_ref().map(|s| s.name), Some("log"), "{}", p.reason);
        assert_eq!(kind_of("flag", vec![0.0, 1.0, 1.0, 0.0]).kind, Kind::Binary);
        assert_eq!(kind_of("c", vec![3.0, 3.0]).kind, Kind::Constant);
        assert_eq!(kind_of("c", vec![f64::NAN]).kind, Kind::Empty);
    }

    #[test]
    fn the_user_can_override_a_verdict() {
        let zone: Vec<f64> = (0..40).map(|i| (i % 5 + 1) as f64).collect();
        let p = profile_column(&Column::new("zone", ColumnData::Numeric(zone.into())), Some(Kind::Numeric));
        assert_eq!((p.kind, p.kind_set_by_user), (Kind::Numeric, true));
        assert_eq!(p.reason, "Set by you to numeric.");
    }

    #[test]
    fn name_words_split_sensibly() {
        assert_eq!(name_words("ClimateZone_id"), ["climate", "zone", "id"]);
        assert!(has_word("hvac type", &CODE_WORDS));
        assert!(!has_word("typewriter", &CODE_WORDS));
    }
}
