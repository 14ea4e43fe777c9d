//! Random streams: one independent ChaCha stream per replicate.
//!
//! Replicate `i` of a run seeded with `seed` draws only from the ChaCha8 stream whose key is
//! derived from `seed` and whose stream number is `i`. No replicate ever reads another's
//! numbers, so the values do not depend on how replicates are split across threads or chunks,
//! and a run of `B` replicates is a prefix of a run of `B' > B` replicates with the same seed.
//! That is what makes `"auto"` growth, partial results and token replay exact.
//!
//! ChaCha with 8 rounds is used because it is a counter-based generator with 2^64 independent
//! streams per key, portable bit for bit across platforms, and fast enough that drawing is not
//! the bottleneck (Bernstein, D. J. (2008), "ChaCha, a variant of Salsa20"; `rand_chacha`).

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// Name of the generator and of how its words become draws, recorded in the reproducibility
/// token. v2: bounded integers by Lemire's multiply-shift (a resample's rows from 16-bit
/// halves of words, chunk by chunk; [`crate::engine::draw`]), and the exact `iid` shortcuts
/// ([`crate::engine::statistic::shortcut`]). v3: in a chunk of 2^k rows, k from 8 to 12, each
/// row is k bits of a 64-bit word. A token of an earlier version is refused rather than
/// replayed to different numbers.
pub const GENERATOR: &str = "chacha8-stream-per-replicate-v3";

/// The largest seed: 2^53 − 1, so that every JSON client (JavaScript's numbers included) carries
/// it exactly.
pub const MAX_SEED: u64 = crate::engine::wire::MAX_EXACT_INTEGER;

crate::whole_number! {
    /// The seed of the random streams, from 0 to 2^53 − 1 (so that every JSON client carries it
    /// exactly).
    pub struct Seed where 0 <= x <= MAX_SEED, "a seed, a whole number from 0 to 2^53 − 1";
}

/// Domain tag mixed into the key so that streams of this engine never coincide with those of
/// another use of the same 64-bit seed.
const KEY_TAG: &[u8; 24] = b"bandsaw/replicate-key/v1";

/// The 256-bit ChaCha key for a seed and a sample of the job: the seed's little-endian bytes
/// followed by a fixed tag whose last byte is moved by the sample's number (0 leaves the tag as
/// it is), so that each sample of a two-sample job draws from streams of its own.
fn key(seed: u64, sample: u8) -> [u8; 32] {
    let mut k = [0u8; 32];
    k[..8].copy_from_slice(&seed.to_le_bytes());
    k[8..].copy_from_slice(KEY_TAG);
    k[31] ^= sample;
    k
}

/// The random stream of replicate `index` under `seed`, for the first (or only) sample.
pub fn replicate_stream(seed: u64, index: u64) -> ChaCha8Rng {
    sample_stream(seed, 0, index)
}

/// The random stream of replicate `index` of sample number `sample` under `seed`.
pub fn sample_stream(seed: u64, sample: u8, index: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::from_seed(key(seed, sample));
    rng.set_stream(index);
    rng
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngCore;

    #[test]
    fn streams_differ_by_index_and_seed_and_repeat_exactly() {
        let mut s0 = replicate_stream(7, 0);
        let mut s0b = replicate_stream(7, 0);
        let mut s1 = replicate_stream(7, 1);
        let mut t0 = replicate_stream(8, 0);
        let mut other_sample = sample_stream(7, 1, 0);
        let x0 = s0.next_u64();
        assert_eq!(x0, s0b.next_u64());
        assert_ne!(x0, s1.next_u64());
        assert_ne!(x0, t0.next_u64());
        assert_ne!(x0, other_sample.next_u64());
    }

    /// The first word of one stream, pinned: a change of generator, key layout or stream
    /// numbering would silently change every result and break every token issued before.
    #[test]
    fn the_generator_is_pinned() {
        // Recorded from this implementation (rand_chacha 0.9, ChaCha8) when the token format v1 was set.
        assert_eq!(replicate_stream(7, 0).next_u64(), 2_852_225_337_655_777_457);
    }
}
