//! Block resampling of a series, its rows in time order as sent: a resample strings together
//! blocks of consecutive rows, so that the dependence within a block survives.
//!
//! - moving blocks of a fixed length, starting anywhere a whole block fits (Künsch, H. R.
//!   (1989), "The jackknife and the bootstrap for general stationary observations", Annals of
//!   Statistics 17(3));
//! - circular blocks, the series wrapped around so that every row starts a block equally often
//!   (Politis, D. N. & Romano, J. P. (1992), "A circular block-resampling procedure for
//!   stationary data");
//! - stationary blocks of geometric length, wrapped likewise (Politis, D. N. & Romano, J. P.
//!   (1994), "The stationary bootstrap", JASA 89(428)).
//!
//! `"auto"` lengths follow Politis, D. N. & White, H. (2004), "Automatic block-length selection
//! for the dependent bootstrap", Econometric Reviews 23(1), with the correction of Patton, A.,
//! Politis, D. N. & White, H. (2009), Econometric Reviews 28(4) (formulas from memory, checked
//! here by the AR(1) tests of `tests/statistics/blocks.rs`).

use std::fmt;

use crate::engine::draw;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Geometric};
use serde::de::{self, Visitor};
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use utoipa::openapi::schema::{ObjectBuilder, OneOfBuilder, Schema, Type};
use utoipa::openapi::RefOr;
use utoipa::{PartialSchema, ToSchema};

use super::{iid, Resampler, Within};

/// A block length in rows, or `"auto"`: chosen from the data, and returned resolved.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum BlockLength {
    #[default]
    Auto,
    Rows(f64),
}

impl BlockLength {
    /// The length, once resolved.
    pub fn rows(self) -> Option<f64> {
        match self {
            BlockLength::Auto => None,
            BlockLength::Rows(l) => Some(l),
        }
    }
}

impl Serialize for BlockLength {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match *self {
            BlockLength::Auto => s.serialize_str("auto"),
            BlockLength::Rows(l) if l.fract() == 0.0 && l < 9e15 => s.serialize_u64(l as u64),
            BlockLength::Rows(l) => s.serialize_f64(l),
        }
    }
}

impl<'de> Deserialize<'de> for BlockLength {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Length;
        impl Visitor<'_> for Length {
            type Value = BlockLength;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a length in rows of at least 1, or \"auto\"")
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<BlockLength, E> {
                self.visit_f64(v as f64)
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<BlockLength, E> {
                self.visit_f64(v as f64)
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<BlockLength, E> {
                match (1.0..=1e12).contains(&v) {
                    true => Ok(BlockLength::Rows(v)),
                    false => Err(E::custom(format!("must be a length in rows of at least 1, or \"auto\"; got {v}"))),
                }
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<BlockLength, E> {
                match v {
                    "auto" => Ok(BlockLength::Auto),
                    other => Err(E::custom(format!(
                        "must be a length in rows of at least 1, or \"auto\"; got \"{other}\""
                    ))),
                }
            }
        }
        d.deserialize_any(Length)
    }
}

impl PartialSchema for BlockLength {
    fn schema() -> RefOr<Schema> {
        OneOfBuilder::new()
            .item(ObjectBuilder::new().schema_type(Type::Number).minimum(Some(1.0)).maximum(Some(1e12)))
            .item(ObjectBuilder::new().schema_type(Type::String).enum_values(Some(["auto"])))
            .description(Some(
                "A length in rows (at least 1, at most the series' length), or `\"auto\"`: chosen from the data (Politis & White 2004, corrected by Patton, Politis & White 2009) and returned resolved.",
            ))
            .into()
    }
}

impl ToSchema for BlockLength {}

/// How block starts and lengths are drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BlockKind {
    Moving,
    Circular,
    Stationary,
}

/// Block resampling of one series.
pub struct Blocks {
    kind: BlockKind,
    /// The block length (moving, circular) or mean block length (stationary).
    length: f64,
    /// The unit of each row, rows in time order.
    order: Vec<u32>,
    total: f64,
}

impl Blocks {
    /// `length` must be at least 1, and for moving blocks at most the number of rows.
    pub fn new(kind: BlockKind, length: f64, order: Vec<u32>) -> Self {
        let total = order.len() as f64;
        Blocks {
            kind,
            length,
            order,
            total,
        }
    }

    /// The rows in time order and the length of the blocks a jackknife leaves out.
    pub fn series(&self) -> (&[u32], usize) {
        (&self.order, self.length.round().max(1.0) as usize)
    }
}

impl Resampler for Blocks {
    fn draw(&self, _: u64, rng: &mut ChaCha8Rng, w: &mut [f64]) -> Option<f64> {
        w.fill(0.0);
        let n = self.order.len();
        let fixed = self.length as usize;
        let geometric = Geometric::new(1.0 / self.length).expect("a mean length of at least 1");
        let mut filled = 0;
        while filled < n {
            let (start, len) = match self.kind {
                BlockKind::Moving => (draw::index_below(rng, n - fixed + 1), fixed),
                BlockKind::Circular => (draw::index_below(rng, n), fixed),
                // Geometric counts failures before the first success: 1 + that has mean L.
                BlockKind::Stationary => (draw::index_below(rng, n), 1 + geometric.sample(rng) as usize),
            };
            let take = len.min(n - filled);
            for t in start..start + take {
                w[self.order[t % n] as usize] += 1.0;
            }
            filled += take;
        }
        None
    }

    // The studentized interval is refused under block schemes (a resample's standard error
    // would have to respect the dependence too), so no nested resample is drawn by blocks;
    // these keep the trait whole with the iid draw.
    fn prepare_within(&self, outer: &[f64], within: &mut Within) {
        iid::prepare_within(self.total, outer, within);
    }

    fn draw_within(&self, outer: &[f64], within: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]) {
        iid::draw_within(self.total, outer, within, rng, w);
    }

    fn independent_rows(&self) -> bool {
        false
    }

    fn blocks(&self) -> Option<(&[u32], usize)> {
        Some(self.series())
    }
}

/// The automatic block length of a series for `kind` (Politis & White 2004 with the
/// correction of Patton, Politis & White 2009): b = (2Ĝ²/D̂)^{1/3} n^{1/3}, where
/// Ĝ = Σ λ(k/M)|k|R̂(k) and ĝ = Σ λ(k/M)R̂(k) over |k| ≤ M, λ the flat-top window (1 up to ½,
/// then falling linearly to 0 at 1), D̂ = 2ĝ² for stationary blocks and (4/3)ĝ² for moving and
/// circular ones. M is twice the smallest lag m̂ after which K_n = max(5, ⌈√log₁₀ n⌉)
/// autocorrelations in a row are all within 2√(log₁₀ n / n). The result is kept between 1 and
/// min(3√n, n/3).
pub fn automatic_length(x: &[f64], kind: BlockKind) -> f64 {
    let n = x.len();
    if n < 4 {
        return 1.0;
    }
    let nf = n as f64;
    let mean = x.iter().sum::<f64>() / nf;
    let centred: Vec<f64> = x.iter().map(|v| v - mean).collect();
    let max_lag = ((nf.sqrt().ceil() as usize) + kn(nf)).min(n - 1);
    let acov: Vec<f64> = (0..=max_lag)
        .map(|k| centred[k..].iter().zip(&centred).map(|(a, b)| a * b).sum::<f64>() / nf)
        .collect();
    if acov[0] <= 0.0 {
        return 1.0;
    }
    let m = 2 * last_significant_lag(&acov, nf).min(max_lag / 2);
    let (mut g, mut big_g) = (acov[0], 0.0);
    for (k, r) in acov.iter().enumerate().take(m + 1).skip(1) {
        let weight = flat_top(k as f64 / m as f64);
        g += 2.0 * weight * r;
        big_g += 2.0 * weight * k as f64 * r;
    }
    let d = match kind {
        BlockKind::Stationary => 2.0 * g * g,
        BlockKind::Moving | BlockKind::Circular => 4.0 / 3.0 * g * g,
    };
    let b = if d > 0.0 {
        (2.0 * big_g * big_g / d).cbrt() * nf.cbrt()
    } else {
        1.0
    };
    let cap = length_cap(n);
    let b = if b.is_finite() { b.clamp(1.0, cap) } else { 1.0 };
    match kind {
        BlockKind::Stationary => b,
        BlockKind::Moving | BlockKind::Circular => b.round().max(1.0),
    }
}

/// The longest automatic length for a series of `n` rows: min(3√n, n/3), and at least 1.
pub fn length_cap(n: usize) -> f64 {
    let nf = n as f64;
    (3.0 * nf.sqrt()).min(nf / 3.0).max(1.0)
}

/// K_n: how many autocorrelations in a row must be insignificant.
fn kn(n: f64) -> usize {
    (n.log10().sqrt().ceil() as usize).max(5)
}

/// m̂: the smallest lag after which K_n autocorrelations in a row lie within the band
/// ±2√(log₁₀ n / n); the last lag examined when none does.
fn last_significant_lag(acov: &[f64], n: f64) -> usize {
    let band = 2.0 * (n.log10() / n).sqrt();
    let k_n = kn(n);
    let rho = |k: usize| acov[k] / acov[0];
    let last = acov.len() - 1;
    // A short series has fewer lags than K_n: those it has must lie within the band.
    (0..=last.saturating_sub(k_n))
        .find(|&m| (1..=k_n).all(|j| m + j > last || rho(m + j).abs() < band))
        .unwrap_or(last)
}

/// The flat-top lag window: 1 for |t| ≤ ½, 2(1 − |t|) up to 1, 0 beyond.
fn flat_top(t: f64) -> f64 {
    let t = t.abs();
    if t <= 0.5 {
        1.0
    } else if t <= 1.0 {
        2.0 * (1.0 - t)
    } else {
        0.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::rng::replicate_stream;

    #[test]
    fn every_block_kind_draws_n_rows() {
        let order: Vec<u32> = (0..23).rev().collect();
        for kind in [BlockKind::Moving, BlockKind::Circular, BlockKind::Stationary] {
            let b = Blocks::new(kind, 5.0, order.clone());
            let mut w = vec![0.0; 23];
            for i in 0..50 {
                b.draw(i, &mut replicate_stream(3, i), &mut w);
                assert_eq!(w.iter().sum::<f64>(), 23.0, "{kind:?}");
            }
        }
    }

    #[test]
    fn moving_blocks_are_runs_of_consecutive_rows() {
        // Rows 0..10 are units 0..10; one block of 10 is the whole series.
        let b = Blocks::new(BlockKind::Moving, 10.0, (0..10).collect());
        let mut w = vec![0.0; 10];
        b.draw(0, &mut replicate_stream(1, 0), &mut w);
        assert_eq!(w, vec![1.0; 10]);
    }

    #[test]
    fn white_noise_gets_blocks_of_one_row() {
        // Independent normal values (a fixed stream): no lag is significant, so M = 0 and the
        // length is its floor of 1 row (at most 2 if one lag crosses the band by chance).
        let mut rng = replicate_stream(7, 0);
        let x: Vec<f64> = (0..2000).map(|_| rand_distr::StandardNormal.sample(&mut rng)).collect();
        let b = automatic_length(&x, BlockKind::Circular);
        assert!(b <= 2.0, "{b}");
    }

    #[test]
    fn a_length_reads_and_writes_as_rows_or_auto() {
        let read = |s: &str| plain_reader::parse(s);
        assert_eq!(read("12"), Ok(BlockLength::Rows(12.0)));
        assert_eq!(read("\"auto\""), Ok(BlockLength::Auto));
        assert!(read("0").is_err() && read("\"long\"").is_err());
    }

    /// A tiny reader for the test above without the service's JSON library (the engine does
    /// not depend on it): numbers and the one string.
    mod plain_reader {
        use super::super::BlockLength;
        use serde::de::value::{Error, F64Deserializer, StrDeserializer};
        use serde::de::IntoDeserializer;
        use serde::Deserialize;

        pub fn parse(s: &str) -> Result<BlockLength, Error> {
            match s.strip_prefix('"').and_then(|s| s.strip_suffix('"')) {
                Some(word) => {
                    let d: StrDeserializer<Error> = word.into_deserializer();
                    BlockLength::deserialize(d)
                }
                None => {
                    let d: F64Deserializer<Error> = s.parse::<f64>().unwrap().into_deserializer();
                    BlockLength::deserialize(d)
                }
            }
        }
    }
}
