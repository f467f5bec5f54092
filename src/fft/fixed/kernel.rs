//! The block-floating-point real FFT, written once and instantiated for Q15 and Q31.
//!
//! Data words `D` (i16 / i32) are widened to `W` (i32 / i64) for every sum and product.
//! `FRAC` is the twiddle scale (twiddles are `round(2^FRAC w)`, clamped to `+-(2^FRAC - 1)`).
//!
//! # Structure
//!
//! The `N/2` complex points `z[m] = x[2m] + j x[2m+1]` are bit-reversed, then: one fused
//! stage of the first two radix-2 stages (twiddles 1 and -j, no products), radix-4 stages
//! while they fit, one radix-2 stage when `log2(N/2)` is odd, and the split stage that turns
//! `Z = FFT(z)` into `X[0..=N/2]`.
//!
//! # Why nothing overflows
//!
//! Let `P` be the largest `|component|` of a stage's input (`P <= 2^FRAC`).
//!
//! * Products: `|b| < 2^(FRAC+1)` per component (the split stage multiplies sums of two
//!   words) and `|w| <= 2^FRAC - 1` per component, so each single product is below
//!   `2^(2 FRAC + 1)` and fits `W` (31 resp. 63 bits). A sum of two products is bounded by the
//!   complex magnitude `|b| |w| <= sqrt(2) 2^FRAC max|b|`, and it is formed at a scale where it
//!   and the other terms fit: radix-2 `(a << (FRAC-1)) + (p >> 1) < 1.21 * 2^(2 FRAC)`;
//!   radix-4 `(a << (FRAC-2)) + three (p >> 2) < 1.31 * 2^(2 FRAC)`; split
//!   `(2E << (FRAC-2)) + (each product >> 2) < 2.42 * 2^(2 FRAC - 1)`. In the radix-2 and
//!   radix-4 stages `b` is a data word (`|b| <= 2^FRAC` per component), so the sum of two
//!   products is itself below `sqrt(2) (1 + 2^-15) 2^(2 FRAC) < 2^(2 FRAC + 1)` and is formed
//!   before its one shift; only the split stage shifts each product before the sum.
//! * Outputs: a radix-2 output component is at most `|a| + |w b| <= P (1 + sqrt(2) |w|)`,
//!   and `|w| <= 1 + 2^-15` after rounding, so the growth is below `GROWTH = 2.41426`; a
//!   radix-4 output is at most `P (1 + 3 sqrt(2) |w|)`, below `GROWTH4 = 5.2429`. The split
//!   stage has the radix-2 bound (`|E| <= P` per component, `|W O| <= sqrt(2) P |w|`). A stage
//!   therefore shifts by the smallest `s` with `P * growth <= MAX * 2^s`: at most 2 (radix-2)
//!   or 3 (radix-4) for any input, and negative, a normalisation up, when the data is small.
//!   `P` need not be exact, only never below the peak: the twiddled radix-4 butterflies
//!   report a bound at most one LSB above it (see `radix4_peak`), which changes a shift only
//!   for a peak within one LSB of a threshold.
//! * The first stage adds four words exactly, so its outputs are at most `4 P`, and its shift
//!   is chosen from that exact bound; it too may be negative to normalise a quiet block up.
//! * The split stage, being last, is computed twice: the first pass finds the peak of its
//!   outputs (exactly but for 2 units of `2^-(FRAC-1)`, always from above), the second
//!   stores them with the smallest shift that fits.
//!
//! # Rounding
//!
//! Sums of words whose twiddle is 1 or -j are exact integers, and halving them hits an exact
//! half every other time: those are rounded half to even, so they have no bias. Products
//! keep `FRAC - 2` or more fraction bits before rounding (half up); an exact half there has
//! probability about `2^-(FRAC-2)`, so its bias is far below a thousandth of an LSB. The
//! products' own pre-shifts (`>> 1`, `>> 2`) floor at `2^-(FRAC-2)` of an LSB.

/// `1 + sqrt(2) (1 + 2^-15)` rounded up: the largest growth of any component in one stage.
/// As a ratio of integers so that the thresholds are computed exactly: 2.41426.
const GROWTH_NUM: i64 = 241_426;
const GROWTH_DEN: i64 = 100_000;
/// `1 + 3 sqrt(2) (1 + 2^-15)` rounded up: the growth bound of a radix-4 stage, 5.24290.
const GROWTH4_NUM: i64 = 524_290;

macro_rules! real_fft_kernel {
    ($D:ty, $W:ty, $UW:ty, $FRAC:expr) => {
        use super::{GROWTH4_NUM, GROWTH_DEN, GROWTH_NUM};

        type D = $D;
        type W = $W;
        type UW = $UW;

        /// Twiddle scale, in bits.
        const FRAC: u32 = $FRAC;
        const MAX: W = <D>::MAX as W;
        /// Largest stage-input peak that needs no shift: `P * growth <= MAX`.
        pub(super) const NO_SHIFT_PEAK: UW = ((MAX as i64 * GROWTH_DEN) / GROWTH_NUM) as UW;
        /// The same for a radix-4 stage: `P * growth4 <= MAX`.
        pub(super) const NO_SHIFT_PEAK_RADIX4: UW = ((MAX as i64 * GROWTH_DEN) / GROWTH4_NUM) as UW;
        /// Largest normalisation up in one stage after the first (which normalises the input
        /// fully); it keeps at least 6 fraction bits below the rounding point of the products.
        const MAX_UP_SHIFT: i32 = 8;

        /// `v * 2^-shift` for an exact sum: a left shift (exact) for `shift < 0`, else a right
        /// shift rounding half to even (no bias on the exact halves that sums produce).
        #[inline(always)]
        pub(super) fn scale_exact(v: W, shift: i32) -> W {
            if shift <= 0 {
                return v << (-shift) as u32;
            }
            let shift = shift as u32;
            let odd = (v >> shift) & 1;
            (v + (1 << (shift - 1)) - 1 + odd) >> shift
        }

        /// The shift a radix-2 stage needs for an input peak `peak` (see the module doc): 1 or
        /// 2 when the outputs could overflow, 0 when they cannot, negative (a normalisation
        /// up) while even twice the outputs could not.
        #[inline(always)]
        pub(super) fn stage_shift(peak: UW) -> i32 {
            shift_for(peak, NO_SHIFT_PEAK)
        }

        /// The smallest shift `s` (from `-MAX_UP_SHIFT`) with `peak <= limit * 2^s`, where
        /// `limit` is the largest peak a stage takes unshifted. Needs `limit * 8 >= 2^FRAC`.
        #[inline(always)]
        fn shift_for(peak: UW, limit: UW) -> i32 {
            let mut shift = -MAX_UP_SHIFT;
            while shift < 0 && peak << (-shift) as u32 > limit {
                shift += 1;
            }
            while shift >= 0 && peak > limit << shift as u32 {
                shift += 1;
            }
            shift
        }

        /// Stores a value the bounds above keep inside `D`, and returns its magnitude.
        ///
        /// The stages do not take their peaks from these: `radix4_peak` and the split stage
        /// get the largest magnitude of a butterfly's outputs from fewer terms (`|a| + |b|`
        /// for the outputs `a +- b`). An OR of the magnitudes would be cheaper still but bounds
        /// the peak only to within a factor of 2; that lost bit of headroom was measured to
        /// cost 1 to 3 dB and broke the small-tone target at N = 64, so it is not done.
        #[inline(always)]
        fn store(slot: &mut D, v: W) -> UW {
            debug_assert!(v >= <D>::MIN as W && v <= MAX, "stage bound violated: {v}");
            *slot = v as D;
            v.unsigned_abs()
        }

        /// Forward real FFT in place; returns the block exponent (see `fixed::rfft_q15`).
        pub(crate) fn rfft<const N: usize>(data: &mut [D; N], cos: &[D; N]) -> i32 {
            let points = N / 2;
            let input_peak = data
                .iter()
                .map(|&x| (x as W).unsigned_abs())
                .max()
                .unwrap_or(0);
            if input_peak == 0 {
                return 0;
            }
            // The fused first stage sums four words: choose its shift (possibly negative,
            // i.e. a normalisation up) so that 4 * peak fits.
            let grown = 4 * input_peak;
            let mut first_shift: i32 = 0;
            while grown > (MAX as UW) << first_shift {
                first_shift += 1;
            }
            if first_shift == 0 {
                while grown << (-first_shift + 1) <= MAX as UW {
                    first_shift -= 1;
                }
            }
            bit_reverse(data, points);
            let mut peak = first_stage(data, first_shift);
            let mut exponent = first_shift;
            // Radix-4 stages while they fit, then one radix-2 stage if log2(N/2) is odd.
            let mut quarter = 4;
            while 4 * quarter <= points {
                let shift = shift_for(peak, NO_SHIFT_PEAK_RADIX4);
                peak = radix4_stage(data, cos, quarter, shift);
                exponent += shift;
                quarter *= 4;
            }
            if quarter < points {
                let shift = stage_shift(peak);
                radix2_stage(data, cos, quarter, shift);
                exponent += shift;
            }
            exponent + split(data, cos)
        }

        /// Reorders the `points` complex words (re, im pairs) into bit-reversed order.
        ///
        /// It walks the even indices `i` only: with `j = rev(i)` (below `points / 2`),
        /// `rev(i + 1) = j + points / 2`, so both pairs are swapped from one reversed
        /// increment. Each pair `(a, rev(a))` with `a < rev(a)` is swapped once, from the
        /// even one of `a` and `a - 1`.
        fn bit_reverse<const N: usize>(data: &mut [D; N], points: usize) {
            let half = points / 2;
            let mut swap = |a: usize, b: usize| {
                data.swap(2 * a, 2 * b);
                data.swap(2 * a + 1, 2 * b + 1);
            };
            let mut j = 0;
            for i in (0..points).step_by(2) {
                if i < j {
                    swap(i, j);
                }
                if i + 1 < j + half {
                    swap(i + 1, j + half);
                }
                // increment j in reversed bit order, over the bits below `half`
                let mut bit = half >> 1;
                while j & bit != 0 {
                    j ^= bit;
                    bit >>= 1;
                }
                j |= bit;
            }
        }

        /// The first two radix-2 stages (twiddles 1 and -j), exact in `W`, then one rounding
        /// by `shift` (negative: exact left shift). Returns the output peak.
        ///
        /// On groups of four points `z0..z3` this is the twiddle-free radix-4 butterfly on
        /// `(z0, z2, z1, z3)`. Its peak is taken before the rounding: `scale_exact` is odd and
        /// nondecreasing, so the largest stored magnitude is at most `scale_exact` of a bound
        /// on the largest exact one (and equal to it for the exact maximum, taken when the
        /// block is shifted up).
        fn first_stage<const N: usize>(data: &mut [D; N], shift: i32) -> UW {
            if shift <= 0 {
                let up = (-shift) as u32;
                first_stage_with(data, |v| v << up, true)
            } else {
                first_stage_with(data, |v| scale_exact(v, shift), false)
            }
        }

        #[inline(always)]
        fn first_stage_with<const N: usize>(
            data: &mut [D; N],
            scale: impl Fn(W) -> W,
            exact: bool,
        ) -> UW {
            let mut peak: UW = 0;
            for g in data.chunks_exact_mut(8) {
                let z = |i: usize| (g[2 * i] as W, g[2 * i + 1] as W);
                let (z0, z1, z2, z3) = (z(0), z(1), z(2), z(3));
                peak = peak.max(radix4_peak(z0, z2, z1, z3, exact));
                let out = radix4_combine(z0, z2, z1, z3);
                for (slot, v) in g.iter_mut().zip(out) {
                    store(slot, scale(v));
                }
            }
            scale(peak as W).unsigned_abs()
        }

        /// One radix-4 decimation-in-time stage: four length-`quarter` sub-spectra per group,
        /// scaled down by `shift` bits. Returns the output peak.
        ///
        /// After radix-2 bit reversal the sub-spectra of a group lie in the order of residues
        /// 0, 2, 1, 3, so `D1` is read from the third quarter and `D2` from the second. With
        /// `t_r = W^(r k) D_r` (`W = exp(-2 pi j / (4 quarter))`), the outputs are
        /// `y_q = sum_r (-j)^(q r) t_r`, written back in natural order.
        fn radix4_stage<const N: usize>(
            data: &mut [D; N],
            cos: &[D; N],
            quarter: usize,
            shift: i32,
        ) -> UW {
            let points = N / 2;
            let span = 4 * quarter;
            let q = 2 * quarter; // a quarter, in words
            let mut peak = 0;
            // k = 0: every twiddle is 1, the sums are exact and rounded half to even.
            for group in data[..2 * points].chunks_exact_mut(2 * span) {
                let d0 = (group[0] as W, group[1] as W);
                let d2 = (group[q] as W, group[q + 1] as W);
                let d1 = (group[2 * q] as W, group[2 * q + 1] as W);
                let d3 = (group[3 * q] as W, group[3 * q + 1] as W);
                let y = radix4_combine(d0, d1, d2, d3);
                // scale_exact is odd and nondecreasing (see first_stage)
                peak = peak.max(
                    scale_exact(radix4_peak(d0, d1, d2, d3, shift <= 0) as W, shift).unsigned_abs(),
                );
                for (slot, v) in [0, 1, q, q + 1, 2 * q, 2 * q + 1, 3 * q, 3 * q + 1]
                    .into_iter()
                    .zip(y)
                {
                    store(&mut group[slot], scale_exact(v, shift));
                }
            }
            // Other k: products kept at 2^(FRAC-2), summed, rounded once.
            let mut wide_peak: UW = 0;
            let stride = N / span;
            let out_shift = (FRAC as i32 - 2 + shift) as u32;
            let rounding: W = 1 << (out_shift - 1);
            for k in 1..quarter {
                // (the masks only spare the bounds checks: every index is below N)
                let twiddle = |i: usize| (cos[i & (N - 1)] as W, cos[(i + N / 4) & (N - 1)] as W);
                let (w1, w2, w3) = (
                    twiddle(k * stride),
                    twiddle(2 * k * stride),
                    twiddle(3 * k * stride),
                );
                let a = 2 * k;
                for group in data[..2 * points].chunks_exact_mut(2 * span) {
                    // the four quarters, in storage order: D0, D2, D1, D3
                    let (g0, rest) = group.split_at_mut(q);
                    let (g1, rest) = rest.split_at_mut(q);
                    let (g2, g3) = rest.split_at_mut(q);
                    let d0 = (
                        ((g0[a] as W) << (FRAC - 2)) + rounding,
                        ((g0[a + 1] as W) << (FRAC - 2)) + rounding,
                    );
                    let t2 = rotate((g1[a] as W, g1[a + 1] as W), w2);
                    let t1 = rotate((g2[a] as W, g2[a + 1] as W), w1);
                    let t3 = rotate((g3[a] as W, g3[a + 1] as W), w3);
                    let y = radix4_combine(d0, t1, t2, t3);
                    wide_peak = wide_peak.max(radix4_peak(d0, t1, t2, t3, false));
                    store(&mut g0[a], y[0] >> out_shift);
                    store(&mut g0[a + 1], y[1] >> out_shift);
                    store(&mut g1[a], y[2] >> out_shift);
                    store(&mut g1[a + 1], y[3] >> out_shift);
                    store(&mut g2[a], y[4] >> out_shift);
                    store(&mut g2[a + 1], y[5] >> out_shift);
                    store(&mut g3[a], y[6] >> out_shift);
                    store(&mut g3[a + 1], y[7] >> out_shift);
                }
            }
            // `wide_peak` bounds `max |v|` from above by at most 2, and the stored words are
            // `floor(v / 2^out_shift)`: at most `ceil(max |v| / 2^out_shift)` in magnitude.
            // With `out_shift >= 5` this bound is the exact peak or one above it.
            peak.max((wide_peak + ((1 << out_shift) - 1)) >> out_shift)
        }

        /// The largest `|component|` of the outputs of [`radix4_combine`] on the same
        /// inputs, from its intermediate sums: the outputs are `s0 +- s2` and `s1 -+ j s3`
        /// per component, and `max(|a + b|, |a - b|) = |a| + |b|`, so four sums of
        /// magnitudes give the exact maximum of the eight outputs.
        ///
        /// Unless `exact`, the magnitudes are folded, `v ^ (v >> sign)` (`|v|` or `|v| - 1`,
        /// one instruction less on Cortex-M0), and the result is a bound at most 2 above
        /// the maximum. That is below one output LSB wherever the outputs are then shifted
        /// down; the callers that shift up (a normalisation) ask for the exact maximum.
        #[inline(always)]
        fn radix4_peak(t0: (W, W), t1: (W, W), t2: (W, W), t3: (W, W), exact: bool) -> UW {
            let fold = |v: W| (v ^ (v >> (<W>::BITS - 1))) as UW;
            let m = |a: W, b: W| {
                if exact {
                    a.unsigned_abs() + b.unsigned_abs()
                } else {
                    fold(a) + fold(b)
                }
            };
            let s0 = (t0.0 + t2.0, t0.1 + t2.1);
            let s1 = (t0.0 - t2.0, t0.1 - t2.1);
            let s2 = (t1.0 + t3.0, t1.1 + t3.1);
            let s3 = (t1.0 - t3.0, t1.1 - t3.1);
            let max = m(s0.0, s2.0)
                .max(m(s0.1, s2.1))
                .max(m(s1.0, s3.1))
                .max(m(s1.1, s3.0));
            if exact {
                max
            } else {
                max + 2
            }
        }

        /// `b * w` at the scale `2^(FRAC-2)` (each product shifted before the sum, which keeps
        /// the sum inside `W`; see the module doc).
        #[inline(always)]
        fn rotate(b: (W, W), w: (W, W)) -> (W, W) {
            ((b.0 * w.0 - b.1 * w.1) >> 2, (b.0 * w.1 + b.1 * w.0) >> 2)
        }

        /// The radix-4 butterfly on the twiddled sub-spectra `t0..t3` (residue order): returns
        /// `y0, y1, y2, y3` as (re, im) words, in output order, i.e. for quarters 0, 1, 2, 3 of
        /// the group.
        #[inline(always)]
        fn radix4_combine(t0: (W, W), t1: (W, W), t2: (W, W), t3: (W, W)) -> [W; 8] {
            let s0 = (t0.0 + t2.0, t0.1 + t2.1);
            let s1 = (t0.0 - t2.0, t0.1 - t2.1);
            let s2 = (t1.0 + t3.0, t1.1 + t3.1);
            let s3 = (t1.0 - t3.0, t1.1 - t3.1);
            // y0 = s0 + s2, y1 = s1 - j s3, y2 = s0 - s2, y3 = s1 + j s3
            [
                s0.0 + s2.0,
                s0.1 + s2.1,
                s1.0 + s3.1,
                s1.1 - s3.0,
                s0.0 - s2.0,
                s0.1 - s2.1,
                s1.0 - s3.1,
                s1.1 + s3.0,
            ]
        }

        /// The radix-2 decimation-in-time stage, scaled down by `shift` bits. It only ever
        /// runs as the last complex stage (when `log2(N/2)` is odd), so it is one group:
        /// butterflies between point `k` and point `k + half`, `half = N/4`, with twiddle
        /// `W^k = exp(-2 pi j k / (N/2))`, i.e. entry `2k` of the N-point table. The split
        /// stage finds its own peak, so this stage tracks none.
        fn radix2_stage<const N: usize>(data: &mut [D; N], cos: &[D; N], half: usize, shift: i32) {
            let points = N / 2;
            debug_assert_eq!(2 * half, points);
            let (lo, hi) = data.split_at_mut(points);
            // k = 0 (twiddle 1) and k = half/2 (twiddle -j): exact sums, rounded to even.
            radix2_exact(&mut lo[..2], &mut hi[..2], shift, false);
            radix2_exact(
                &mut lo[half..half + 2],
                &mut hi[half..half + 2],
                shift,
                true,
            );
            // The other twiddles: w = cos - j sin of 2 pi k / (N/2), i.e. cos[2k] and
            // cos[2k + N/4] (cos(x + pi/2) = -sin(x)).
            let out_shift = (FRAC as i32 - 1 + shift) as u32;
            let q = N / 4;
            radix2_twiddled(
                &mut lo[2..half],
                &mut hi[2..half],
                &cos[2..half],
                &cos[q + 2..q + half],
                out_shift,
            );
            radix2_twiddled(
                &mut lo[half + 2..],
                &mut hi[half + 2..],
                &cos[half + 2..points],
                &cos[q + half + 2..q + points],
                out_shift,
            );
        }

        /// One radix-2 butterfly with twiddle 1 (`minus_j` false) or -j, exact sums rounded
        /// half to even by `shift`.
        #[inline(always)]
        fn radix2_exact(a: &mut [D], b: &mut [D], shift: i32, minus_j: bool) {
            if let ([a0, a1], [b0, b1]) = (a, b) {
                let (ar, ai) = (*a0 as W, *a1 as W);
                // (-j) b = (bi, -br)
                let (br, bi) = if minus_j {
                    (*b1 as W, -(*b0 as W))
                } else {
                    (*b0 as W, *b1 as W)
                };
                store(a0, scale_exact(ar + br, shift));
                store(a1, scale_exact(ai + bi, shift));
                store(b0, scale_exact(ar - br, shift));
                store(b1, scale_exact(ai - bi, shift));
            }
        }

        /// Radix-2 butterflies between the points of `a` and `b` (re, im words), with the
        /// twiddles `wr[2i] - j ...` read at every other entry of `wr` and `wi`; products at
        /// `2^(FRAC-1)`, rounded once by `out_shift`.
        #[inline(always)]
        fn radix2_twiddled(a: &mut [D], b: &mut [D], wr: &[D], wi: &[D], out_shift: u32) {
            let rounding: W = 1 << (out_shift - 1);
            let twiddles = wr.chunks_exact(2).zip(wi.chunks_exact(2));
            for ((a, b), (wr, wi)) in a
                .chunks_exact_mut(2)
                .zip(b.chunks_exact_mut(2))
                .zip(twiddles)
            {
                if let ([a0, a1], [b0, b1]) = (a, b) {
                    let (wr, wi) = (wr[0] as W, wi[0] as W);
                    let (br, bi) = (*b0 as W, *b1 as W);
                    let pr = (br * wr - bi * wi) >> 1;
                    let pi = (br * wi + bi * wr) >> 1;
                    let ar = ((*a0 as W) << (FRAC - 1)) + rounding;
                    let ai = ((*a1 as W) << (FRAC - 1)) + rounding;
                    store(a0, (ar + pr) >> out_shift);
                    store(a1, (ai + pi) >> out_shift);
                    store(b0, (ar - pr) >> out_shift);
                    store(b1, (ai - pi) >> out_shift);
                }
            }
        }

        /// Turns the N/2-point complex spectrum Z of the even/odd-interleaved input into the
        /// real input's spectrum X[0..=N/2], packed (X[0].re, X[N/2].re, X[1].re, X[1].im, ..).
        /// Returns the shift it applied.
        ///
        /// With A = Z[k], B = Z[N/2 - k]: E = (A + conj B) / 2, O = (A - conj B) / 2j,
        /// X[k] = E + W^k O and X[N/2 - k] = conj(E - W^k O), W = exp(-2 pi j / N).
        ///
        /// Being the last stage, it is worth running twice: once to find the peak of its
        /// exact outputs, once to store them with the smallest shift that fits. The output
        /// then uses the full word instead of the worst-case headroom of a stage, which is
        /// up to one more bit of resolution for the spectrum. The first pass needs only
        /// `|E| + |W O|` per component: the outputs are `E +- W O`, and
        /// `max(|e + q|, |e - q|) = |e| + |q|` exactly. It takes that peak as a bound at
        /// most 2 above it, in units of `2^-(FRAC-1)` of an unshifted output, so the shift is
        /// the smallest that fits except for a peak that close to a threshold.
        fn split<const N: usize>(data: &mut [D; N], cos: &[D; N]) -> i32 {
            let points = N / 2;
            let mid = points; // word index of complex point N/4
            let q = N / 4;
            let (r0, i0) = (data[0] as W, data[1] as W);
            let (rm, im) = (data[mid] as W, data[mid + 1] as W);
            // X[0] = Re Z0 + Im Z0, X[N/2] = Re Z0 - Im Z0, X[N/4] = conj Z[N/4]: exact.
            let exact = [r0 + i0, r0 - i0, rm, -im];
            let mut peak = exact.iter().map(|v| v.unsigned_abs()).max().unwrap_or(0) << (FRAC - 1);
            // Z[k] for k = 1..N/4 ascending, Z[N/2 - k] descending, W^k = cos[k] + j cos[k + N/4].
            let twiddles = cos[1..q].iter().zip(&cos[q + 1..2 * q]);
            for ((a, b), (&wr, &wi)) in data[2..points]
                .chunks_exact(2)
                .zip(data[points + 2..].rchunks_exact(2))
                .zip(twiddles.clone())
            {
                if let ([ar, ai], [br, bi]) = (a, b) {
                    let [er, ei, qr, qi] = split_terms(*ar, *ai, *br, *bi, wr, wi);
                    let fold = |v: W| (v ^ (v >> (<W>::BITS - 1))) as UW;
                    let re = fold(er) + fold(qr);
                    let im = fold(ei) + fold(qi);
                    peak = peak.max(re.max(im));
                }
            }
            // The folded magnitudes (`v ^ (v >> sign)`, one instruction less than `|v|` on
            // Cortex-M0) are `|v|` or `|v| - 1`: two more make a bound, at most 2 above the
            // exact peak (in units of 2^-(FRAC-1) output LSB).
            let peak = peak + 2;
            // Smallest shift with |X| * 2^-shift <= MAX; outputs are at 2^(FRAC-1) here.
            let mut shift = -MAX_UP_SHIFT;
            while shift < 2 && peak > (MAX as UW) << (FRAC as i32 - 1 + shift) as u32 {
                shift += 1;
            }
            for (slot, v) in [0, 1, mid, mid + 1].into_iter().zip(exact) {
                store(&mut data[slot], scale_exact(v, shift));
            }
            let out_shift = (FRAC as i32 - 1 + shift) as u32;
            let rounding: W = 1 << (out_shift - 1);
            let (lo, hi) = data.split_at_mut(points);
            for ((a, b), (&wr, &wi)) in lo[2..]
                .chunks_exact_mut(2)
                .zip(hi[2..].rchunks_exact_mut(2))
                .zip(twiddles)
            {
                if let ([ar, ai], [br, bi]) = (a, b) {
                    let [er, ei, qr, qi] = split_terms(*ar, *ai, *br, *bi, wr, wi);
                    // Im X[N/2-k] = -(Im 2E - Im W 2O) / 2
                    let out = [er + qr, ei + qi, er - qr, qi - ei];
                    for (slot, v) in [ar, ai, br, bi].into_iter().zip(out) {
                        store(slot, (v + rounding) >> out_shift);
                    }
                }
            }
            shift
        }

        /// `2E` and `W 2O` (re, im, re, im) of one split pair at the scale `2^(FRAC-2)`, from
        /// the words of `A = Z[k]`, `B = Z[N/2 - k]` and the twiddle `W^k = wr + j wi`, for
        /// `0 < k < N/4`; the pair's outputs are `X[k] = (2E + W 2O) / 2` and
        /// `X[N/2 - k] = conj(2E - W 2O) / 2`, here at `2^(FRAC-1)`.
        ///
        /// 2E and 2O are exact in `W`; W 2O is formed from products shifted separately (see
        /// the bounds in the module doc).
        #[inline(always)]
        fn split_terms(ar: D, ai: D, br: D, bi: D, wr: D, wi: D) -> [W; 4] {
            let (ar, ai, br, bi) = (ar as W, ai as W, br as W, bi as W);
            let (er, ei) = ((ar + br) << (FRAC - 2), (ai - bi) << (FRAC - 2));
            let (or, oi) = (ai + bi, br - ar);
            let (wr, wi) = (wr as W, wi as W); // wi = cos(x + pi/2) = -sin(x)
            let qr = ((or * wr) >> 2) - ((oi * wi) >> 2);
            let qi = ((or * wi) >> 2) + ((oi * wr) >> 2);
            [er, ei, qr, qi]
        }
    };
}

pub(crate) mod q15 {
    real_fft_kernel!(i16, i32, u32, 15);
}

pub(crate) mod q31 {
    real_fft_kernel!(i32, i64, u64, 31);
}

// The checks compute their references in f64.
#[cfg(test)]
#[allow(clippy::float_arithmetic)]
mod tests {
    use super::{q15, q31, GROWTH4_NUM, GROWTH_DEN, GROWTH_NUM};

    // The growth bound is at least 1 + sqrt(2) |w| for the largest rounded twiddle:
    // |w|^2 <= (|c| + 2^-16)^2 + (|s| + 2^-16)^2 <= 1 + sqrt(2) 2^-15 + 2^-31.
    #[test]
    fn growth_bound_covers_rounded_twiddles() {
        let w_max = (1.0 + 2f64.sqrt() / 32768.0 + 1.0 / 2f64.powi(31)).sqrt();
        let growth = GROWTH_NUM as f64 / GROWTH_DEN as f64;
        assert!(growth >= 1.0 + 2f64.sqrt() * w_max, "{growth}");
    }

    // A stage input at a threshold cannot produce an output beyond the word, and the
    // largest shift (2) covers any input.
    #[test]
    fn shift_thresholds_keep_outputs_in_range() {
        let growth = GROWTH_NUM as f64 / GROWTH_DEN as f64;
        assert!(q15::NO_SHIFT_PEAK as f64 * growth + 0.5 < 32767.5);
        assert!((2 * q15::NO_SHIFT_PEAK) as f64 * growth / 2.0 + 0.5 < 32767.5);
        assert!(32768.0 * growth / 4.0 + 0.5 < 32767.5);
        assert!(q31::NO_SHIFT_PEAK as f64 * growth + 0.5 < 2_147_483_647.5);
        assert!(2_147_483_648.0 * growth / 4.0 + 0.5 < 2_147_483_647.5);
        assert_eq!((q15::stage_shift(13572), q15::stage_shift(13573)), (0, 1));
        assert_eq!((q15::stage_shift(27144), q15::stage_shift(27145)), (1, 2));
        assert_eq!(q15::stage_shift(32768), 2);
        // normalising up: 6786 * 2 still needs no shift, 6787 * 2 would
        assert_eq!((q15::stage_shift(6786), q15::stage_shift(6787)), (-1, 0));
        assert_eq!(q15::stage_shift(1), -8);
        assert_eq!(q15::stage_shift(0), -8);
        // radix-4: 5.2429 growth, up to 3 bits
        let growth4 = GROWTH4_NUM as f64 / GROWTH_DEN as f64;
        assert!(growth4 >= 1.0 + 3.0 * 2f64.sqrt() * (1.0 + 2f64.sqrt() / 32768.0).sqrt());
        assert!(q15::NO_SHIFT_PEAK_RADIX4 as f64 * growth4 + 0.5 < 32767.5);
        assert!(32768.0 * growth4 / 8.0 + 0.5 < 32767.5);
        assert!(q31::NO_SHIFT_PEAK_RADIX4 as f64 * growth4 + 0.5 < 2_147_483_647.5);
    }

    // Round half to even on exact values: no bias over a symmetric range of inputs.
    #[test]
    fn scale_exact_rounds_half_to_even() {
        let cases = [
            (3, 1, 2),
            (1, 1, 0),
            (5, 1, 2),
            (-1, 1, 0),
            (-3, 1, -2),
            (6, 2, 2),
        ];
        for (v, shift, expected) in cases {
            assert_eq!(q15::scale_exact(v, shift), expected, "{v} >> {shift}");
        }
        assert_eq!((q15::scale_exact(-2, 2), q15::scale_exact(2, 2)), (0, 0));
        assert_eq!(q15::scale_exact(-5, -2), -20);
        for shift in 1..4 {
            let total: i32 = (-1000..1000)
                .map(|v| q15::scale_exact(v, shift) * (1 << shift) - v)
                .sum();
            assert_eq!(total, 0, "shift {shift}");
        }
    }
}
