//! Every kind of diagnostic plot renders to a picture that is not blank and
//! has text in its axis-label areas; the CLI writes them as PNG files.

mod common;

use plumbline::model::FitOptions;
use plumbline::plot::data::all_plots;
use plumbline::plot::png::render_rgb;

const W: u32 = 900;
const H: u32 = 640;

fn demo_check() -> (Vec<plumbline::plot::data::Figure>, usize) {
    let csv = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/building-energy.csv");
    let terms = "log(floor_area_m2), cat(climate_zone), mean_outdoor_temp_c, cat(hvac_type), retrofit, building_age";
    let fitted = common::fit_file(&csv, "log(energy_mwh)", terms, true, None, FitOptions::default());
    let table = plumbline::read::csv::read_csv(&std::fs::read(&csv).unwrap()).unwrap();
    let spec = common::spec("log(energy_mwh)", terms, true);
    let c = plumbline::diagnostics::check(&fitted, &spec, None);
    let n = c.rows.len();
    (all_plots(&c, &fitted, &table), n)
}

/// Share of pixels that are not white within a rectangle.
fn ink(rgb: &[u8], x0: u32, y0: u32, x1: u32, y1: u32) -> f64 {
    let mut dark = 0usize;
    let mut all = 0usize;
    for y in y0..y1 {
        for x in x0..x1 {
            let i = ((y * W + x) * 3) as usize;
            all += 1;
            if rgb[i] < 200 || rgb[i + 1] < 200 || rgb[i + 2] < 200 {
                dark += 1;
            }
        }
    }
    dark as f64 / all as f64
}

#[test]
fn every_plot_kind_is_drawn_with_labelled_axes() {
    let (figs, n) = demo_check();
    for want in ["residuals-vs-fitted", "normal-qq", "scale-location", "leverage", "residual-histogram", "correlations"] {
        assert!(figs.iter().any(|f| f.id == want), "missing {want}");
    }
    assert!(figs.iter().filter(|f| f.id.starts_with("component-residual-")).count() >= 3, "a component-plus-residual plot per numeric term");
    assert!(figs.iter().filter(|f| f.id.starts_with("response-vs-")).count() >= 3, "the response against each numeric column");
    for f in &figs {
        let rgb = render_rgb(f, W, H).unwrap();
        let total = ink(&rgb, 0, 0, W, H);
        assert!(total > 0.01, "{}: only {:.4} of the pixels are drawn", f.id, total);
        // Text in the bottom band (x labels) and the left band (y labels);
        // the heatmap's labels are turned upright, in a deeper band.
        let band = if f.heatmap.is_some() { 170 } else { 60 };
        assert!(ink(&rgb, 60, H - band, W - 20, H) > 0.002, "{}: no x-axis labels", f.id);
        assert!(ink(&rgb, 0, 40, 70, H - 60) > 0.002, "{}: no y-axis labels", f.id);
        if f.heatmap.is_none() {
            assert!(!f.x_label.is_empty() && !f.y_label.is_empty(), "{}: axes need names", f.id);
            let points: usize = f.points.iter().map(|p| p.x.len()).sum();
            assert!(points == n || f.bars.is_some(), "{}: one point per row used ({points} of {n})", f.id);
        }
    }
}

#[test]
fn check_writes_png_files() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target").join("check-plots");
    let _ = std::fs::remove_dir_all(&dir);
    let csv = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/building-energy.csv");
    let (code, out, err) = common::run_cli(&[
        "check",
        csv.to_str().unwrap(),
        "--response",
        "log(energy_mwh)",
        "--terms",
        "log(floor_area_m2), mean_outdoor_temp_c",
        "--plots",
        dir.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("Plots written to"), "{out}");
    let pngs: Vec<_> = std::fs::read_dir(&dir).unwrap().map(|e| e.unwrap().path()).collect();
    assert!(pngs.len() >= 8, "{pngs:?}");
    for p in pngs {
        let bytes = std::fs::read(&p).unwrap();
        assert!(bytes.starts_with(b"\x89PNG\r\n\x1a\n") && bytes.len() > 5000, "{} is not a drawn PNG", p.display());
    }
}
