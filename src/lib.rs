//! plumbline: linear models an analyst can defend, computed on the user's
//! own machine.
//!
//! Bytes of a spreadsheet or CSV become a [`table::Table`]; a
//! [`terms::ModelSpec`] names the response and the terms; [`model::fit`]
//! builds the design matrix, solves least squares to full accuracy
//! ([`lstsq`]) and reports the inference ([`schema::FitReport`]).
//!
//! ```
//! use plumbline::{model, read, terms};
//! let table = read::csv::read_csv(b"y,x\n1,1\n3,2\n2,3\n5,4\n").unwrap();
//! let spec = terms::ModelSpec {
//!     response: terms::parse_term("y").unwrap(),
//!     terms: terms::parse_terms("x").unwrap(),
//!     intercept: true,
//!     weights: None,
//!     exclude: Vec::new(),
//! };
//! let fitted = model::fit(&table, &spec, &model::FitOptions::default()).unwrap();
//! let slope = &fitted.report.coefficients[1];
//! assert_eq!(slope.term, "x");
//! assert!((slope.estimate - 1.1).abs() < 1e-12);
//! ```

// `!(x > 0.0)` is deliberate: it is true for NaN, which is what the checks
// need. Index loops are kept where several arrays advance together, as in
// the published algorithms they transcribe.
#![allow(clippy::neg_cmp_op_on_partial_ord, clippy::needless_range_loop)]

pub mod diagnostics;
pub mod export;
pub mod inference;
pub mod lstsq;
pub mod model;
pub mod plot;
pub mod predict;
pub mod profile;
pub mod read;
pub mod schema;
pub mod select;
pub mod special;
pub mod table;
pub mod terms;
pub mod text;
pub mod values;
#[cfg(target_arch = "wasm32")]
pub mod wasm;
#[cfg(target_arch = "wasm32")]
pub mod wasm_export;
