//! The reproducibility token.
//!
//! A token records everything needed to recompute a response bit for bit: the format and engine
//! versions, the generator, the seed, the number of resamples actually drawn and why drawing
//! stopped, the parameters, and a SHA-256 digest of the data. It is [`PREFIX`] followed by the
//! base64url encoding (no padding) of that record as JSON: opaque to callers, but inspectable by
//! an operator who needs to. The parameters go through the same types, rules and limits as a
//! request's when a token is replayed, so an edited token gets no further than a request would.
//!
//! The data itself is never in the token, only its digest; replaying a token on other data is
//! refused (`409 data-mismatch`).

use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine as _;
use serde::{Deserialize, Serialize};

use super::request::Comparing;
use super::request::Params;
use crate::engine::plan::Stop;
use crate::engine::rng::GENERATOR;

/// The prefix of every token: "rt" for replay token, then the format version.
pub const PREFIX: &str = "rt2.";
pub const FORMAT_VERSION: u32 = 2;
pub const ENGINE_VERSION: &str = env!("CARGO_PKG_VERSION");

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TokenBody {
    pub v: u32,
    pub engine: String,
    pub generator: String,
    pub seed: u64,
    /// Resamples drawn (for `"exact"`, the number of distinct resamples).
    pub drawn: u64,
    pub stop: Stop,
    pub params: Params,
    /// What a comparison compared, for a token of `POST /v1/compare`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub comparing: Option<Comparing>,
    /// Hex SHA-256 of each sample's canonical encoding.
    pub data: Vec<String>,
}

pub fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

impl TokenBody {
    pub fn new(seed: u64, drawn: u64, stop: Stop, params: Params, digests: &[[u8; 32]]) -> Self {
        TokenBody {
            v: FORMAT_VERSION,
            engine: ENGINE_VERSION.to_string(),
            generator: GENERATOR.to_string(),
            seed,
            drawn,
            stop,
            params,
            comparing: None,
            data: digests.iter().map(|d| hex(d)).collect(),
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
    /// Not a token of this service, or damaged, or holding values outside their types' ranges.
    Malformed,
    /// Written by another format, engine version or generator, whose results this engine may not
    /// reproduce.
    Version { format: String, engine: String, generator: String },
}

pub fn decode(token: &str) -> Result<TokenBody, TokenError> {
    let Some((head, rest)) = token.split_once('.') else {
        return Err(TokenError::Malformed);
    };
    if format!("{head}.") != PREFIX {
        return Err(TokenError::Version {
            format: head.to_string(),
            engine: "unknown".into(),
            generator: "unknown".into(),
        });
    }
    let bytes = URL_SAFE_NO_PAD.decode(rest).map_err(|_| TokenError::Malformed)?;
    let body: TokenBody = serde_json::from_slice(&bytes).map_err(|_| TokenError::Malformed)?;
    if body.v != FORMAT_VERSION || body.engine != ENGINE_VERSION || body.generator != GENERATOR {
        return Err(TokenError::Version {
            format: body.v.to_string(),
            engine: body.engine,
            generator: body.generator,
        });
    }
    Ok(body)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::api::fields::default_resamples;

    #[test]
    fn round_trips_and_refuses_garbage() {
        let params = Params {
            statistic: Default::default(),
            resamples: default_resamples(),
            target_mc_error: None,
            levels: crate::api::fields::default_levels(),
            methods: crate::api::fields::default_methods(),
            scheme: Default::default(),
            include: crate::api::fields::no_extras(),
            inner_resamples: Default::default(),
        };
        let t = TokenBody::new(42, 2000, Stop::Done, params, &[[7u8; 32]]);
        let s = t.encode();
        assert!(s.starts_with(PREFIX));
        assert_eq!(decode(&s), Ok(t.clone()));
        assert_eq!(decode("rt2.!!!"), Err(TokenError::Malformed));
        assert_eq!(decode("xyz"), Err(TokenError::Malformed));
        assert!(matches!(decode("bs1.eyJ2IjoxfQ"), Err(TokenError::Version { .. })));
        // Another generator's token names it: its numbers would differ.
        let mut old = t.clone();
        old.generator = "chacha8-stream-per-replicate-v2".into();
        assert_eq!(
            decode(&old.encode()),
            Err(TokenError::Version {
                format: FORMAT_VERSION.to_string(),
                engine: ENGINE_VERSION.into(),
                generator: old.generator.clone(),
            })
        );
    }
}
