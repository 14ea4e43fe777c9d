//! Drawing from a replicate's stream: unbiased bounded integers, binomial counts, and the rows
//! of an `iid` resample handed out in blocks, chunk by chunk.
//!
//! Every scheme and fast path draws its integers through this module ([`below`], [`rows`],
//! [`within`]), so its rules fix how a stream's words become rows; a change here changes every
//! result, which is why [`crate::engine::rng::GENERATOR`] names it.

use rand::RngCore;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Binomial, Distribution};

/// Rows per chunk of a large resample: 16 384 values of 8 bytes (128 KiB) stay in a core's
/// second-level cache together with as many weights, so each chunk's random reads and writes
/// hit the cache instead of memory.
pub const CHUNK_ROWS: usize = 1 << 14;

/// From this many rows on, a resample's rows are drawn chunk by chunk; below, one binomial
/// draw per chunk would cost more than the rejections it spares.
pub const SPLIT_FROM: usize = 1024;

/// The smallest power-of-two piece [`chunk_len`] splits off; what is left below it is one chunk.
const SMALLEST_PIECE: usize = 256;

/// The lanes [`rows`] hands its draws out in.
pub const LANES: usize = 4;

/// A uniform integer in `0..range` (`range` ≥ 1), exactly unbiased, by Lemire's multiply-shift
/// with rejection (Lemire, D. (2019), "Fast random integer generation in an interval", ACM
/// TOMACS 29(1), algorithm 5): one 32-bit word and one multiplication per draw, and a division
/// only in the rare case that the low half of the product falls below `range`.
#[inline]
pub fn below(rng: &mut ChaCha8Rng, range: u32) -> u32 {
    debug_assert!(range > 0);
    let mut m = u64::from(rng.next_u32()) * u64::from(range);
    if (m as u32) < range {
        let threshold = range.wrapping_neg() % range;
        while (m as u32) < threshold {
            m = u64::from(rng.next_u32()) * u64::from(range);
        }
    }
    (m >> 32) as u32
}

/// A uniform integer in `0..range` (`range` ≥ 1) for ranges beyond 32 bits: the same
/// multiply-shift with rejection on 64-bit words (a 128-bit product).
#[inline]
pub fn below_wide(rng: &mut ChaCha8Rng, range: u64) -> u64 {
    debug_assert!(range > 0);
    let mut m = u128::from(rng.next_u64()) * u128::from(range);
    if (m as u64) < range {
        let threshold = range.wrapping_neg() % range;
        while (m as u64) < threshold {
            m = u128::from(rng.next_u64()) * u128::from(range);
        }
    }
    (m >> 64) as u64
}

/// A uniform index in `0..len` for a length that fits the row limit (rows are numbered in 32
/// bits throughout the engine).
#[inline]
pub fn index_below(rng: &mut ChaCha8Rng, len: usize) -> usize {
    below(rng, u32::try_from(len).expect("at most 2^32 − 1 rows")) as usize
}

/// A Binomial(`trials`, `p`) count: 0 or `trials` at the ends, else BTPE or inversion
/// (Kachitvichyanukul & Schmeiser 1988, via `rand_distr`).
#[inline]
pub fn binomial(rng: &mut ChaCha8Rng, trials: u64, p: f64) -> u64 {
    if trials == 0 || p <= 0.0 {
        0
    } else if p >= 1.0 {
        trials
    } else {
        Binomial::new(trials, p).expect("0 < p < 1").sample(rng)
    }
}

/// Draw `n` rows uniformly with replacement from `0..n`, calling `take(row, weight, lane)` for
/// each candidate draw: weight 1 for a row drawn, 0 for a candidate rejected (see below), which
/// the consumer adds in without a branch (`sum += weight · x[row]`, `w[row] += weight`). `lane`
/// (0 to [`LANES`] − 1, in turn) lets a sum keep one accumulator a lane, so that its additions do not all
/// wait on one another.
///
/// Below [`SPLIT_FROM`] rows they are drawn directly; from there on, the rows are split into
/// chunks ([`chunk_len`]), how many draws land in each chunk is drawn first (a multinomial, by
/// conditional binomials over the chunks in order), and then that many rows are drawn within
/// the chunk. Chunks keep random reads in cache, and their power-of-two lengths need no
/// rejection in [`within`]. The multiset of rows has exactly the distribution of n independent
/// uniform draws; only the order in which they arrive differs, which no statistic of an `iid`
/// resample sees.
///
/// The consumer is moved in and handed back, so that its state (a sum's accumulators) lives in
/// the drawing loop's own frame, where the compiler keeps it in registers; state reached
/// through a reference would be written back to memory around every refill of the generator.
#[inline]
pub fn rows<T: Take>(rng: &mut ChaCha8Rng, n: usize, mut take: T) -> T {
    if n < SPLIT_FROM {
        return within(rng, 0, n, n as u64, take);
    }
    let mut draws_left = n as u64;
    let mut start = 0;
    while start < n {
        let len = chunk_len(n - start);
        let here = if start + len == n {
            draws_left
        } else {
            binomial(rng, draws_left, len as f64 / (n - start) as f64)
        };
        take = within(rng, start, len, here, take);
        draws_left -= here;
        start += len;
    }
    take
}

/// The length of the next chunk when `rest` rows are left: [`CHUNK_ROWS`] while that many are,
/// then the largest power of two that fits down to [`SMALLEST_PIECE`], then the rest in one.
/// So 10 000 rows go as 8192 + 1024 + 512 + 256 + 16, four binomial draws a resample (about
/// 1 % of its cost) that spare the 8 % of half-words a range of 10 000 would reject.
fn chunk_len(rest: usize) -> usize {
    if rest >= CHUNK_ROWS {
        CHUNK_ROWS
    } else if rest >= SMALLEST_PIECE {
        1 << rest.ilog2()
    } else {
        rest
    }
}

/// What [`rows`] hands each candidate draw to: `take(row, weight, lane)`.
pub trait Take {
    fn take(&mut self, row: usize, weight: f64, lane: usize);

    /// A chunk of 2^K rows from `start` begins; its rows come next by [`Take::take_in_chunk`]
    /// (but for a last odd row of a chunk drawn from half-words, which [`Take::take`] gets).
    #[inline]
    fn enter_chunk<const K: u32>(&mut self, _start: usize) {}

    /// The row at `place` (below 2^K) of the chunk entered last, with weight 1. A consumer
    /// that reads the rows' values can index the chunk by `place` with no bounds check left in
    /// the loop, since the compiler sees that `place` is below the chunk's known length.
    #[inline]
    fn take_in_chunk<const K: u32>(&mut self, start: usize, place: usize, lane: usize) {
        self.take(start + place, 1.0, lane);
    }
}

impl<F: FnMut(usize, f64, usize)> Take for F {
    #[inline]
    fn take(&mut self, row: usize, weight: f64, lane: usize) {
        self(row, weight, lane)
    }
}

/// `count` uniform rows of `start..start + len` (`len` ≤ [`CHUNK_ROWS`] ≤ 2^16).
///
/// Each candidate is Lemire's multiply-shift with rejection (as in [`below`]) on a 16-bit half
/// of a word, low half first: a chunk's rows need no more bits, so a row costs half a word of
/// the generator. The rejection threshold (2^16 − len) mod len is computed once per chunk
/// rather than per draw; a half is rejected with probability threshold/2^16 (about 8 % for
/// 10⁴ rows), which keeps every row exactly uniform. The rows are the first `count` accepted
/// halves; a half left over in the last word is not used.
///
/// A chunk of 2^k rows, k from 8 to 12, takes each row as k bits of a 64-bit word instead
/// ([`packed`]): 5 to 8 rows a word where halves give 4, so a resample of 2000 rows reads
/// about 330 64-bit words of the generator instead of about 500. Larger powers of two fit 4
/// rows to a word either way and keep the halves.
#[inline]
pub fn within<T: Take>(rng: &mut ChaCha8Rng, start: usize, len: usize, count: u64, take: T) -> T {
    debug_assert!(len > 0 && len <= 1 << 16);
    let range = len as u32;
    let threshold = ((1u32 << 16) - range) % range;
    // A power-of-two range rejects nothing, so its loops need no weights.
    if threshold == 0 {
        return match range.trailing_zeros() {
            8 => packed::<T, 8>(rng, start, count, take),
            9 => packed::<T, 9>(rng, start, count, take),
            10 => packed::<T, 10>(rng, start, count, take),
            11 => packed::<T, 11>(rng, start, count, take),
            12 => packed::<T, 12>(rng, start, count, take),
            13 => halves_of_chunk::<T, 13>(rng, start, count, take),
            14 => halves_of_chunk::<T, 14>(rng, start, count, take),
            _ => {
                let (take, left) = pairs::<T, false, 0>(rng, start, range, 0, count, take);
                last(rng, start, range, 0, left, take)
            }
        };
    }
    let (take, left) = pairs::<T, true, 0>(rng, start, range, threshold, count, take);
    last(rng, start, range, threshold, left, take)
}

/// The rows of a chunk of 2^K rows (K = 13 or 14, the largest chunks) from half-words, as
/// [`pairs`] and [`last`] draw them: those of [`pairs`] handed over by their place in the chunk
/// ([`Take::take_in_chunk`]), a last odd one by [`Take::take`].
#[inline]
fn halves_of_chunk<T: Take, const K: u32>(rng: &mut ChaCha8Rng, start: usize, count: u64, mut take: T) -> T {
    take.enter_chunk::<K>(start);
    let (take, left) = pairs::<T, false, K>(rng, start, 1 << K, 0, count, take);
    last(rng, start, 1 << K, 0, left, take)
}

/// The draws of [`within`] while two rows or more are wanted: both halves of two words while
/// four or more are, then of one word, with no branch on the rejection and four lanes for a
/// consumer's sums. Returns the consumer and the rows still wanted (0 or 1).
#[inline]
fn pairs<T: Take, const REJECTS: bool, const K: u32>(
    rng: &mut ChaCha8Rng,
    start: usize,
    range: u32,
    threshold: u32,
    count: u64,
    mut take: T,
) -> (T, u64) {
    // K > 0: a chunk of 2^K rows entered by the caller, whose rows go by their place in it,
    // each of weight 1: a power-of-two range rejects nothing.
    const { assert!(!(REJECTS && K > 0), "a chunk of 2^K rows rejects nothing") };
    let mut left = count;
    let candidate = |take: &mut T, half: u32, lane: usize, left: &mut u64| {
        let m = half * range;
        let ok = if REJECTS { accepted(m, threshold) } else { 1 };
        if K > 0 {
            take.take_in_chunk::<K>(start, (m >> 16) as usize, lane);
        } else {
            take.take(start + (m >> 16) as usize, if REJECTS { weight(ok) } else { 1.0 }, lane);
        }
        *left -= u64::from(ok);
    };
    while left >= 4 {
        let (a, b) = (rng.next_u32(), rng.next_u32());
        for (lane, half) in [a & 0xffff, a >> 16, b & 0xffff, b >> 16].into_iter().enumerate() {
            candidate(&mut take, half, lane, &mut left);
        }
    }
    while left >= 2 {
        let word = rng.next_u32();
        for (lane, half) in [word & 0xffff, word >> 16].into_iter().enumerate() {
            candidate(&mut take, half, lane, &mut left);
        }
    }
    (take, left)
}

/// `count` rows of a chunk of 2^K rows: each row is K bits of a 64-bit word, lowest bits first,
/// ⌊64/K⌋ rows a word (6 for 1024 rows where half-words give 4). Disjoint bits of a uniform
/// word are independent and uniform, so every row is exactly uniform with no rejection; the
/// bits left over in a word, and the fields of the last word not needed, are not used.
#[inline]
fn packed<T: Take, const K: u32>(rng: &mut ChaCha8Rng, start: usize, count: u64, mut take: T) -> T {
    let per_word = 64 / K;
    let mask = (1u64 << K) - 1;
    let mut left = count;
    take.enter_chunk::<K>(start);
    while left >= u64::from(per_word) {
        let word = rng.next_u64();
        for j in 0..per_word {
            take.take_in_chunk::<K>(start, ((word >> (j * K)) & mask) as usize, (j as usize) % LANES);
        }
        left -= u64::from(per_word);
    }
    if left > 0 {
        let word = rng.next_u64();
        for j in 0..left as u32 {
            take.take_in_chunk::<K>(start, ((word >> (j * K)) & mask) as usize, (j as usize) % LANES);
        }
    }
    take
}

/// The last row of [`within`], when one is still wanted.
#[inline]
fn last<T: Take>(rng: &mut ChaCha8Rng, start: usize, range: u32, threshold: u32, mut left: u64, mut take: T) -> T {
    // The last row: halves one at a time until one is accepted.
    while left == 1 {
        let word = rng.next_u32();
        for half in [word & 0xffff, word >> 16] {
            let m = half * range;
            if (m & 0xffff) >= threshold {
                take.take(start + (m >> 16) as usize, 1.0, 0);
                left = 0;
                break;
            }
        }
    }
    take
}

/// The value of row `i` (< `x.len()` by construction), read without a panicking bounds check:
/// a possible panic in the loop would make the compiler keep the accumulators in memory (so
/// that an unwind sees them), at twice the cost per draw.
#[inline]
fn at(x: &[f64], i: usize) -> f64 {
    x.get(i).copied().unwrap_or(0.0)
}

/// Sums of the values (and of their squares when `SQUARES`) over drawn rows, one accumulator
/// a lane.
struct Sums<'a, const SQUARES: bool> {
    x: &'a [f64],
    /// The rows of the power-of-two chunk entered last.
    chunk: &'a [f64],
    s: [f64; LANES],
    q: [f64; LANES],
}

impl<'a, const SQUARES: bool> Sums<'a, SQUARES> {
    fn new(x: &'a [f64]) -> Self {
        Sums {
            x,
            chunk: &[],
            s: [0.0; LANES],
            q: [0.0; LANES],
        }
    }

    #[inline]
    fn add(&mut self, xi: f64, weight: f64, lane: usize) {
        let v = weight * xi;
        self.s[lane] += v;
        if SQUARES {
            self.q[lane] += v * xi;
        }
    }
}

impl<const SQUARES: bool> Take for Sums<'_, SQUARES> {
    #[inline]
    fn take(&mut self, row: usize, weight: f64, lane: usize) {
        self.add(at(self.x, row), weight, lane);
    }

    #[inline]
    fn enter_chunk<const K: u32>(&mut self, start: usize) {
        self.chunk = &self.x[start..start + (1 << K)];
    }

    /// `place & mask` is below the chunk's length, a constant here, so the read is unchecked
    /// in the compiled loop (measured: the 200-series batch 15 % faster than through `at`).
    #[inline]
    fn take_in_chunk<const K: u32>(&mut self, _start: usize, place: usize, lane: usize) {
        let xi = self.chunk[place & ((1 << K) - 1)];
        self.add(xi, 1.0, lane);
    }
}

impl<const SQUARES: bool> Sums<'_, SQUARES> {
    fn totals(&self) -> (f64, f64) {
        let add = |a: &[f64; LANES]| (a[0] + a[1]) + (a[2] + a[3]);
        (add(&self.s), add(&self.q))
    }
}

/// 1 when the candidate `m` (a half-word times the range) is accepted, its low half at or above
/// `threshold`, else 0; by the sign of a difference of two numbers below 2^16, not a compare.
#[inline]
fn accepted(m: u32, threshold: u32) -> u32 {
    1 - ((m & 0xffff).wrapping_sub(threshold) >> 31)
}

/// 1.0 for 1 and 0.0 for 0, built from the bits of 1.0 by an integer multiplication. The
/// compiler sees through any arithmetic on a 0/1 value and emits a branch, which a rejection
/// (~8 % of candidates for 10⁴ rows) mispredicts at the cost of a third of a draw; hiding the
/// value from it (`black_box`, one store and load) keeps the weight branch-free. Per-thread
/// CPU time of the mean at 10⁴ rows: 2.3–2.5 ns per row-draw with the branch, 1.8 without.
#[inline]
fn weight(ok: u32) -> f64 {
    f64::from_bits(u64::from(std::hint::black_box(ok)) * 1f64.to_bits())
}

/// The sum of `x` over an `iid` resample's rows (drawn by [`rows`]); the caller centres the
/// values first, so that the sum does not cancel.
pub fn resampled_sum(rng: &mut ChaCha8Rng, x: &[f64]) -> f64 {
    rows(rng, x.len(), Sums::<false>::new(x)).totals().0
}

/// The sums of `x` and of its square over an `iid` resample's rows, for a mean and its standard
/// error (of centred values, as for [`resampled_sum`]).
pub fn resampled_sums(rng: &mut ChaCha8Rng, x: &[f64]) -> (f64, f64) {
    rows(rng, x.len(), Sums::<true>::new(x)).totals()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::rng::replicate_stream;

    /// The mean's sums, which read power-of-two chunks by place, add the same values in the
    /// same lanes and order as a consumer that reads every row through `take`: bit for bit.
    #[test]
    fn sums_by_place_in_a_chunk_equal_sums_by_row() {
        for n in [256, 512, 1000, 2000, 8192, 10_000, CHUNK_ROWS, 3 * CHUNK_ROWS + 123] {
            let x: Vec<f64> = (0..n).map(|i| ((i * 7919) % 1013) as f64 * 0.37 - 150.0).collect();
            for i in 0..5 {
                let (s, q) = resampled_sums(&mut replicate_stream(11, i), &x);
                let mut lanes = ([0.0; LANES], [0.0; LANES]);
                let _ = rows(&mut replicate_stream(11, i), n, |row: usize, weight: f64, lane: usize| {
                    let v = weight * x[row];
                    lanes.0[lane] += v;
                    lanes.1[lane] += v * x[row];
                });
                let add = |a: [f64; LANES]| (a[0] + a[1]) + (a[2] + a[3]);
                assert_eq!(s.to_bits(), add(lanes.0).to_bits(), "n {n} resample {i}");
                assert_eq!(q.to_bits(), add(lanes.1).to_bits(), "n {n} resample {i}");
            }
        }
    }

    /// Every row of a chunked resample is counted once, and each chunk receives its share: over
    /// many resamples the count of every row averages 1.
    #[test]
    fn chunked_rows_add_up_and_cover_every_row() {
        let n = 3 * CHUNK_ROWS + 123;
        let mut counts = vec![0u32; n];
        let reps = 40;
        for i in 0..reps {
            let mut rng = replicate_stream(5, i);
            let mut drawn = 0;
            let _ = rows(&mut rng, n, |r, weight, _| {
                drawn += weight as usize;
                counts[r] += weight as u32;
            });
            assert_eq!(drawn, n);
        }
        // The last chunk (123 rows) gets its share: mean count 1 per row and resample, so
        // 40 × 123 = 4920 draws, Poisson-like SE √4920 ≈ 70; 4 SE = 280.
        let tail: u32 = counts[3 * CHUNK_ROWS..].iter().sum();
        assert!((f64::from(tail) - 4920.0).abs() < 280.0, "{tail}");
    }

    /// A power-of-two chunk's rows: exactly `count` rows, all in the chunk, and uniform over it
    /// (a wrong mask would pile rows up on some cells; how the fields are cut from the words is
    /// tested exactly below).
    #[test]
    fn packed_rows_are_counted_and_uniform() {
        for k in 8..=14u32 {
            let len = 1usize << k;
            // 3 past a multiple of the rows of one word for most k (not k = 9), so a last word's
            // part is used too.
            let count = 200 * len as u64 + 3;
            let mut counts = vec![0u64; len];
            let mut rng = replicate_stream(11, u64::from(k));
            let mut taken = 0u64;
            let _ = within(&mut rng, 100, len, count, |r: usize, w: f64, _| {
                assert_eq!(w, 1.0);
                counts[r - 100] += 1;
                taken += 1;
            });
            assert_eq!(taken, count);
            // Pearson's χ² over the cells has len − 1 degrees of freedom (textbook): mean len − 1, SD
            // √(2(len − 1)); 4 SD either side.
            let expected = count as f64 / len as f64;
            let chi2: f64 = counts.iter().map(|c| (*c as f64 - expected).powi(2) / expected).sum();
            let (df, sd) = ((len - 1) as f64, (2.0 * (len - 1) as f64).sqrt());
            assert!((chi2 - df).abs() < 4.0 * sd, "k = {k}: χ² = {chi2}, df = {df}");
        }
    }

    /// The packed path is taken for every k from 8 to 12 and gives exactly the fields of the
    /// stream's 64-bit words, lowest bits first, in lanes 0, 1, 2, 3, 0, …, for counts that end
    /// anywhere in a word (a shift that overlapped fields would pass a test of uniformity alone).
    #[test]
    fn packed_rows_are_the_words_fields_in_order() {
        for k in 8..=12u32 {
            let per_word = u64::from(64 / k);
            for count in [0, 1, per_word - 1, per_word, 3 * per_word + 2] {
                let mut rng = replicate_stream(3, u64::from(k));
                let mut copy = rng.clone();
                let mut got = Vec::new();
                let _ = within(&mut rng, 7, 1 << k, count, |r: usize, w: f64, lane: usize| got.push((r, w, lane)));
                let mut want = Vec::new();
                let mut word = 0u64;
                for i in 0..count {
                    let j = i % per_word;
                    if j == 0 {
                        word = copy.next_u64();
                    }
                    let field = (word >> (j as u32 * k)) & ((1 << k) - 1);
                    want.push((7 + field as usize, 1.0, j as usize % LANES));
                }
                assert_eq!(got, want, "k = {k}, count = {count}");
                // Both read the same words: the streams are in step afterwards.
                assert_eq!(rng.next_u64(), copy.next_u64(), "k = {k}, count = {count}");
            }
        }
    }

    /// `below` stays in range and is uniform, for a tiny range and for one just above 2^31
    /// (where the rejection step runs for almost half of the words).
    #[test]
    fn below_stays_in_range_and_is_uniform() {
        let mut rng = replicate_stream(9, 0);
        let mut c = [0u32; 3];
        for _ in 0..30_000 {
            c[below(&mut rng, 3) as usize] += 1;
        }
        // Each count is Binomial(30 000, 1/3): SE 81.6; 4 SE = 327.
        for k in c {
            assert!((f64::from(k) - 10_000.0).abs() < 327.0, "{c:?}");
        }
        let big = (1u32 << 31) + 12_345;
        let mut high = 0u32;
        for _ in 0..20_000 {
            let v = below(&mut rng, big);
            assert!(v < big);
            high += u32::from(v >= big / 2);
        }
        // P(v ≥ big/2) = 1/2 up to 1/big: SE √(20 000/4) ≈ 70.7; 4 SE = 283.
        assert!((f64::from(high) - 10_000.0).abs() < 283.0, "{high}");
        let wide = 3 * (1u64 << 32) + 7;
        let mut high = 0u32;
        for _ in 0..20_000 {
            let v = below_wide(&mut rng, wide);
            assert!(v < wide);
            high += u32::from(v >= wide / 2);
        }
        // The same bound for a range beyond 32 bits.
        assert!((f64::from(high) - 10_000.0).abs() < 283.0, "{high}");
    }
}
