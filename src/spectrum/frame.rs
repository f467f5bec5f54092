//! Framing: an overlap buffer that turns chunks of any length into `N`-sample blocks.
//!
//! Blocks start every `hop = N - overlap` samples. The buffer only ever sees a stream of
//! samples, so how the stream was cut into chunks cannot change any block.
//!
//! ```
//! use leakless::spectrum::frame::Framer;
//!
//! let mut framer: Framer<i16, 4> = Framer::new(2).unwrap(); // 4-sample blocks, 2 overlap
//! let mut block = [0i16; 4];
//! let mut input: &[i16] = &[1, 2, 3, 4, 5, 6];
//! assert!(framer.next_block(&mut input, &mut block));
//! assert_eq!(block, [1, 2, 3, 4]);
//! assert!(framer.next_block(&mut input, &mut block));
//! assert_eq!(block, [3, 4, 5, 6]);
//! assert!(!framer.next_block(&mut input, &mut block)); // needs two more samples
//! assert!(input.is_empty());
//! ```

use crate::error::ConfigError;

/// An overlap buffer of `N` samples of type `T` (`f32`, or `i16`/`i32` for the fixed path).
///
/// It holds the samples of the next block that have arrived so far, oldest first, always
/// fewer than `N`: a block is assembled straight into the caller's buffer from them and the
/// new input, and only the block's last `overlap` samples are copied back. With large chunks
/// most samples are copied once (input to block), as a bare transform of the input would.
#[derive(Clone, Debug)]
pub struct Framer<T, const N: usize> {
    pending: [T; N],
    /// Samples held, `0 .. N` (`N`: a complete block from [`Framer::fill`], not yet moved on).
    len: usize,
    /// Samples kept from one block for the next, `0 ..= N - 1`.
    overlap: usize,
}

impl<T: Copy + Default, const N: usize> Framer<T, N> {
    /// A buffer for `N`-sample blocks overlapping by `overlap` samples (`0 ..= N - 1`).
    pub fn new(overlap: usize) -> Result<Self, ConfigError> {
        if overlap >= N {
            return Err(ConfigError::Overlap {
                overlap,
                block_len: N,
            });
        }
        Ok(Self {
            pending: [T::default(); N],
            len: 0,
            overlap,
        })
    }

    /// The overlap in samples.
    pub fn overlap(&self) -> usize {
        self.overlap
    }

    /// Samples between the starts of consecutive blocks, `N - overlap`.
    pub fn hop(&self) -> usize {
        N - self.overlap
    }

    /// Samples held towards the next block (after [`Framer::fill`] returned a block, that
    /// block's `N`, until the next call).
    pub fn buffered(&self) -> usize {
        self.len
    }

    /// After a block handed out by [`Framer::fill`] (it has been read by now): keeps its
    /// last `overlap` samples for the next one.
    #[inline(always)]
    fn settle(&mut self) {
        if self.len == N {
            self.pending.copy_within(N - self.overlap.., 0);
            self.len = self.overlap;
        }
    }

    /// Forgets every buffered sample.
    pub fn clear(&mut self) {
        self.len = 0;
    }

    /// Takes samples from the front of `input` into the block being assembled in place, until
    /// it is complete or `input` is used up, and returns the complete block (oldest sample
    /// first), to be read before the next call: that call first keeps its last `overlap`
    /// samples for the next block. `input` is advanced past what was taken. Call it in a loop
    /// until it returns `None`.
    ///
    /// The same blocks as [`Framer::next_block`], with fewer copies: each sample is written
    /// once on its way in, and only the overlap is moved per block. The two may be mixed on
    /// one framer.
    ///
    /// ```
    /// use leakless::spectrum::frame::Framer;
    ///
    /// let mut framer: Framer<i16, 4> = Framer::new(2).unwrap();
    /// let mut input: &[i16] = &[1, 2, 3, 4, 5, 6];
    /// assert_eq!(framer.fill(&mut input), Some(&[1, 2, 3, 4]));
    /// assert_eq!(framer.fill(&mut input), Some(&[3, 4, 5, 6]));
    /// assert_eq!(framer.fill(&mut input), None);
    /// ```
    pub fn fill(&mut self, input: &mut &[T]) -> Option<&[T; N]> {
        self.fill_converted(input, |x| x)
    }

    /// [`Framer::fill`] for input of another sample type, each sample converted by `convert`
    /// as it is written into the block (converting and framing are one pass).
    pub fn fill_converted<S: Copy>(
        &mut self,
        input: &mut &[S],
        convert: impl Fn(S) -> T,
    ) -> Option<&[T; N]> {
        self.settle();
        let take = input.len().min(N - self.len);
        let (taken, rest) = input.split_at(take);
        *input = rest;
        let end = self.len + take;
        for (slot, &x) in self.pending[self.len..end].iter_mut().zip(taken) {
            *slot = convert(x);
        }
        self.len = end;
        (end == N).then_some(&self.pending)
    }

    /// Takes samples from the front of `input` until a block is complete or `input` is used
    /// up. On a complete block, writes it (oldest sample first) into `block`, keeps its last
    /// `overlap` samples for the next one and returns `true`; `input` is advanced past what
    /// was taken. Call it in a loop until it returns `false`.
    pub fn next_block(&mut self, input: &mut &[T], block: &mut [T; N]) -> bool {
        self.settle();
        let held = self.len;
        let wanted = N - held;
        if input.len() < wanted {
            self.pending[held..held + input.len()].copy_from_slice(input);
            self.len += input.len();
            *input = &[];
            return false;
        }
        let (taken, rest) = input.split_at(wanted);
        *input = rest;
        block[..held].copy_from_slice(&self.pending[..held]);
        block[held..].copy_from_slice(taken);
        let hop = N - self.overlap;
        self.pending[..self.overlap].copy_from_slice(&block[hop..]);
        self.len = self.overlap;
        true
    }

    /// [`Framer::next_block`] for input of another sample type, each sample converted by
    /// `convert` on its way into the block or the buffer (it holds converted samples), so
    /// converting and framing are one pass. The same blocks as converting the whole stream
    /// first and pushing it through `next_block`.
    pub fn next_block_converted<S: Copy>(
        &mut self,
        input: &mut &[S],
        block: &mut [T; N],
        convert: impl Fn(S) -> T,
    ) -> bool {
        self.settle();
        let held = self.len;
        let wanted = N - held;
        if input.len() < wanted {
            let end = held + input.len();
            for (slot, &x) in self.pending[held..end].iter_mut().zip(*input) {
                *slot = convert(x);
            }
            self.len = end;
            *input = &[];
            return false;
        }
        let (taken, rest) = input.split_at(wanted);
        *input = rest;
        block[..held].copy_from_slice(&self.pending[..held]);
        for (slot, &x) in block[held..].iter_mut().zip(taken) {
            *slot = convert(x);
        }
        let hop = N - self.overlap;
        self.pending[..self.overlap].copy_from_slice(&block[hop..]);
        self.len = self.overlap;
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// All blocks of a stream, by the definition: block b is samples b*hop .. b*hop + N.
    fn expected_blocks(stream: &[u32], n: usize, hop: usize) -> Vec<Vec<u32>> {
        let mut out = Vec::new();
        let mut start = 0;
        while start + n <= stream.len() {
            out.push(stream[start..start + n].to_vec());
            start += hop;
        }
        out
    }

    fn blocks_with_chunks<const N: usize>(
        stream: &[u32],
        overlap: usize,
        chunk: usize,
    ) -> Vec<Vec<u32>> {
        let mut framer: Framer<u32, N> = Framer::new(overlap).unwrap();
        let mut block = [0; N];
        let mut out = Vec::new();
        for piece in stream.chunks(chunk.max(1)) {
            let mut input = piece;
            while framer.next_block(&mut input, &mut block) {
                out.push(block.to_vec());
            }
            assert!(input.is_empty());
        }
        out
    }

    // from the definition of overlapped framing (Welch 1967): block b starts at b * hop.
    #[test]
    fn every_overlap_and_chunk_size_gives_the_defined_blocks() {
        let stream: Vec<u32> = (0..100).collect();
        for overlap in 0..8 {
            let want = expected_blocks(&stream, 8, 8 - overlap);
            for chunk in [1, 2, 3, 7, 8, 9, 17, 100] {
                assert_eq!(
                    blocks_with_chunks::<8>(&stream, overlap, chunk),
                    want,
                    "overlap {overlap}, chunk {chunk}"
                );
            }
        }
    }

    #[test]
    fn converting_while_framing_gives_the_converted_blocks() {
        let stream: Vec<u32> = (0..100).collect();
        let narrow: Vec<u16> = (0..100).collect();
        for overlap in [0, 3, 7] {
            let want = expected_blocks(&stream, 8, 8 - overlap);
            for chunk in [1, 3, 8, 9, 100] {
                let mut framer: Framer<u32, 8> = Framer::new(overlap).unwrap();
                let mut block = [0; 8];
                let mut got = Vec::new();
                for piece in narrow.chunks(chunk) {
                    let mut input = piece;
                    while framer.next_block_converted(&mut input, &mut block, u32::from) {
                        got.push(block.to_vec());
                    }
                    assert!(input.is_empty());
                }
                assert_eq!(got, want, "overlap {overlap}, chunk {chunk}");
            }
        }
    }

    // The same definition, through the in-place path, converted or not.
    #[test]
    fn filling_in_place_gives_the_defined_blocks() {
        let stream: Vec<u32> = (0..100).collect();
        let narrow: Vec<u16> = (0..100).collect();
        for overlap in 0..8 {
            let want = expected_blocks(&stream, 8, 8 - overlap);
            for chunk in [1, 2, 3, 7, 8, 9, 17, 100] {
                let mut framer: Framer<u32, 8> = Framer::new(overlap).unwrap();
                let mut converting: Framer<u32, 8> = Framer::new(overlap).unwrap();
                let (mut got, mut got_converted) = (Vec::new(), Vec::new());
                for (piece, narrow_piece) in stream.chunks(chunk).zip(narrow.chunks(chunk)) {
                    let mut input = piece;
                    while let Some(block) = framer.fill(&mut input) {
                        got.push(block.to_vec());
                    }
                    assert!(input.is_empty());
                    let mut input = narrow_piece;
                    while let Some(block) = converting.fill_converted(&mut input, u32::from) {
                        got_converted.push(block.to_vec());
                    }
                }
                assert_eq!(got, want, "overlap {overlap}, chunk {chunk}");
                assert_eq!(got_converted, want, "overlap {overlap}, chunk {chunk}");
            }
        }
    }

    #[test]
    fn empty_input_and_clear() {
        let mut framer: Framer<f32, 4> = Framer::new(0).unwrap();
        let mut block = [0.0; 4];
        let mut input: &[f32] = &[];
        assert!(!framer.next_block(&mut input, &mut block));
        let mut input: &[f32] = &[1.0, 2.0];
        assert!(!framer.next_block(&mut input, &mut block));
        assert_eq!(framer.buffered(), 2);
        framer.clear();
        assert_eq!(framer.buffered(), 0);
    }

    #[test]
    fn overlap_of_n_is_an_error() {
        assert_eq!(
            Framer::<f32, 4>::new(4).err(),
            Some(ConfigError::Overlap {
                overlap: 4,
                block_len: 4
            })
        );
        assert_eq!(Framer::<f32, 4>::new(3).unwrap().hop(), 1);
    }
}
