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

/// The overlap buffer of `C` channels sampled together: one clock, so every channel's blocks
/// start on the same sample, and one buffer of `N` samples per channel in which that channel's
/// block is completed in place (the caller reads the blocks there, no copy).
///
/// Samples arrive interleaved (`x0 y0 z0 x1 y1 ...`, as a sensor FIFO delivers them, cut into
/// chunks anywhere, also inside a frame) or as one slice per channel. Blocks are defined as
/// for [`Framer`]: block `b` of every channel is its samples `b hop .. b hop + N`.
///
/// ```
/// use leakless::spectrum::frame::ChannelFramer;
///
/// let mut framer: ChannelFramer<i16, 2, 2> = ChannelFramer::new(0).unwrap();
/// let mut input: &[i16] = &[1, 10, 2]; // ends inside the second frame
/// assert!(framer.next_interleaved(&mut input).is_none());
/// let mut input: &[i16] = &[20, 3, 30];
/// assert_eq!(framer.next_interleaved(&mut input), Some(&[[1, 2], [10, 20]]));
/// assert_eq!(input, &[3, 30]); // the next block starts here
/// ```
#[derive(Clone, Debug)]
pub struct ChannelFramer<T, const N: usize, const C: usize> {
    pending: [[T; N]; C],
    /// Complete frames (one sample of every channel) held, `0 ..= N`; `N` means the blocks
    /// were handed out and the overlap is kept on the next call.
    len: usize,
    /// The channel the next interleaved sample belongs to, `0 .. C`.
    next_channel: usize,
    overlap: usize,
}

impl<T: Copy + Default, const N: usize, const C: usize> ChannelFramer<T, N, C> {
    /// A buffer for `N`-sample blocks of `C` channels overlapping by `overlap` samples
    /// (`0 ..= N - 1`).
    pub fn new(overlap: usize) -> Result<Self, ConfigError> {
        if overlap >= N {
            return Err(ConfigError::Overlap {
                overlap,
                block_len: N,
            });
        }
        Ok(Self {
            pending: [[T::default(); N]; C],
            len: 0,
            next_channel: 0,
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

    /// Whole frames held towards the next block (after a block was handed out: all `N`).
    pub fn buffered(&self) -> usize {
        self.len
    }

    /// The channel the next interleaved sample belongs to (0 unless the last interleaved
    /// chunk ended inside a frame).
    pub fn next_channel(&self) -> usize {
        self.next_channel
    }

    /// Forgets every buffered sample and the interleave phase.
    pub fn clear(&mut self) {
        self.len = 0;
        self.next_channel = 0;
    }

    /// Keeps the last `overlap` samples of handed-out blocks for the next ones.
    fn keep_overlap(&mut self) {
        if self.len == N {
            let hop = N - self.overlap;
            for channel in &mut self.pending {
                channel.copy_within(hop.., 0);
            }
            self.len = self.overlap;
        }
    }

    /// Takes interleaved samples from the front of `input` until every channel's block is
    /// complete or `input` is used up. Returns the `C` blocks (one array per channel, oldest
    /// sample first) when complete, with `input` advanced past what was taken; call it in a
    /// loop until it returns `None`.
    pub fn next_interleaved(&mut self, input: &mut &[T]) -> Option<&[[T; N]; C]> {
        self.keep_overlap();
        let mut rest = *input;
        // Finish a frame a previous chunk ended inside of.
        while self.next_channel != 0 {
            let Some((&x, tail)) = rest.split_first() else {
                *input = rest;
                return None;
            };
            self.pending[self.next_channel][self.len] = x;
            rest = tail;
            self.next_channel += 1;
            if self.next_channel == C {
                self.next_channel = 0;
                self.len += 1;
            }
        }
        let frames = (rest.len() / C.max(1)).min(N - self.len);
        let (whole, tail) = rest.split_at(frames * C);
        for (i, frame) in whole.chunks_exact(C.max(1)).enumerate() {
            for (channel, &x) in self.pending.iter_mut().zip(frame) {
                channel[self.len + i] = x;
            }
        }
        self.len += frames;
        if self.len == N {
            *input = tail;
            return Some(&self.pending);
        }
        // Fewer than C samples are left: the start of a frame.
        for (channel, &x) in self.pending.iter_mut().zip(tail) {
            channel[self.len] = x;
            self.next_channel += 1;
        }
        *input = &[];
        None
    }

    /// [`ChannelFramer::next_interleaved`] for one slice per channel, all of the same length
    /// (the caller checks), starting at frame `*taken` of them; `*taken` is advanced past the
    /// frames used. Must not be called inside a frame ([`ChannelFramer::next_channel`] 0).
    pub fn next_channels(
        &mut self,
        channels: &[&[T]; C],
        taken: &mut usize,
    ) -> Option<&[[T; N]; C]> {
        self.keep_overlap();
        let available = channels
            .first()
            .map_or(0, |c| c.len().saturating_sub(*taken));
        let frames = available.min(N - self.len);
        for (pending, input) in self.pending.iter_mut().zip(channels) {
            if let (Some(slot), Some(from)) = (
                pending.get_mut(self.len..self.len + frames),
                input.get(*taken..*taken + frames),
            ) {
                slot.copy_from_slice(from);
            }
        }
        self.len += frames;
        *taken += frames;
        (self.len == N).then_some(&self.pending)
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

    /// Interleaves per-channel streams.
    fn interleave(channels: &[Vec<u32>]) -> Vec<u32> {
        let len = channels[0].len();
        (0..len)
            .flat_map(|i| channels.iter().map(move |c| c[i]))
            .collect()
    }

    // from the definition of overlapped framing (Welch 1967), per channel, on one clock.
    #[test]
    fn channel_framer_gives_every_channel_its_defined_blocks() {
        let channels: Vec<Vec<u32>> = (0..3)
            .map(|c| (0..60).map(|i| 1000 * c + i).collect())
            .collect();
        let stream = interleave(&channels);
        for overlap in [0, 3, 7] {
            let want: Vec<Vec<Vec<u32>>> = channels
                .iter()
                .map(|c| expected_blocks(c, 8, 8 - overlap))
                .collect();
            for chunk in [1, 2, 3, 4, 5, 7, 24, 25, 180] {
                let mut framer: ChannelFramer<u32, 8, 3> = ChannelFramer::new(overlap).unwrap();
                let mut got: Vec<Vec<Vec<u32>>> = vec![Vec::new(); 3];
                for piece in stream.chunks(chunk) {
                    let mut input = piece;
                    while let Some(blocks) = framer.next_interleaved(&mut input) {
                        for (g, b) in got.iter_mut().zip(blocks) {
                            g.push(b.to_vec());
                        }
                    }
                    assert!(input.is_empty());
                }
                assert_eq!(got, want, "overlap {overlap}, chunk {chunk}");
                // The same through per-channel slices.
                let mut framer: ChannelFramer<u32, 8, 3> = ChannelFramer::new(overlap).unwrap();
                let mut per: Vec<Vec<Vec<u32>>> = vec![Vec::new(); 3];
                let frame_chunk = chunk.div_ceil(3);
                for start in (0..60).step_by(frame_chunk) {
                    let end = (start + frame_chunk).min(60);
                    let slices: [&[u32]; 3] = core::array::from_fn(|c| &channels[c][start..end]);
                    let mut taken = 0;
                    while let Some(blocks) = framer.next_channels(&slices, &mut taken) {
                        for (g, b) in per.iter_mut().zip(blocks) {
                            g.push(b.to_vec());
                        }
                    }
                    assert_eq!(taken, end - start);
                }
                assert_eq!(per, want, "per channel, overlap {overlap}, chunk {chunk}");
            }
        }
    }
}
