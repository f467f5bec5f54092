//! Real FFTs behind one interface per number type. Each returns the `N/2 + 1` one-sided bins
//! `X[k] = sum_n x[n] exp(-2 pi j k n / N)`, unscaled (as NumPy's `rfft` with its default
//! `norm="backward"`).

#[cfg(feature = "f32")]
pub mod float;
