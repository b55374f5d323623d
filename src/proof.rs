//! The proof of a run: each invariant with its figures and whether it holds. A run whose
//! proof fails exits 1; a proof is never a warning.

use serde::Serialize;

#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Check {
    pub name: &'static str,
    pub ok: bool,
    /// The figures behind the verdict.
    pub detail: String,
}

impl Check {
    pub fn new(name: &'static str, ok: bool, detail: String) -> Self {
        Self { name, ok, detail }
    }
}

/// Whether every check holds.
pub fn tied(checks: &[Check]) -> bool {
    checks.iter().all(|c| c.ok)
}
