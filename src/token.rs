//! The reproducibility token.
//!
//! A token records everything needed to recompute a response bit for bit: the format and
//! engine versions, the generator, the seed, the number of resamples actually drawn (and how
//! the run chose it), the statistic, scheme, methods, levels and inclusions, and a SHA-256
//! digest of the data. It is `bs1.` followed by the base64url encoding (no padding) of that
//! record as JSON: opaque to callers, but inspectable by an operator who needs to.
//!
//! The data itself is never in the token, only its digest; replaying a token on other data is
//! refused (`409 data-mismatch`).

use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine as _;
use serde::{Deserialize, Serialize};
use serde_json::Value;

use crate::engine::rng::GENERATOR;

pub const PREFIX: &str = "bs1.";
pub const FORMAT_VERSION: u32 = 1;
pub const ENGINE_VERSION: &str = env!("CARGO_PKG_VERSION");

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TokenBody {
    pub v: u32,
    pub engine: String,
    pub generator: String,
    pub seed: u64,
    /// "fixed", "auto" or "exact".
    pub mode: String,
    /// Resamples drawn (for "exact", the number of distinct resamples).
    pub resamples: u64,
    /// Why drawing stopped (see `engine::run::Stop`).
    pub stop: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub target_mc_error: Option<f64>,
    pub statistic: Value,
    pub scheme: Value,
    pub methods: Vec<String>,
    pub levels: Vec<f64>,
    pub include: Vec<String>,
    pub inner_resamples: usize,
    /// Hex SHA-256 of the data's canonical encoding.
    pub data: String,
}

pub fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

impl TokenBody {
    pub fn new_for(seed: u64, digest: &[u8; 32]) -> Self {
        TokenBody {
            v: FORMAT_VERSION,
            engine: ENGINE_VERSION.to_string(),
            generator: GENERATOR.to_string(),
            seed,
            mode: "fixed".into(),
            resamples: 0,
            stop: "done".into(),
            target_mc_error: None,
            statistic: Value::Null,
            scheme: Value::Null,
            methods: vec![],
            levels: vec![],
            include: vec![],
            inner_resamples: 0,
            data: hex(digest),
        }
    }

    pub fn encode(&self) -> String {
        let json = serde_json::to_vec(self).expect("a token serialises");
        format!("{PREFIX}{}", URL_SAFE_NO_PAD.encode(json))
    }
}

/// Why a token could not be read.
#[derive(Debug, Clone, PartialEq)]
pub enum TokenError {
    Malformed,
    /// Written by another format or engine version, whose results this engine may not reproduce.
    Version {
        format: u32,
        engine: String,
        generator: String,
    },
}

pub fn decode(token: &str) -> Result<TokenBody, TokenError> {
    let rest = token.strip_prefix(PREFIX).ok_or(TokenError::Malformed)?;
    let bytes = URL_SAFE_NO_PAD.decode(rest).map_err(|_| TokenError::Malformed)?;
    let body: TokenBody = serde_json::from_slice(&bytes).map_err(|_| TokenError::Malformed)?;
    if body.v != FORMAT_VERSION || body.engine != ENGINE_VERSION || body.generator != GENERATOR {
        return Err(TokenError::Version {
            format: body.v,
            engine: body.engine,
            generator: body.generator,
        });
    }
    Ok(body)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips_and_refuses_garbage() {
        let mut t = TokenBody::new_for(42, &[7u8; 32]);
        t.resamples = 2000;
        t.levels = vec![0.95];
        let s = t.encode();
        assert!(s.starts_with("bs1."));
        assert_eq!(decode(&s), Ok(t));
        assert_eq!(decode("bs1.!!!"), Err(TokenError::Malformed));
        assert_eq!(decode("xyz"), Err(TokenError::Malformed));
    }
}
