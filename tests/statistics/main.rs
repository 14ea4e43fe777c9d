//! The engine's numbers, checked from outside: published and exact values, the BCa worked
//! example, a coverage study against an independent simulation, exact properties
//! (determinism across thread counts, prefixes, equivariance, degenerate data, calibrated Monte
//! Carlo errors), details that broader tests could miss, and the verdicts of comparisons by
//! simulation (false alarms, Holm's family-wise rate, power, equivalence, pairing). The sources
//! of every outside value are in `docs/references.md`.

mod bca;
mod bins;
mod blocks;
mod common;
mod coverage;
mod details;
mod properties;
mod reference;
mod shortcuts;
mod verdicts;
