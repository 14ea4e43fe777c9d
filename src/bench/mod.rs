//! Benchmark helpers: the data the engine is timed on.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Seed of the benchmark's data, so that every run times the same values.
pub const DATA_SEED: u64 = 12345;

/// `n` standard normal values by the Box–Muller transform (Box, G. E. P. & Muller, M. E.
/// (1958), Ann. Math. Statist. 29(2)) over a ChaCha8 stream seeded with `seed`, both values
/// of each pair used. Benchmarks time the engine on these; they are not the engine's streams.
pub fn standard_normal(n: usize, seed: u64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut out = Vec::with_capacity(n + 1);
    while out.len() < n {
        // u1 in (0, 1] so that ln(u1) is finite; u2 in [0, 1).
        let u1: f64 = 1.0 - rng.random::<f64>();
        let u2: f64 = rng.random::<f64>();
        let r = (-2.0 * u1.ln()).sqrt();
        let theta = std::f64::consts::TAU * u2;
        out.push(r * theta.cos());
        out.push(r * theta.sin());
    }
    out.truncate(n);
    out
}
