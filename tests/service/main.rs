//! The HTTP service as a client sees it: the real application on a real port, spoken to over
//! real HTTP, every response checked against the OpenAPI document; and the real binary as an
//! operator runs it. The engine's own numbers are tested in `tests/statistics`.
//!
//! - [`contract`]: the OpenAPI document, the parser, the catalogue and `docs/api.md` agree.
//! - [`interval`]: `POST /v1/interval`, validation, problems, tokens, limits.
//! - [`lenient`]: the forms R's JSON writer sends: one value as a one-element array, a list as
//!   one item alone; data never unboxed; pointers that resolve in the body as sent.
//! - [`bins`]: binned histograms: bad input, the statistics bins refuse, warnings, comparisons.
//! - [`compare`]: `POST /v1/compare` and a batch's comparisons: verdicts, too few runs, exact
//!   enumeration by default, pairs, tokens, validation, Bonferroni and Holm families.
//! - [`service`]: catalogue, batch, shedding and the pool, keys, metrics, CORS, compression.
//! - [`process`]: the binary: shutdown, logs, command-line help.
//! - [`faults`]: the binary against clients that hang up mid-job, trickle bytes, or hold more
//!   connections than it serves.
//! - [`check`]: `bandsaw check` as a CI job runs it: input forms, reports, exit statuses, and
//!   the same report in-process and from a server.
//! - [`bench`]: `bandsaw bench --quick`, text and JSON: every part of the report there and
//!   every rate a rate (no speed is asserted).
//! - [`svg`]: pictures (`Accept: image/svg+xml`): safe, accessible, and every mark where its
//!   number says, read back through the axis ticks.
//! - [`golden`]: full responses of varied requests, pinned bit for bit in `tests/golden/`.

mod bench;
mod bins;
mod check;
mod common;
mod compare;
mod contract;
mod faults;
mod golden;
mod interval;
mod lenient;
mod process;
mod service;
mod svg;
