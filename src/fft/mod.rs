//! Real FFTs, one module per arithmetic. Each gives the `N/2 + 1` one-sided bins
//! `X[k] = sum_n x[n] exp(-2 pi j k n / N)`, unscaled (as NumPy's `rfft` with its default
//! `norm="backward"`); the fixed-point ones return a block exponent with them.

#[cfg(feature = "f32")]
pub mod float;

#[cfg(feature = "fixed")]
pub mod fixed;
