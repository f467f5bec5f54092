//! Prints the correction factors of every window shape for N = 1024 as CSV.
//!
//! `cargo run --example window_table`
//!
//! Columns: shape, n, coherent_gain, amplitude_correction, energy_correction, enbw_bins,
//! scalloping_loss_db, then mean_square_gain, overlap_correlation_50, overlap_correlation_75.
//! Every figure is computed by the compiler from the window's definition (`const`).

use leakless::window::{Shape, Window};

const N: usize = 1024;

/// One const window per catalogue entry, so the figures printed are the ones firmware gets.
static WINDOWS: [Window<N>; Shape::CATALOGUE.len()] = {
    let mut i = 0;
    // `[const { .. }; LEN]` cannot name the index, so build the array in a loop instead.
    let mut out = [const { Window::<N>::new(Shape::Rectangular) }; Shape::CATALOGUE.len()];
    while i < Shape::CATALOGUE.len() {
        out[i] = Window::new(Shape::CATALOGUE[i]);
        i += 1;
    }
    out
};

fn main() {
    println!(
        "shape,n,coherent_gain,amplitude_correction,energy_correction,enbw_bins,\
         scalloping_loss_db,mean_square_gain,overlap_correlation_50,overlap_correlation_75"
    );
    for w in &WINDOWS {
        let f = w.factors();
        println!(
            "{},{},{:.6},{:.6},{:.6},{:.4},{:.4},{:.6},{:.4},{:.4}",
            label(w.shape()),
            N,
            f.coherent_gain,
            f.amplitude_correction,
            f.energy_correction,
            f.enbw_bins,
            f.scalloping_loss_db,
            f.mean_square_gain,
            f.overlap_correlation_50,
            f.overlap_correlation_75,
        );
    }
}

/// The shape's name with its parameters, as `Shape::from_name` accepts it.
fn label(shape: Shape) -> String {
    match shape {
        Shape::Kaiser { beta } => format!("kaiser:{beta:.4}"),
        Shape::Tukey { alpha } => format!("tukey:{alpha}"),
        Shape::Force { width, taper } => format!("force:{width}:{taper}"),
        Shape::Exponential { end_fraction } => format!("exponential:{end_fraction}"),
        Shape::CosineSum(a) => format!("cosine-sum{a:?}").replace(", ", ";"),
        other => other.name().to_string(),
    }
}
