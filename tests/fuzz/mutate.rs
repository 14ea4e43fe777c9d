//! The inputs: raw bytes, and valid requests mutated structurally (fields dropped, duplicated,
//! renamed or retyped; numbers huge, negative, fractional or not JSON at all; deep nesting;
//! long and odd strings; arrays at and past the limits; numbers inside a data array large
//! enough to be read around the JSON tree; the text cut short or spliced with bytes).

use std::sync::OnceLock;

use proptest::prelude::*;
use proptest::sample::Index;
use serde_json::{json, Value};

use crate::{MAX_JOBS, MAX_RESAMPLES, MAX_ROWS};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Target {
    Interval,
    Compare,
    Batch,
}

/// Raw JSON text (or not quite JSON) to put in place of a value.
type Raw = String;

#[derive(Debug, Clone)]
pub enum Mutation {
    Drop(Index),
    Duplicate(Index, Raw),
    Replace(Index, Raw),
    Rename(Index, String),
    Nest(Index, usize, bool),
    LongString(Index, usize, char),
    BigArray(Index, usize, Raw),
    InData(Index, Raw),
    Truncate(Index),
    Splice(Index, Vec<u8>),
}

#[derive(Debug, Clone)]
pub struct Case {
    pub target: Target,
    /// Bytes sent as they are, or a seed request and its mutations.
    raw: Option<Vec<u8>>,
    seed: usize,
    mutations: Vec<Mutation>,
}

/// A data array of `n` values over 16 KiB of text, so that the lift reads it around the tree.
fn large(n: usize, shift: f64) -> Value {
    json!((0..n).map(|i| shift + ((i * 7919) % 1000) as f64 / 7.0).collect::<Vec<f64>>())
}

/// Valid requests of every route and data form, each cheap under the fuzz limits.
fn seeds() -> &'static [(Target, Value)] {
    static SEEDS: OnceLock<Vec<(Target, Value)>> = OnceLock::new();
    SEEDS.get_or_init(|| {
        let doc: Value = serde_json::from_str(include_str!("../../openapi/openapi.json")).expect("the document");
        let example = |route: &str| doc["paths"][route]["post"]["requestBody"]["content"]["application/json"]["example"].clone();
        let with = |mut v: Value, resamples: u64| {
            v["resamples"] = json!(resamples);
            v
        };
        vec![
            (Target::Interval, with(example("/v1/interval"), 200)),
            (Target::Interval, json!({"data": {"values": [1.5, 2.0, 9.0], "counts": [40, 25, 3]}, "statistic": {"name": "quantile", "p": 0.9}, "resamples": 200, "methods": ["percentile", "studentized"], "inner_resamples": 10, "include": ["histogram", "cdf"]})),
            (Target::Interval, json!({"data": {"columns": {"x": [1, 2, 3, 4, 5, 6], "y": [2.5, 4.1, 6.2, 7.9, 10.3, 12.0]}}, "statistic": {"name": "slope", "x": "x", "y": "y"}, "resamples": 100, "levels": [0.9, 0.95]})),
            (Target::Interval, json!({"data": {"bins": {"edges": [0, 10, 25, 50, 100], "counts": [12, 30, 7, 1], "overflow": 2}}, "statistic": "median", "resamples": 100})),
            (Target::Interval, json!({"data": [3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8], "scheme": {"kind": "stationary_block", "mean_block_length": "auto"}, "resamples": 100, "methods": ["bca", "normal"]})),
            (Target::Interval, json!({"data": [3, 1, 4, 1, 5, 9], "scheme": {"kind": "stratified", "strata": ["a", "a", "b", "b", 1, 1]}, "resamples": 100, "on_time_limit": "partial"})),
            (Target::Interval, json!({"data": [0, 1, 1, 0, 1], "statistic": "proportion", "resamples": "exact", "include": ["replicates"]})),
            (Target::Interval, json!({"data": large(2500, 0.0), "statistic": "median", "resamples": 100, "seed": 3})),
            (Target::Compare, with(example("/v1/compare"), 200)),
            (Target::Compare, json!({"baseline": large(2200, 0.0), "candidate": large(2200, 1.0), "statistic": "mean", "contrast": "difference", "resamples": 100})),
            (Target::Compare, json!({"baseline": [5, 6, 7, 8], "candidate": [5.5, 6.1, 7.3, 8.2], "paired": true, "resamples": 100, "better": "higher", "tolerance": 0.01})),
            (Target::Batch, {
                let mut b = example("/v1/batch");
                for j in b["jobs"].as_array_mut().expect("jobs") {
                    j["resamples"] = json!(100);
                }
                b
            }),
            (Target::Batch, json!({"jobs": [{"kind": "interval", "data": large(2100, 5.0), "resamples": 100}, {"kind": "compare", "baseline": [1, 2, 3], "candidate": [2, 3, 4], "resamples": 100}], "multiplicity": "holm"})),
        ]
    })
}

/// Literal tokens that stress a decoder: wrong types, out-of-range and not-quite-JSON numbers.
const TOKENS: [&str; 34] = [
    "null",
    "true",
    "false",
    "0",
    "-0",
    "-1",
    "1",
    "0.5",
    "2",
    "1e308",
    "-1e308",
    "1e400",
    "-1e400",
    "1e-400",
    "4.9e-324",
    "9007199254740993",
    "18446744073709551616",
    "-9223372036854775809",
    "1e76",
    "NaN",
    "Infinity",
    "-Infinity",
    "nan",
    "01",
    ".5",
    "1.",
    "+1",
    "0x10",
    "\"\"",
    "\"1\"",
    "[]",
    "{}",
    "[null]",
    "{\"name\":{}}",
];

fn raw() -> impl Strategy<Value = Raw> {
    prop_oneof![
        4 => prop::sample::select(TOKENS.to_vec()).prop_map(str::to_string),
        1 => any::<f64>().prop_map(|x| format!("{x:e}")),
        1 => any::<i64>().prop_map(|x| x.to_string()),
        1 => any::<u64>().prop_map(|x| x.to_string()),
        1 => prop::collection::vec(any::<char>(), 0..24).prop_map(|c| serde_json::to_string(&c.into_iter().collect::<String>()).expect("a string")),
        1 => prop::sample::select(vec!["percentile", "bca", "studentized", "iid", "exact", "auto", "mean", "quantile", "partial", "ratio", "holm", "interval", "compare"]).prop_map(|s| format!("\"{s}\"")),
    ]
}

fn sizes() -> impl Strategy<Value = usize> {
    let edges = [MAX_ROWS as usize, MAX_RESAMPLES as usize, MAX_JOBS, 20];
    prop_oneof![
        prop::sample::select(edges.iter().flat_map(|e| [e - 1, *e, e + 1]).collect::<Vec<_>>()),
        0usize..40,
    ]
}

fn mutation() -> impl Strategy<Value = Mutation> {
    prop_oneof![
        3 => any::<Index>().prop_map(Mutation::Drop),
        2 => (any::<Index>(), raw()).prop_map(|(i, r)| Mutation::Duplicate(i, r)),
        6 => (any::<Index>(), raw()).prop_map(|(i, r)| Mutation::Replace(i, r)),
        1 => (any::<Index>(), prop::collection::vec(any::<char>(), 0..12)).prop_map(|(i, k)| Mutation::Rename(i, k.into_iter().collect())),
        1 => (any::<Index>(), prop_oneof![1usize..8, 120usize..140, 1000usize..1200], any::<bool>()).prop_map(|(i, d, a)| Mutation::Nest(i, d, a)),
        1 => (any::<Index>(), prop_oneof![0usize..10, 60_000usize..70_000], any::<char>()).prop_map(|(i, n, c)| Mutation::LongString(i, n, c)),
        2 => (any::<Index>(), sizes(), raw()).prop_map(|(i, n, r)| Mutation::BigArray(i, n, r)),
        3 => (any::<Index>(), raw()).prop_map(|(i, r)| Mutation::InData(i, r)),
        1 => any::<Index>().prop_map(Mutation::Truncate),
        1 => (any::<Index>(), prop::collection::vec(any::<u8>(), 1..8)).prop_map(|(i, b)| Mutation::Splice(i, b)),
    ]
}

const JSONISH: &[u8] = b"{}[]\",:0123456789.eE+-truefalsnul \\/abcdNI";

pub fn case() -> impl Strategy<Value = Case> {
    let target = prop::sample::select(vec![Target::Interval, Target::Compare, Target::Batch]);
    let raw_case = |bytes: BoxedStrategy<Vec<u8>>| {
        (target.clone(), bytes).prop_map(|(target, b)| Case {
            target,
            raw: Some(b),
            seed: 0,
            mutations: Vec::new(),
        })
    };
    prop_oneof![
        1 => raw_case(prop::collection::vec(any::<u8>(), 0..512).boxed()),
        1 => raw_case(prop::collection::vec(prop::sample::select(JSONISH), 0..512).boxed()),
        8 => (0..seeds().len(), prop::collection::vec(mutation(), 0..4)).prop_map(|(seed, mutations)| Case {
            target: seeds()[seed].0,
            raw: None,
            seed,
            mutations,
        }),
    ]
}

impl Case {
    /// A label for the tally: the first mutation's kind, or what the case is without one.
    pub fn kind(&self) -> &'static str {
        match (&self.raw, self.mutations.first()) {
            (Some(_), _) => "raw bytes",
            (None, None) => "valid request",
            (None, Some(m)) => match m {
                Mutation::Drop(_) => "field dropped",
                Mutation::Duplicate(..) => "field duplicated",
                Mutation::Replace(..) => "value retyped or out of range",
                Mutation::Rename(..) => "field renamed",
                Mutation::Nest(..) => "deep nesting",
                Mutation::LongString(..) => "long string",
                Mutation::BigArray(..) => "array near a limit",
                Mutation::InData(..) => "inside a large data array",
                Mutation::Truncate(_) => "truncated",
                Mutation::Splice(..) => "bytes spliced",
            },
        }
    }

    pub fn body(&self) -> Vec<u8> {
        if let Some(b) = &self.raw {
            return b.clone();
        }
        let mut tree = seeds()[self.seed].1.clone();
        let mut subs: Vec<(String, String)> = Vec::new();
        for m in &self.mutations {
            tree_mutation(&mut tree, m, &mut subs);
        }
        let mut text = serde_json::to_string(&tree).expect("a tree").into_bytes();
        for (from, to) in &subs {
            text = replace_once(&text, from.as_bytes(), to.as_bytes());
        }
        for m in &self.mutations {
            text_mutation(&mut text, m);
        }
        text
    }
}

/// Pointers to every node (root first), or to every object member.
fn nodes(v: &Value, at: String, members_only: bool, out: &mut Vec<String>) {
    match v {
        Value::Object(m) => {
            for (k, c) in m {
                let p = format!("{at}/{}", k.replace('~', "~0").replace('/', "~1"));
                out.push(p.clone());
                nodes(c, p, members_only, out);
            }
        }
        Value::Array(a) => {
            for (i, c) in a.iter().enumerate() {
                let p = format!("{at}/{i}");
                if !members_only {
                    out.push(p.clone());
                }
                nodes(c, p, members_only, out);
            }
        }
        _ => {}
    }
}

fn pick(tree: &Value, i: &Index, members_only: bool) -> Option<String> {
    let mut all = Vec::new();
    nodes(tree, String::new(), members_only, &mut all);
    (!all.is_empty()).then(|| all[i.index(all.len())].clone())
}

/// Put raw text at `at`, through a placeholder string replaced after serialisation.
fn put_raw(tree: &mut Value, at: &str, raw: String, subs: &mut Vec<(String, String)>) {
    let mark = format!("\u{1}RAW{}\u{1}", subs.len());
    if let Some(slot) = tree.pointer_mut(at) {
        *slot = Value::String(mark.clone());
        subs.push((serde_json::to_string(&mark).expect("a mark"), raw));
    }
}

fn split(at: &str) -> (String, String) {
    let (parent, key) = at.rsplit_once('/').unwrap_or(("", at));
    (parent.to_string(), key.replace("~1", "/").replace("~0", "~"))
}

fn tree_mutation(tree: &mut Value, m: &Mutation, subs: &mut Vec<(String, String)>) {
    match m {
        Mutation::Drop(i) => {
            if let Some(at) = pick(tree, i, true) {
                let (parent, key) = split(&at);
                if let Some(Value::Object(o)) = tree.pointer_mut(&parent) {
                    o.shift_remove(&key);
                }
            }
        }
        Mutation::Duplicate(i, raw) => {
            if let Some(at) = pick(tree, i, true) {
                let (parent, key) = split(&at);
                let mark = format!("\u{2}DUP{}\u{2}", subs.len());
                if let Some(Value::Object(o)) = tree.pointer_mut(&parent) {
                    o.insert(mark.clone(), Value::Null);
                    subs.push((
                        format!("{}:null", serde_json::to_string(&mark).expect("a mark")),
                        format!("{}:{raw}", serde_json::to_string(&key).expect("a key")),
                    ));
                }
            }
        }
        Mutation::Replace(i, raw) => {
            if let Some(at) = pick(tree, i, false) {
                put_raw(tree, &at, raw.clone(), subs);
            }
        }
        Mutation::Rename(i, new) => {
            if let Some(at) = pick(tree, i, true) {
                let (parent, key) = split(&at);
                if let Some(Value::Object(o)) = tree.pointer_mut(&parent) {
                    if let Some(v) = o.shift_remove(&key) {
                        o.insert(new.clone(), v);
                    }
                }
            }
        }
        Mutation::Nest(i, depth, array) => {
            if let Some(at) = pick(tree, i, false) {
                let (open, close) = if *array { ("[", "]") } else { ("{\"a\":", "}") };
                put_raw(tree, &at, format!("{}1{}", open.repeat(*depth), close.repeat(*depth)), subs);
            }
        }
        Mutation::LongString(i, n, c) => {
            if let Some(at) = pick(tree, i, false) {
                put_raw(tree, &at, serde_json::to_string(&c.to_string().repeat(*n)).expect("a string"), subs);
            }
        }
        Mutation::BigArray(i, n, raw) => {
            if let Some(at) = pick(tree, i, false) {
                put_raw(tree, &at, format!("[{}]", vec![raw.as_str(); *n].join(",")), subs);
            }
        }
        _ => {}
    }
}

fn text_mutation(text: &mut Vec<u8>, m: &Mutation) {
    match m {
        Mutation::Truncate(i) => text.truncate(i.index(text.len() + 1)),
        Mutation::Splice(i, bytes) => {
            let at = i.index(text.len() + 1);
            text.splice(at..at, bytes.iter().copied());
        }
        Mutation::InData(i, raw) => {
            if let Some((start, end)) = largest_flat_array(text) {
                let commas: Vec<usize> = (start..end).filter(|&k| text[k] == b',').collect();
                if commas.len() >= 2 {
                    let c = i.index(commas.len() - 1);
                    text.splice(commas[c] + 1..commas[c + 1], raw.bytes());
                }
            }
        }
        _ => {}
    }
}

/// The longest `[...]` with no bracket inside, as (after `[`, at `]`), if over 16 KiB.
fn largest_flat_array(text: &[u8]) -> Option<(usize, usize)> {
    let mut best: Option<(usize, usize)> = None;
    let mut open = None;
    for (k, b) in text.iter().enumerate() {
        match b {
            b'[' => open = Some(k + 1),
            b']' => {
                if let Some(s) = open.take() {
                    if best.is_none_or(|(bs, be)| k - s > be - bs) {
                        best = Some((s, k));
                    }
                }
            }
            b'{' | b'}' => open = None,
            _ => {}
        }
    }
    best.filter(|(s, e)| e - s >= 16 * 1024)
}

fn replace_once(text: &[u8], from: &[u8], to: &[u8]) -> Vec<u8> {
    match text.windows(from.len()).position(|w| w == from) {
        Some(p) => [&text[..p], to, &text[p + from.len()..]].concat(),
        None => text.to_vec(),
    }
}
