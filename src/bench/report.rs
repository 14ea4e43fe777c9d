//! The report: the measured numbers as one serialisable value (`--format json`), and the same
//! numbers as plain text tables.

use std::fmt::Write;

use serde::Serialize;

/// Everything one run of `bandsaw bench` measured.
#[derive(Debug, Clone, Serialize)]
pub struct Report {
    /// The version of bandsaw that measured.
    pub bandsaw: &'static str,
    pub machine: Machine,
    pub ceiling: Ceiling,
    pub kernels: Vec<Kernel>,
    pub scaling: Scaling,
    pub capacity: Capacity,
}

/// The machine and the run's settings.
#[derive(Debug, Clone, Serialize)]
pub struct Machine {
    pub logical_cpus: usize,
    /// The most threads measured on.
    pub threads: usize,
    /// Target seconds of each measurement.
    pub seconds_per_measurement: f64,
    pub quick: bool,
}

/// The generator's bounded-draw rate on one thread.
#[derive(Debug, Clone, Serialize)]
pub struct Ceiling {
    /// Draws were uniform in `0..range`.
    pub range: u32,
    pub draws: u64,
    pub seconds: f64,
    pub draws_per_second: f64,
}

/// One kernel timed on one thread.
#[derive(Debug, Clone, Serialize)]
pub struct Kernel {
    pub statistic: &'static str,
    pub n: usize,
    /// How a replicate is computed.
    pub path: &'static str,
    /// True when a replicate draws its n rows, so that its row-draw rate means something.
    pub draws_rows: bool,
    /// Resamples of the timed run.
    pub resamples: u64,
    pub seconds: f64,
    pub resamples_per_second: f64,
    pub ns_per_resample: f64,
    /// n × resamples per second, for a kernel that draws rows.
    pub row_draws_per_second: Option<f64>,
    /// The row-draw rate as a percentage of the ceiling's draw rate.
    pub percent_of_ceiling: Option<f64>,
}

/// The same job on more threads.
#[derive(Debug, Clone, Serialize)]
pub struct Scaling {
    pub statistic: &'static str,
    pub n: usize,
    pub resamples: u64,
    pub runs: Vec<ScalingRun>,
    /// What this machine's scaling run cannot show, if anything.
    pub note: Option<String>,
}

/// The scaling job on one thread count.
#[derive(Debug, Clone, Serialize)]
pub struct ScalingRun {
    pub threads: usize,
    /// The better of two runs.
    pub seconds: f64,
    /// One thread's seconds over these.
    pub speedup: f64,
}

/// The capacity of common jobs on every measured thread.
#[derive(Debug, Clone, Serialize)]
pub struct Capacity {
    pub threads: usize,
    /// Always true: capacities are extrapolated from shorter or longer runs, not run at size.
    pub extrapolated: bool,
    pub jobs: Vec<CapacityRow>,
}

/// One timed run: its resamples and wall-clock seconds.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Timing {
    pub resamples: u64,
    pub seconds: f64,
}

/// One job's capacity.
#[derive(Debug, Clone, Serialize)]
pub struct CapacityRow {
    pub statistic: &'static str,
    pub n: usize,
    pub scheme: &'static str,
    pub mean_block_length: Option<f64>,
    pub methods: Vec<&'static str>,
    /// The two runs the line is fitted through.
    pub timed: Vec<Timing>,
    /// Laying the job out (sorting, for an order statistic), once per request.
    pub prepare_seconds: f64,
    /// The layout and the fixed part of a run together.
    pub fixed_seconds: f64,
    pub seconds_per_resample: f64,
    pub resamples_per_second: f64,
    /// The most resamples that fit in one second with the fixed time, rounded down to two
    /// significant figures.
    pub resamples_in_one_second: u64,
}

/// A whole number with its thousands set apart by spaces: 1 000 000.
pub fn grouped(v: u64) -> String {
    let digits = v.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(' ');
        }
        out.push(c);
    }
    out
}

/// Three significant figures of `v` (at most one decimal place above 100 is dropped).
fn three_figures(v: f64) -> String {
    if v >= 100.0 {
        format!("{v:.0}")
    } else if v >= 10.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.2}")
    }
}

/// A rate with a unit prefix: 612 M, 1.52 M, 48.3 k.
pub fn rate(v: f64) -> String {
    let (scaled, prefix) = [(1e9, "G"), (1e6, "M"), (1e3, "k")]
        .iter()
        .find(|(p, _)| v >= *p)
        .map_or((v, ""), |(p, name)| (v / p, *name));
    format!("{} {prefix}", three_figures(scaled)).trim_end().to_string()
}

/// A duration in the unit that reads best: 433 ns, 10.1 µs, 2.31 ms, 0.502 s.
pub fn duration(seconds: f64) -> String {
    let (v, unit) = if seconds < 1e-6 {
        (seconds * 1e9, "ns")
    } else if seconds < 1e-3 {
        (seconds * 1e6, "µs")
    } else if seconds < 1.0 {
        (seconds * 1e3, "ms")
    } else {
        (seconds, "s")
    };
    format!("{} {unit}", three_figures(v))
}

/// A percentage: whole above 10, one decimal below.
fn percent(p: f64) -> String {
    if p >= 10.0 {
        format!("{p:.0} %")
    } else {
        format!("{p:.1} %")
    }
}

/// "median, n = 10 000".
fn job_name(statistic: &str, n: usize) -> String {
    format!("{statistic}, n = {}", grouped(n as u64))
}

/// "1 thread", "8 threads".
fn threads(n: usize) -> String {
    format!("{n} thread{}", if n == 1 { "" } else { "s" })
}

/// The width of the widest of `labels`, in characters.
fn widest<'a>(labels: impl Iterator<Item = &'a String>) -> usize {
    labels.map(|l| l.chars().count()).max().unwrap_or(0)
}

/// The report as text.
pub fn text(r: &Report) -> String {
    let mut out = String::new();
    heading(&mut out, r);
    ceiling(&mut out, &r.ceiling);
    kernels(&mut out, &r.kernels);
    scaling(&mut out, &r.scaling);
    capacity(&mut out, &r.capacity);
    out
}

fn heading(out: &mut String, r: &Report) {
    let m = &r.machine;
    let _ = writeln!(out, "bandsaw {} bench: what this machine can do", r.bandsaw);
    let _ = writeln!(
        out,
        "{} logical CPUs, measured on up to {}, about {} per measurement{}",
        m.logical_cpus,
        threads(m.threads),
        duration(m.seconds_per_measurement),
        if m.quick { " (--quick: rough numbers)" } else { "" }
    );
}

fn ceiling(out: &mut String, c: &Ceiling) {
    let _ = writeln!(out, "\nThe ceiling, one thread: bounded draws from the generator");
    let _ = writeln!(
        out,
        "  rows below {} (as the kernels draw them) from ChaCha8 replicate streams   {} draws/s",
        grouped(u64::from(c.range)),
        rate(c.draws_per_second)
    );
}

fn kernels(out: &mut String, ks: &[Kernel]) {
    let names: Vec<String> = ks.iter().map(|k| job_name(k.statistic, k.n)).collect();
    let w = widest(names.iter()).max("job".len());
    let p = ks.iter().map(|k| k.path.chars().count()).max().unwrap_or(0);
    let _ = writeln!(out, "\nKernels, one thread (a row-draw is one row drawn into a resample)");
    let _ = writeln!(out, "  {:w$}  {:p$}  {:>12}  {:>10}", "job", "path", "row-draws/s", "of ceiling");
    for (k, name) in ks.iter().zip(&names) {
        if let (Some(rd), Some(pc)) = (k.row_draws_per_second, k.percent_of_ceiling) {
            let _ = writeln!(out, "  {name:w$}  {:p$}  {:>12}  {:>10}", k.path, rate(rd), percent(pc));
        }
    }
    let _ = writeln!(out, "  {:w$}  {:p$}  {:>12}  {:>10}", "", "", "resamples/s", "each");
    for (k, name) in ks.iter().zip(&names) {
        if !k.draws_rows {
            let each = duration(k.ns_per_resample * 1e-9);
            let _ = writeln!(out, "  {name:w$}  {:p$}  {:>12}  {each:>10}", k.path, rate(k.resamples_per_second));
        }
    }
}

fn scaling(out: &mut String, s: &Scaling) {
    let _ = writeln!(
        out,
        "\nScaling: {}, B = {}, the same job on more threads",
        job_name(s.statistic, s.n),
        grouped(s.resamples)
    );
    let _ = writeln!(out, "  {:>7}  {:>10}  {:>8}", "threads", "time", "speed-up");
    for run in &s.runs {
        let _ = writeln!(
            out,
            "  {:>7}  {:>10}  {:>8}",
            run.threads,
            duration(run.seconds),
            format!("{:.2}×", run.speedup)
        );
    }
    if let Some(note) = &s.note {
        let _ = writeln!(out, "  note: {note}");
    }
}

/// A capacity row's job: statistic, size, scheme and methods.
fn capacity_name(c: &CapacityRow) -> String {
    let mut name = job_name(c.statistic, c.n);
    if let Some(l) = c.mean_block_length {
        let _ = write!(name, ", stationary blocks of mean {l}");
    }
    let methods: Vec<String> = c
        .methods
        .iter()
        .map(|m| if *m == "bca" { "BCa".to_string() } else { (*m).to_string() })
        .collect();
    let _ = write!(name, ", {}", methods.join(" + "));
    name
}

fn capacity(out: &mut String, c: &Capacity) {
    let names: Vec<String> = c.jobs.iter().map(capacity_name).collect();
    let w = widest(names.iter()).max("job".len());
    let _ = writeln!(
        out,
        "\nCapacity on {}: resamples that fit in one second (extrapolated)",
        threads(c.threads)
    );
    let _ = writeln!(
        out,
        "  {:w$}  {:>12}  {:>10}  {:>12}  {:>10}",
        "job", "in 1 s", "fixed", "per resample", "timed at B"
    );
    for (row, name) in c.jobs.iter().zip(&names) {
        let timed_at = row.timed.last().map_or(0, |t| t.resamples);
        let _ = writeln!(
            out,
            "  {name:w$}  {:>12}  {:>10}  {:>12}  {:>10}",
            grouped(row.resamples_in_one_second),
            duration(row.fixed_seconds),
            duration(row.seconds_per_resample),
            grouped(timed_at)
        );
    }
    let _ = writeln!(
        out,
        "  Each job was timed at B and at B/4 resamples; a line through the two gives its wall-clock\n  \
         time per resample on all the threads and its fixed time (layout included). The count\n  \
         that fits in the rest of a second is rounded down to two significant figures."
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_read_plainly() {
        assert_eq!(grouped(0), "0");
        assert_eq!(grouped(999), "999");
        assert_eq!(grouped(10_000), "10 000");
        assert_eq!(grouped(1_000_000), "1 000 000");
        assert_eq!(rate(612.4e6), "612 M");
        assert_eq!(rate(1.524e6), "1.52 M");
        assert_eq!(rate(48_300.0), "48.3 k");
        assert_eq!(rate(7.0), "7.00");
        assert_eq!(duration(433e-9), "433 ns");
        assert_eq!(duration(10.1e-6), "10.1 µs");
        assert_eq!(duration(0.502), "502 ms");
        assert_eq!(duration(2.5), "2.50 s");
    }
}
