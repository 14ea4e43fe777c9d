//! Drawing from a replicate's stream: unbiased bounded integers, binomial counts, and the rows
//! of an `iid` resample handed out in blocks, chunk by chunk.
//!
//! Every scheme and fast path draws its integers through [`below`], so one rule fixes how a
//! stream's words become rows; a change here changes every result, which is why
//! [`crate::engine::rng::GENERATOR`] names it.

use rand::RngCore;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Binomial, Distribution};

/// Rows per chunk of a large resample: 16 384 values of 8 bytes (128 KiB) stay in a core's
/// second-level cache together with as many weights, so each chunk's random reads and writes
/// hit the cache instead of memory.
pub const CHUNK_ROWS: usize = 1 << 14;

/// Indices handed to a consumer at a time: drawn in a tight loop into a buffer on the stack,
/// then consumed in a second loop the compiler can unroll.
pub const BLOCK: usize = 256;

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

/// Draw `n` rows uniformly with replacement from `0..n` and hand them to `take` in blocks of
/// at most [`BLOCK`]. Up to [`CHUNK_ROWS`] rows they are drawn directly; above, the rows are
/// split into chunks, how many draws land in each chunk is drawn first (a multinomial, by
/// conditional binomials over the chunks in order), and then that many rows are drawn within
/// the chunk. The multiset of rows has exactly the distribution of n independent uniform draws;
/// only the order in which they arrive differs (chunk by chunk), which no statistic of an `iid`
/// resample sees.
pub fn rows(rng: &mut ChaCha8Rng, n: usize, mut take: impl FnMut(&[u32])) {
    if n <= CHUNK_ROWS {
        within(rng, 0, n, n as u64, &mut take);
        return;
    }
    let mut draws_left = n as u64;
    let mut start = 0;
    while start < n {
        let len = CHUNK_ROWS.min(n - start);
        let here = if start + len == n {
            draws_left
        } else {
            binomial(rng, draws_left, len as f64 / (n - start) as f64)
        };
        within(rng, start, len, here, &mut take);
        draws_left -= here;
        start += len;
    }
}

/// `count` uniform rows of `start..start + len`, in blocks.
#[inline]
fn within(rng: &mut ChaCha8Rng, start: usize, len: usize, count: u64, take: &mut impl FnMut(&[u32])) {
    let mut buf = [0u32; BLOCK];
    let range = u32::try_from(len).expect("at most 2^32 − 1 rows");
    let offset = start as u32;
    let mut left = count as usize;
    while left > 0 {
        let k = left.min(BLOCK);
        for slot in &mut buf[..k] {
            *slot = offset + below(rng, range);
        }
        take(&buf[..k]);
        left -= k;
    }
}

/// The sum of `x` over an `iid` resample's rows (drawn by [`rows`]), with four accumulators so
/// that the additions do not wait on one another.
pub fn resampled_sum(rng: &mut ChaCha8Rng, x: &[f64]) -> f64 {
    let mut acc = [0.0f64; 4];
    rows(rng, x.len(), |idx| {
        let mut quads = idx.chunks_exact(4);
        for q in &mut quads {
            for (a, i) in acc.iter_mut().zip(q) {
                *a += x[*i as usize];
            }
        }
        for (a, i) in acc.iter_mut().zip(quads.remainder()) {
            *a += x[*i as usize];
        }
    });
    (acc[0] + acc[1]) + (acc[2] + acc[3])
}

/// The sums of `x` and of `x²` over an `iid` resample's rows, for a mean and its standard error.
pub fn resampled_sums(rng: &mut ChaCha8Rng, x: &[f64]) -> (f64, f64) {
    let (mut s, mut q) = ([0.0f64; 2], [0.0f64; 2]);
    rows(rng, x.len(), |idx| {
        for pair in idx.chunks(2) {
            for (k, i) in pair.iter().enumerate() {
                let v = x[*i as usize];
                s[k] += v;
                q[k] += v * v;
            }
        }
    });
    (s[0] + s[1], q[0] + q[1])
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::rng::replicate_stream;

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
            rows(&mut rng, n, |idx| {
                drawn += idx.len();
                for r in idx {
                    counts[*r as usize] += 1;
                }
            });
            assert_eq!(drawn, n);
        }
        // The last chunk (123 rows) gets its share: mean count 1 per row and resample, so
        // 40 × 123 = 4920 draws, Poisson-like SE √4920 ≈ 70; 4 SE = 280.
        let tail: u32 = counts[3 * CHUNK_ROWS..].iter().sum();
        assert!((f64::from(tail) - 4920.0).abs() < 280.0, "{tail}");
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
    }
}
