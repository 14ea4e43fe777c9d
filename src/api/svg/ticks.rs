//! Axis ticks at "nice" round values: a step of 1, 2 or 5 times a power of ten, so that a reader
//! can interpolate between labels in their head.

/// Ticks that cover a range: the values (first ≤ low, last ≥ high) and their common step.
#[derive(Debug, Clone, PartialEq)]
pub struct Ticks {
    pub values: Vec<f64>,
    pub step: f64,
}

/// The round step (1, 2 or 5 × 10^k) nearest above `span / target`.
pub fn nice_step(span: f64, target: usize) -> f64 {
    let raw = span / target.max(1) as f64;
    let power = 10f64.powf(raw.log10().floor());
    let fraction = raw / power;
    let nice = [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .find(|&m| fraction <= m * (1.0 + 1e-9))
        .unwrap_or(10.0);
    nice * power
}

/// About `target` steps of a round size covering `[low, high]` (`low < high`, both finite).
pub fn covering(low: f64, high: f64, target: usize) -> Ticks {
    let step = nice_step(high - low, target);
    let first = (low / step + 1e-9).floor() as i64;
    let last = (high / step - 1e-9).ceil() as i64;
    let digits = decimals(step);
    // k · step carries binary noise (0.1 · 3); a tick's value is its label read back.
    let values = (first..=last)
        .map(|k| label(k as f64 * step, digits).parse().expect("a label is a number"))
        .collect();
    Ticks { values, step }
}

/// The decimals that show every multiple of `step` exactly (`step` is 1, 2 or 5 × 10^k).
pub fn decimals(step: f64) -> usize {
    (-(step.log10() + 1e-9).floor()).clamp(0.0, 15.0) as usize
}

/// A tick's label with `digits` decimals, never "-0".
pub fn label(value: f64, digits: usize) -> String {
    let s = format!("{value:.digits$}");
    if s.trim_start_matches('-').chars().all(|c| c == '0' || c == '.') {
        s.trim_start_matches('-').to_string()
    } else {
        s
    }
}

impl Ticks {
    /// Each tick's label.
    pub fn labels(&self) -> Vec<String> {
        let digits = decimals(self.step);
        self.values.iter().map(|&v| label(v, digits)).collect()
    }

    pub fn first(&self) -> f64 {
        self.values[0]
    }

    pub fn last(&self) -> f64 {
        self.values[self.values.len() - 1]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_are_one_two_or_five_times_a_power_of_ten() {
        // Powers of ten below 1 are not exact in binary: compare to a part in 10^12.
        for (span, target, step) in [
            (10.0, 5, 2.0),
            (9.4, 5, 2.0),
            (56.0, 5, 20.0),
            (0.034, 4, 0.01),
            (1.0, 10, 0.1),
            (3000.0, 6, 500.0),
            (7.0e-7, 5, 2.0e-7),
        ] {
            let got = nice_step(span, target);
            assert!((got / step - 1.0).abs() < 1e-12, "nice_step({span}, {target}) = {got}, not {step}");
        }
    }

    #[test]
    fn ticks_cover_the_range_at_round_values() {
        for (low, high, target) in [
            (0.3, 9.7, 5),
            (1234.0, 1290.0, 5),
            (-0.013, 0.021, 4),
            (0.95, 1.07, 6),
            (-5e4, -4.1e4, 5),
        ] {
            let t = covering(low, high, target);
            assert!(t.first() <= low && t.last() >= high, "{t:?} covers [{low}, {high}]");
            assert!(
                (t.first() - low).abs() < t.step && (t.last() - high).abs() < t.step,
                "{t:?} no wider than a step each side"
            );
            let n = t.values.len() - 1;
            assert!((target / 2..=2 * target + 1).contains(&n), "{n} steps for a target of {target}");
            for w in t.values.windows(2) {
                assert!(((w[1] - w[0]) / t.step - 1.0).abs() < 1e-9, "evenly spaced: {t:?}");
            }
        }
    }

    #[test]
    fn labels_are_exact_and_short() {
        let t = covering(0.95, 1.07, 6);
        assert_eq!(t.labels(), ["0.94", "0.96", "0.98", "1.00", "1.02", "1.04", "1.06", "1.08"]);
        let t = covering(-0.013, 0.021, 4);
        assert_eq!(t.labels(), ["-0.02", "-0.01", "0.00", "0.01", "0.02", "0.03"]);
        assert_eq!(covering(0.3, 9.7, 5).labels(), ["0", "2", "4", "6", "8", "10"]);
        assert_eq!(covering(1234.0, 1290.0, 5).labels(), ["1220", "1240", "1260", "1280", "1300"]);
        assert_eq!(label(-0.0001, 2), "0.00");
        // A value is its label read back: no binary noise such as 0.30000000000000004.
        assert!(covering(0.0, 1.0, 10).values.contains(&0.3));
    }
}
