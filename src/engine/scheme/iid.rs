//! Sampling with replacement.

use rand_chacha::ChaCha8Rng;

use super::{Resampler, Within};
use crate::engine::draw;
use crate::engine::statistic::Units;

/// Below this many observations per unit, a nested resample is drawn from the resample's rows
/// written out (O(n) uniform draws); above it, by a multinomial over the units (O(units)
/// binomial draws), which is cheaper and bounded in memory for aggregated data with large counts.
const EXPAND_BELOW: u64 = 8;

/// `iid` resampling of one sample.
pub struct Iid {
    /// The units' counts, for aggregated data (raw rows are drawn uniformly and keep none).
    base: Vec<f64>,
    total: f64,
    raw: bool,
}

impl Iid {
    pub fn new(units: Units<'_>) -> Self {
        Iid {
            base: if units.raw { Vec::new() } else { units.base.to_vec() },
            total: units.total,
            raw: units.raw,
        }
    }
}

impl Resampler for Iid {
    fn draw(&self, _: u64, rng: &mut ChaCha8Rng, w: &mut [f64]) -> Option<f64> {
        w.fill(0.0);
        if self.raw {
            draw_rows(rng, w);
        } else {
            multinomial(rng, self.total as u64, &self.base, self.total, w);
        }
        None
    }

    fn prepare_within(&self, outer: &[f64], within: &mut Within) {
        prepare_within(self.total, outer, within);
    }

    fn draw_within(&self, outer: &[f64], within: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]) {
        draw_within(self.total, outer, within, rng, w);
    }
}

/// Write out the rows of the resample `outer` (weights over units) when they are whole and few.
pub fn prepare_within(size: f64, outer: &[f64], within: &mut Within) {
    within.rows.clear();
    within.total = outer.iter().sum();
    within.expanded = size.round() as u64 <= EXPAND_BELOW * outer.len() as u64 && outer.iter().all(|x| x.fract() == 0.0);
    if within.expanded {
        for (j, c) in outer.iter().enumerate() {
            for _ in 0..(*c as u64) {
                within.rows.push(j as u32);
            }
        }
    }
}

/// An `iid` resample of size `size` from the resample `outer`: drawn from its rows written out
/// when [`prepare_within`] wrote them, else as a multinomial over the units.
pub fn draw_within(size: f64, outer: &[f64], within: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]) {
    w.fill(0.0);
    if !within.expanded {
        multinomial(rng, size.round() as u64, outer, within.total, w);
        return;
    }
    let m = within.rows.len();
    for _ in 0..m {
        w[within.rows[draw::index_below(rng, m)] as usize] += 1.0;
    }
}

/// n rows drawn uniformly with replacement (by [`draw::rows`], chunk by chunk): `w[i]` becomes
/// how often row i was drawn. `w` must hold n zeros.
pub fn draw_rows(rng: &mut ChaCha8Rng, w: &mut [f64]) {
    let _ = draw::rows(rng, w.len(), |i, weight, _| w[i] += weight);
}

/// A multinomial draw of `size` items over units with masses `mass` (total `total`), by
/// conditional binomials: unit j receives Binomial(remaining, mass_j / remaining mass). It takes
/// O(units) binomial variates ([`draw::binomial`])
/// instead of O(size) uniform draws, which is what lets aggregated data with large counts
/// resample in O(distinct values).
pub fn multinomial(rng: &mut ChaCha8Rng, size: u64, mass: &[f64], total: f64, w: &mut [f64]) {
    let mut remaining = size;
    let mut remaining_mass = total;
    for (j, m) in mass.iter().enumerate() {
        if remaining == 0 {
            w[j] = 0.0;
            continue;
        }
        let k = draw::binomial(rng, remaining, m / remaining_mass);
        w[j] = k as f64;
        remaining -= k;
        remaining_mass -= m;
    }
    // Rounding in the running mass can leave a few items unplaced; they belong to the last unit
    // with mass (p would have been 1 there in exact arithmetic).
    if remaining > 0 {
        if let Some(j) = mass.iter().rposition(|m| *m > 0.0) {
            w[j] += remaining as f64;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::rng::replicate_stream;

    #[test]
    fn draws_add_up_to_the_size() {
        let mut rng = replicate_stream(1, 0);
        let mut w = vec![0.0; 17];
        draw_rows(&mut rng, &mut w);
        assert_eq!(w.iter().sum::<f64>(), 17.0);
        let mass = [3.0, 0.0, 1000.0, 2.0];
        let mut w = vec![0.0; 4];
        multinomial(&mut rng, 1005, &mass, 1005.0, &mut w);
        assert_eq!(w.iter().sum::<f64>(), 1005.0);
        assert_eq!(w[1], 0.0);
    }
}
