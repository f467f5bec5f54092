//! Real FFTs: one module per arithmetic.

#[cfg(feature = "fixed")]
pub mod fixed;
