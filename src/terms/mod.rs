//! Terms: the syntax a user writes to name a model's columns, and the
//! design matrix built from it.

pub mod design;
pub mod parse;

pub use design::{build_design, Design, DesignColumn, DesignError, ModelSpec};
pub use parse::{parse_term, parse_terms, Term, TermError};
