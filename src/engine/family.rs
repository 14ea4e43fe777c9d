//! A family of comparisons: a suite of benchmarks compared at once should raise a false alarm
//! anywhere in it no more often than the family level allows, not 5 % per benchmark.
//!
//! Each comparison's p-value comes from inverting its interval
//! ([`crate::engine::verdict::p_change`]). Bonferroni reads every verdict at level 1 − α/m.
//! Holm's step-down (Holm, S. (1979), "A simple sequentially rejective multiple test
//! procedure", Scandinavian Journal of Statistics 6(2)) orders the p-values, reads the k-th
//! smallest at level 1 − α/(m − k + 1), and claims changes only while every smaller p-value was
//! claimed too; it controls the same family-wise rate and claims at least what Bonferroni does.
//! Equivalence under either correction is read at the Bonferroni level (conservative).

use crate::engine::verdict::Reading;

crate::wire_enum! {
    /// How the intervals and verdicts of a family of comparisons hold together.
    pub enum Multiplicity default None {
        /// Each at its own level.
        None = "none",
        /// Each at level 1 − α/m for m comparisons (the Bonferroni bound).
        Bonferroni = "bonferroni",
        /// Holm's step-down procedure (Holm 1979), which rejects at least what Bonferroni does.
        Holm = "holm",
    }
}

/// What each comparison of a family is read at. `own` is each comparison's own level (used
/// without a correction), `p` its p-value of a change; `family_level` is 1 − α.
pub fn readings(multiplicity: Multiplicity, family_level: f64, own: &[f64], p: &[f64]) -> Vec<Reading> {
    let m = p.len().max(1) as f64;
    let alpha = 1.0 - family_level;
    let bonferroni = share(family_level, m);
    match multiplicity {
        Multiplicity::None => own.iter().map(|l| Reading::alone(*l)).collect(),
        Multiplicity::Bonferroni => own
            .iter()
            .map(|_| Reading {
                simultaneous_level: Some(bonferroni),
                ..Reading::alone(bonferroni)
            })
            .collect(),
        Multiplicity::Holm => holm(alpha, family_level, p, bonferroni),
    }
}

/// The level 1 − (1 − `family_level`)/d, written (d − 1 + `family_level`)/d so that it keeps
/// every digit of a family level near 0 (where 1 − (1 − L) would round to 0).
fn share(family_level: f64, d: f64) -> f64 {
    (d - 1.0 + family_level) / d
}

fn holm(alpha: f64, family_level: f64, p: &[f64], bonferroni: f64) -> Vec<Reading> {
    let m = p.len();
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by(|a, b| p[*a].total_cmp(&p[*b]).then(a.cmp(b)));
    let mut out = vec![Reading::alone(bonferroni); m];
    let mut still = true;
    for (k, &job) in order.iter().enumerate() {
        let threshold = alpha / (m - k) as f64;
        still = still && p[job] <= threshold;
        out[job] = Reading {
            change_level: share(family_level, (m - k) as f64),
            change_allowed: still,
            equivalence_level: bonferroni,
            simultaneous_level: Some(bonferroni),
        };
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn holm_steps_down_and_stops_at_the_first_p_value_above_its_threshold() {
        // α = 0.05, m = 4: thresholds 0.0125, 0.0167, 0.025, 0.05 (Holm 1979's procedure).
        let p = [0.03, 0.001, 0.014, 0.2];
        let r = readings(Multiplicity::Holm, 0.95, &[0.95; 4], &p);
        let allowed: Vec<bool> = r.iter().map(|x| x.change_allowed).collect();
        assert_eq!(
            allowed,
            [false, true, true, false],
            "0.001 ≤ 0.0125, 0.014 ≤ 0.0167, 0.03 > 0.025 stops"
        );
        assert!((r[1].change_level - (1.0 - 0.0125)).abs() < 1e-12);
        assert!((r[2].change_level - (1.0 - 0.05 / 3.0)).abs() < 1e-12);
        // Bonferroni claims fewer: only p ≤ 0.0125.
        let b = readings(Multiplicity::Bonferroni, 0.95, &[0.95; 4], &p);
        assert!(b.iter().all(|x| (x.change_level - 0.9875).abs() < 1e-12 && x.change_allowed));
        // Without a correction each keeps its own level.
        let n = readings(Multiplicity::None, 0.95, &[0.9, 0.95, 0.99, 0.8], &p);
        assert_eq!(n.iter().map(|x| x.change_level).collect::<Vec<_>>(), [0.9, 0.95, 0.99, 0.8]);
    }

    #[test]
    fn a_family_level_near_0_keeps_its_digits() {
        // 1 − (1 − 5e-324)/1 rounds to 0, which is no level; (1 − 1 + L)/1 is L itself.
        for m in [Multiplicity::Bonferroni, Multiplicity::Holm] {
            let r = readings(m, 5e-324, &[0.95], &[0.5]);
            assert!(
                r[0].change_level > 0.0 && r[0].simultaneous_level.is_some_and(|l| l > 0.0),
                "{m}: {r:?}"
            );
        }
    }
}
