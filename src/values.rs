//! `Values`: a column of `f64` that several owners share without copying.
//!
//! A loaded table's numeric columns, the design's columns built from them
//! and the least-squares solution that keeps them for its per-row results
//! are often the same numbers. Each holds a `Values`, a reference-counted
//! vector, so a 1,000,000 × 50 table is held once, not three times.
//! Writing through `DerefMut` copies first if the vector is shared
//! (copy on write), so no owner ever sees another's change.

use std::ops::{Deref, DerefMut};
use std::sync::Arc;

/// A shared, copy-on-write vector of `f64`.
#[derive(Clone, Default, PartialEq)]
pub struct Values(Arc<Vec<f64>>);

impl Values {
    pub fn new(v: Vec<f64>) -> Values {
        Values(Arc::new(v))
    }

    /// True when both hold the very same storage (not merely equal numbers).
    pub fn shares_storage_with(&self, other: &Values) -> bool {
        Arc::ptr_eq(&self.0, &other.0)
    }
}

impl From<Vec<f64>> for Values {
    fn from(v: Vec<f64>) -> Values {
        Values::new(v)
    }
}

impl Deref for Values {
    type Target = Vec<f64>;
    fn deref(&self) -> &Vec<f64> {
        &self.0
    }
}

impl DerefMut for Values {
    fn deref_mut(&mut self) -> &mut Vec<f64> {
        Arc::make_mut(&mut self.0)
    }
}

impl std::fmt::Debug for Values {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        self.0.fmt(f)
    }
}

impl FromIterator<f64> for Values {
    fn from_iter<I: IntoIterator<Item = f64>>(iter: I) -> Values {
        Values::new(iter.into_iter().collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_write_copies_shared_storage_and_leaves_the_other_owner_alone() {
        let a = Values::new(vec![1.0, 2.0]);
        let mut b = a.clone();
        assert!(a.shares_storage_with(&b));
        b[0] = 5.0;
        assert!(!a.shares_storage_with(&b));
        assert_eq!(*a, vec![1.0, 2.0]);
        assert_eq!(*b, vec![5.0, 2.0]);
    }
}
