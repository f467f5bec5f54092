//! Loaders for the golden reference data in `tests/reference/` (see its README.md for the
//! file formats) and a tolerance comparison helper. Integration tests use it as `mod common;`.
//!
//! std only, no dependencies: the files are plain CSV with `#` comment lines, one line of
//! column names, then data rows without quotes or embedded commas.

// Each integration test is its own crate and uses only some of these loaders, so the unused
// rest would warn in every one of them.
#![allow(dead_code)]

use std::collections::HashMap;
use std::fs;
use std::path::PathBuf;

/// `tests/reference/<relative>` under the crate root.
pub fn reference_path(relative: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join("reference")
        .join(relative)
}

/// One reference file as text: comment lines (without the leading `#` and one space), column
/// names and the cells of every data row.
#[derive(Clone, Debug)]
pub struct Table {
    /// File name relative to `tests/reference/`, for messages.
    pub name: String,
    pub comments: Vec<String>,
    pub columns: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

impl Table {
    /// Index of a column; panics with the list of columns if there is none of that name.
    pub fn column(&self, name: &str) -> usize {
        self.columns
            .iter()
            .position(|c| c == name)
            .unwrap_or_else(|| panic!("{}: no column {name:?} in {:?}", self.name, self.columns))
    }

    /// The cell at `row` of column `name`.
    pub fn text(&self, row: usize, name: &str) -> &str {
        &self.rows[row][self.column(name)]
    }

    /// The cell as `f64` (`-inf` and `inf` included); panics if empty or not a number.
    pub fn f64(&self, row: usize, name: &str) -> f64 {
        parse_f64(&self.name, row, self.text(row, name))
    }

    /// The cell as an integer; panics if empty or not an integer.
    pub fn i64(&self, row: usize, name: &str) -> i64 {
        let cell = self.text(row, name);
        cell.parse()
            .unwrap_or_else(|_| panic!("{}: row {row}: {cell:?} is not an integer", self.name))
    }

    /// The cell as an integer, `None` if empty.
    pub fn opt_i64(&self, row: usize, name: &str) -> Option<i64> {
        if self.text(row, name).is_empty() {
            None
        } else {
            Some(self.i64(row, name))
        }
    }

    /// The cell as `f64`, `None` if empty.
    pub fn opt_f64(&self, row: usize, name: &str) -> Option<f64> {
        if self.text(row, name).is_empty() {
            None
        } else {
            Some(self.f64(row, name))
        }
    }

    /// A whole column as `f64`.
    pub fn column_f64(&self, name: &str) -> Vec<f64> {
        (0..self.rows.len()).map(|r| self.f64(r, name)).collect()
    }
}

fn parse_f64(file: &str, row: usize, cell: &str) -> f64 {
    cell.parse()
        .unwrap_or_else(|_| panic!("{file}: data row {row}: {cell:?} is not a number"))
}

/// Reads `tests/reference/<relative>` as text cells. Panics (naming the file) if it is
/// missing or a row has the wrong number of cells.
pub fn read_table(relative: &str) -> Table {
    let path = reference_path(relative);
    let text = fs::read_to_string(&path).unwrap_or_else(|e| {
        panic!(
            "cannot read {}: {e} (regenerate with python3 tests/reference/generate.py)",
            path.display()
        )
    });
    let mut comments = Vec::new();
    let mut columns: Option<Vec<String>> = None;
    let mut rows = Vec::new();
    for line in text.lines() {
        match &columns {
            None if line.starts_with('#') => {
                let c = line.trim_start_matches('#');
                comments.push(c.strip_prefix(' ').unwrap_or(c).to_string());
            }
            None => columns = Some(line.split(',').map(str::to_string).collect()),
            Some(cols) => {
                let cells: Vec<String> = line.split(',').map(str::to_string).collect();
                assert_eq!(
                    cells.len(),
                    cols.len(),
                    "{relative}: data row {} has {} cells, expected {}",
                    rows.len(),
                    cells.len(),
                    cols.len()
                );
                rows.push(cells);
            }
        }
    }
    Table {
        name: relative.to_string(),
        comments,
        columns: columns.unwrap_or_else(|| panic!("{relative}: no column names")),
        rows,
    }
}

/// Reads an all-numeric file: `(comment lines, column names, rows)`. Empty cells become NaN;
/// panics on a non-numeric cell (use [`read_table`] for files with text columns).
pub fn read_csv(relative: &str) -> (Vec<String>, Vec<String>, Vec<Vec<f64>>) {
    let t = read_table(relative);
    let rows = t
        .rows
        .iter()
        .enumerate()
        .map(|(r, cells)| {
            cells
                .iter()
                .map(|c| {
                    if c.is_empty() {
                        f64::NAN
                    } else {
                        parse_f64(relative, r, c)
                    }
                })
                .collect()
        })
        .collect();
    (t.comments, t.columns, rows)
}

// ---------------------------------------------------------------------------------------------
// Windows

fn window_file(n: usize, symmetric: bool) -> String {
    let kind = if symmetric { "symmetric" } else { "periodic" };
    format!("windows/{kind}_{n}.csv")
}

/// The shape columns of one window file (names as `leakless::Shape::from_name` parses them,
/// e.g. `"hann"`, `"kaiser:9.42477796076938"`, `"tukey:0.5"`, `"exponential:0.01"`).
/// Files exist for N = 16, 64, 1024 (both symmetries) and 4096 (periodic, a few shapes).
pub fn window_golden_shapes(n: usize, symmetric: bool) -> Vec<String> {
    let t = read_table(&window_file(n, symmetric));
    t.columns.into_iter().filter(|c| c != "n").collect()
}

/// scipy's `get_window` vector for one of our shape names (exact column name, see
/// [`window_golden_shapes`]); `symmetric = false` is the periodic (DFT-even) form.
pub fn window_golden(shape_name: &str, n: usize, symmetric: bool) -> Vec<f64> {
    let t = read_table(&window_file(n, symmetric));
    let w = t.column_f64(shape_name);
    assert_eq!(w.len(), n, "{}: {} rows, expected {n}", t.name, w.len());
    w
}

/// One row of `window_factors.csv` (N = 1024, periodic). Overlap correlations are fractions.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct WindowFactors {
    pub coherent_gain: f64,
    pub amplitude_correction: f64,
    pub mean_square_gain: f64,
    pub energy_correction: f64,
    pub nenbw_bins: f64,
    pub scalloping_db: f64,
    pub overlap_correlation_50: f64,
    pub overlap_correlation_75: f64,
    pub first_minimum_bin: f64,
    pub psll_db: f64,
    pub psll_bin: f64,
}

/// The length of the windows in `window_factors.csv`.
pub const WINDOW_FACTORS_N: usize = 1024;

/// `window_factors.csv`, keyed by shape name (the same names as the window files).
pub fn window_factors() -> HashMap<String, WindowFactors> {
    let t = read_table("window_factors.csv");
    (0..t.rows.len())
        .map(|r| {
            let f = |c: &str| t.f64(r, c);
            let factors = WindowFactors {
                coherent_gain: f("coherent_gain"),
                amplitude_correction: f("amplitude_correction"),
                mean_square_gain: f("mean_square_gain"),
                energy_correction: f("energy_correction"),
                nenbw_bins: f("nenbw_bins"),
                scalloping_db: f("scalloping_db"),
                overlap_correlation_50: f("overlap_correlation_50"),
                overlap_correlation_75: f("overlap_correlation_75"),
                first_minimum_bin: f("first_minimum_bin"),
                psll_db: f("psll_db"),
                psll_bin: f("psll_bin"),
            };
            (t.text(r, "shape").to_string(), factors)
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// Elementary functions

/// One row of `math.csv`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum MathCase {
    /// `value = cos(2 pi p / q)`.
    Cos {
        p: u64,
        q: u64,
        value: f64,
    },
    /// `value = sin(2 pi p / q)`.
    Sin {
        p: u64,
        q: u64,
        value: f64,
    },
    Exp {
        x: f64,
        value: f64,
    },
    Sqrt {
        x: f64,
        value: f64,
    },
    /// Natural logarithm.
    Ln {
        x: f64,
        value: f64,
    },
    /// Modified Bessel function of the first kind, order 0.
    BesselI0 {
        x: f64,
        value: f64,
    },
}

/// `math.csv`: mpmath results correctly rounded to f64.
pub fn math_reference() -> Vec<MathCase> {
    let t = read_table("math.csv");
    (0..t.rows.len())
        .map(|r| {
            let value = t.f64(r, "value");
            let p = || t.i64(r, "p") as u64;
            let q = || t.i64(r, "q") as u64;
            let x = || t.f64(r, "x");
            match t.text(r, "function") {
                "cos" => MathCase::Cos {
                    p: p(),
                    q: q(),
                    value,
                },
                "sin" => MathCase::Sin {
                    p: p(),
                    q: q(),
                    value,
                },
                "exp" => MathCase::Exp { x: x(), value },
                "sqrt" => MathCase::Sqrt { x: x(), value },
                "ln" => MathCase::Ln { x: x(), value },
                "bessel_i0" => MathCase::BesselI0 { x: x(), value },
                other => panic!("math.csv: row {r}: unknown function {other:?}"),
            }
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// Spectra (scipy welch / periodogram)

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Scaling {
    /// PSD, V^2/Hz: scale `1 / (fs S2)`.
    Density,
    /// Power spectrum, V^2 (squared rms per line): scale `1 / S1^2`.
    Spectrum,
}

/// One case of `spectra_cases.csv` with its expected output from `spectra.csv`.
#[derive(Clone, Debug)]
pub struct SpectrumCase {
    pub id: usize,
    /// `"welch"` or `"periodogram"`.
    pub function: String,
    /// scipy `get_window` name, periodic: `"hann"`, `"flattop"`, `"boxcar"`.
    pub window: String,
    pub nperseg: usize,
    pub noverlap: usize,
    /// `true`: `detrend='constant'` (segment mean removed before windowing); `false`: none.
    pub detrend_constant: bool,
    pub scaling: Scaling,
    /// Whole segments averaged.
    pub segments: usize,
    pub fs_hz: f64,
    /// Frequencies of the bins 0..=nperseg/2, Hz.
    pub freqs_hz: Vec<f64>,
    /// scipy's one-sided result per bin.
    pub expected: Vec<f64>,
}

/// `spectra_input.csv`: the float32 input record (4096 samples at 1024 Hz).
pub fn spectra_input() -> Vec<f32> {
    let t = read_table("spectra_input.csv");
    (0..t.rows.len())
        .map(|r| {
            let cell = t.text(r, "x");
            cell.parse::<f32>()
                .unwrap_or_else(|_| panic!("spectra_input.csv: row {r}: {cell:?}"))
        })
        .collect()
}

/// The input record and every welch / periodogram case, in case-id order.
pub fn welch_cases() -> (Vec<f32>, Vec<SpectrumCase>) {
    let cases = read_table("spectra_cases.csv");
    let data = read_table("spectra.csv");
    let mut out: Vec<SpectrumCase> = (0..cases.rows.len())
        .map(|r| {
            let id = cases.i64(r, "case") as usize;
            assert_eq!(id, r, "spectra_cases.csv: case ids must be 0, 1, 2, ...");
            SpectrumCase {
                id,
                function: cases.text(r, "function").to_string(),
                window: cases.text(r, "window").to_string(),
                nperseg: cases.i64(r, "nperseg") as usize,
                noverlap: cases.i64(r, "noverlap") as usize,
                detrend_constant: match cases.text(r, "detrend") {
                    "constant" => true,
                    "none" => false,
                    other => panic!("spectra_cases.csv: row {r}: detrend {other:?}"),
                },
                scaling: match cases.text(r, "scaling") {
                    "density" => Scaling::Density,
                    "spectrum" => Scaling::Spectrum,
                    other => panic!("spectra_cases.csv: row {r}: scaling {other:?}"),
                },
                segments: cases.i64(r, "segments") as usize,
                fs_hz: cases.f64(r, "fs_hz"),
                freqs_hz: Vec::new(),
                expected: Vec::new(),
            }
        })
        .collect();
    for r in 0..data.rows.len() {
        let case = &mut out[data.i64(r, "case") as usize];
        assert_eq!(
            data.i64(r, "bin") as usize,
            case.expected.len(),
            "spectra.csv: row {r}: bins out of order"
        );
        case.freqs_hz.push(data.f64(r, "f_hz"));
        case.expected.push(data.f64(r, "value"));
    }
    (spectra_input(), out)
}

/// One row of `spectra_examples.csv` (scipy 1.17.1 / numpy 2.4.6 worked examples A-D, computed
/// by tests/reference/generate.py).
#[derive(Clone, Debug)]
pub struct SpectrumExample {
    /// `"A"` .. `"D"`.
    pub example: String,
    pub quantity: String,
    pub value: f64,
    /// The figure as first computed and rounded for print (scipy 1.17.1), as text.
    pub printed: String,
}

pub fn spectra_examples() -> Vec<SpectrumExample> {
    let t = read_table("spectra_examples.csv");
    (0..t.rows.len())
        .map(|r| SpectrumExample {
            example: t.text(r, "example").to_string(),
            quantity: t.text(r, "quantity").to_string(),
            value: t.f64(r, "value"),
            printed: t.text(r, "printed").to_string(),
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// CMSIS-DSP fixed-point real FFTs

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FixedKind {
    /// int16 in and out; `arm_rfft_q15`.
    Q15,
    /// int32 in and out; `arm_rfft_q31`.
    Q31,
}

impl FixedKind {
    /// `2^15` or `2^31`: divide an output by this to read it as `X[k] / N`.
    pub fn full_scale(self) -> f64 {
        match self {
            FixedKind::Q15 => 32768.0,
            FixedKind::Q31 => 2147483648.0,
        }
    }
}

/// One case of `cmsis_fixed_summary.csv` with its data from `cmsis_fixed.csv`.
#[derive(Clone, Debug)]
pub struct CmsisFixedCase {
    pub id: usize,
    pub kind: FixedKind,
    pub n: usize,
    pub level_dbfs: f64,
    pub tone1_bin: f64,
    pub tone1_amplitude: f64,
    pub tone1_phase: f64,
    pub tone2_bin: f64,
    pub tone2_amplitude: f64,
    pub tone2_phase: f64,
    /// Quantised, Hann-windowed input: N samples (int16 or int32 values).
    pub input: Vec<i32>,
    /// CMSIS output, first N + 2 values: re, im of bins 0..=N/2.
    pub output: Vec<i32>,
    /// How many values CMSIS wrote in all (2N for the scalar build).
    pub output_len: usize,
    pub snr_db: f64,
    pub snr_total_db: f64,
    pub tone1_peak_bin: usize,
    pub tone1_level_error_db: f64,
    pub tone2_peak_bin: usize,
    /// `-inf` where CMSIS gives exactly 0 at the bin.
    pub tone2_level_error_db: f64,
    pub error_mean_re_lsb: f64,
}

impl CmsisFixedCase {
    /// The output as complex bins `(re, im)` scaled to `X[k] / N`.
    pub fn output_bins(&self) -> Vec<(f64, f64)> {
        let s = self.kind.full_scale();
        self.output
            .chunks_exact(2)
            .map(|c| (c[0] as f64 / s, c[1] as f64 / s))
            .collect()
    }
}

pub fn cmsis_fixed_cases() -> Vec<CmsisFixedCase> {
    let s = read_table("cmsis_fixed_summary.csv");
    let d = read_table("cmsis_fixed.csv");
    let mut cases: Vec<CmsisFixedCase> = (0..s.rows.len())
        .map(|r| {
            let id = s.i64(r, "case") as usize;
            assert_eq!(
                id, r,
                "cmsis_fixed_summary.csv: case ids must be 0, 1, 2, ..."
            );
            CmsisFixedCase {
                id,
                kind: match s.text(r, "type") {
                    "q15" => FixedKind::Q15,
                    "q31" => FixedKind::Q31,
                    other => panic!("cmsis_fixed_summary.csv: row {r}: type {other:?}"),
                },
                n: s.i64(r, "n") as usize,
                level_dbfs: s.f64(r, "level_dbfs"),
                tone1_bin: s.f64(r, "tone1_bin"),
                tone1_amplitude: s.f64(r, "tone1_amplitude"),
                tone1_phase: s.f64(r, "tone1_phase"),
                tone2_bin: s.f64(r, "tone2_bin"),
                tone2_amplitude: s.f64(r, "tone2_amplitude"),
                tone2_phase: s.f64(r, "tone2_phase"),
                input: Vec::new(),
                output: Vec::new(),
                output_len: s.i64(r, "output_len") as usize,
                snr_db: s.f64(r, "snr_db"),
                snr_total_db: s.f64(r, "snr_total_db"),
                tone1_peak_bin: s.i64(r, "tone1_peak_bin") as usize,
                tone1_level_error_db: s.f64(r, "tone1_level_error_db"),
                tone2_peak_bin: s.i64(r, "tone2_peak_bin") as usize,
                tone2_level_error_db: s.f64(r, "tone2_level_error_db"),
                error_mean_re_lsb: s.f64(r, "error_mean_re_lsb"),
            }
        })
        .collect();
    for r in 0..d.rows.len() {
        let case = &mut cases[d.i64(r, "case") as usize];
        assert_eq!(
            d.i64(r, "index") as usize,
            case.output.len(),
            "cmsis_fixed.csv: row {r}: indices out of order"
        );
        if let Some(x) = d.opt_i64(r, "input") {
            case.input.push(x as i32);
        }
        case.output.push(d.i64(r, "output") as i32);
    }
    cases
}

// ---------------------------------------------------------------------------------------------
// Comparison

/// `Ok` if `|actual[i] - expected[i]| <= atol + rtol * |expected[i]|` for every `i` (and the
/// lengths agree); otherwise a message with the number of failures and the worst index.
/// NaN never compares equal; infinities must match exactly.
pub fn allclose(actual: &[f64], expected: &[f64], rtol: f64, atol: f64) -> Result<(), String> {
    if actual.len() != expected.len() {
        return Err(format!(
            "length {} but expected {}",
            actual.len(),
            expected.len()
        ));
    }
    let mut failures = 0usize;
    // (index, how far over the limit: |diff| / limit, infinite for NaN/inf mismatches)
    let mut worst: Option<(usize, f64)> = None;
    for (i, (&a, &e)) in actual.iter().zip(expected).enumerate() {
        let limit = atol + rtol * e.abs();
        let excess = if a == e {
            0.0
        } else if !(a.is_finite() && e.is_finite()) {
            f64::INFINITY
        } else {
            let d = (a - e).abs();
            if d <= limit {
                0.0
            } else if limit > 0.0 {
                d / limit
            } else {
                f64::INFINITY
            }
        };
        if excess > 0.0 {
            failures += 1;
            if worst.is_none_or(|(_, w)| excess > w) {
                worst = Some((i, excess));
            }
        }
    }
    match worst {
        None => Ok(()),
        Some((i, _)) => {
            let (a, e) = (actual[i], expected[i]);
            Err(format!(
                "{failures} of {} values outside rtol {rtol:e}, atol {atol:e}; worst at index {i}: \
                 actual {a:e}, expected {e:e}, |diff| {:e}, limit {:e}",
                actual.len(),
                (a - e).abs(),
                atol + rtol * e.abs()
            ))
        }
    }
}
