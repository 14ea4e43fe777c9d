//! Large arrays of numbers in a request body, read straight into floats before the rest of the
//! body becomes a JSON tree.
//!
//! A million numbers as `serde_json::Value`s take several times longer to build and drop than a
//! median takes to resample. So before a body is parsed, every array of plain JSON numbers
//! longer than [`LIFT_FROM_BYTES`] that sits where data goes (under a key of [`DATA_KEYS`], or as
//! a member of a `columns` object) is parsed here, split over the pool's threads, and replaced by
//! `[]` in the text the tree is built from; the decoder of those fields takes the numbers back by
//! their JSON Pointer ([`take`]). Anything unusual (an element that is not a plain finite
//! number, an escaped key anywhere, a key given twice in an object, nesting deeper than
//! serde_json allows, a pointer longer than [`MAX_POINTER_BYTES`], text that is not JSON) leaves
//! the text as it was, so the ordinary path reads it and names what is wrong. The skim's own
//! memory is linear in the body: keys are borrowed from it, and a pointer is built only for an
//! array that is lifted.
//! Both paths round each number to the nearest double, so they give the same bits.

use std::borrow::Cow;
use std::cell::RefCell;
use std::collections::{HashMap, HashSet};
use std::sync::{Arc, Mutex};

use rayon::prelude::*;

use super::problem::escape_token;

/// Arrays shorter than this, in bytes of text, go through the ordinary parser: lifting pays only
/// where the tree would be large.
pub const LIFT_FROM_BYTES: usize = 16 * 1024;

/// The keys whose arrays hold data.
/// (Not `counts`: whole numbers beyond 2^53 must reach their decoder exact, and named as sent.)
const DATA_KEYS: [&str; 5] = ["data", "values", "edges", "baseline", "candidate"];

/// The key of an object whose every member is a column of data.
const COLUMNS: &str = "columns";

/// serde_json refuses deeper nesting; the skim leaves such a body to it.
const MAX_DEPTH: usize = 128;

/// A lifted array's pointer is at most this long (one per 16 KiB of body at most, so their total
/// stays a small multiple of the body).
const MAX_POINTER_BYTES: usize = 256;

/// A large array is parsed in pieces of about this many bytes, in parallel.
const PIECE_BYTES: usize = 256 * 1024;

/// Arrays lifted out of one body, by JSON Pointer.
#[derive(Debug, Default)]
pub struct Lifted(Mutex<HashMap<String, Vec<f64>>>);

impl Lifted {
    pub fn is_empty(&self) -> bool {
        self.0.lock().expect("never poisoned: no code panics holding it").is_empty()
    }
}

/// The body with its large data arrays replaced by `[]`, and those arrays.
pub fn lift(body: &[u8]) -> (Cow<'_, [u8]>, Arc<Lifted>) {
    let mut skim = Skim {
        b: body,
        i: 0,
        path: Vec::new(),
        found: Vec::new(),
    };
    if skim.value(0).is_none() {
        return (Cow::Borrowed(body), Arc::default());
    }
    skim.ws();
    if skim.i != body.len() {
        return (Cow::Borrowed(body), Arc::default());
    }
    let parsed: Vec<(Region, Vec<f64>)> = skim
        .found
        .into_iter()
        .filter_map(|r| numbers(&body[r.start + 1..r.end - 1]).map(|x| (r, x)))
        .collect();
    if parsed.is_empty() {
        return (Cow::Borrowed(body), Arc::default());
    }
    let mut text = Vec::with_capacity(body.len() - parsed.iter().map(|(r, _)| r.end - r.start).sum::<usize>() + 64);
    let mut last = 0;
    let mut arrays = HashMap::new();
    for (r, x) in parsed {
        text.extend_from_slice(&body[last..r.start]);
        text.extend_from_slice(b"[]");
        last = r.end;
        arrays.insert(r.pointer, x);
    }
    text.extend_from_slice(&body[last..]);
    (Cow::Owned(text), Arc::new(Lifted(Mutex::new(arrays))))
}

thread_local! {
    static SCOPE: RefCell<Option<(Arc<Lifted>, String)>> = const { RefCell::new(None) };
}

/// Restores the scope that was in force, also when decoding panics.
struct Restore(Option<(Arc<Lifted>, String)>);

impl Drop for Restore {
    fn drop(&mut self) {
        SCOPE.set(self.0.take());
    }
}

/// Run `f` (a decoder, on this thread) with `lifted` reachable through [`take`]; pointers that
/// `f` asks for are relative to `prefix` (`/jobs/3` for a batch's fourth job).
pub fn within<R>(lifted: &Arc<Lifted>, prefix: &str, f: impl FnOnce() -> R) -> R {
    let _restore = Restore(SCOPE.replace(Some((lifted.clone(), prefix.to_string()))));
    f()
}

/// The lifted array at `at` (relative to the scope's prefix), if one was lifted there; each is
/// taken once.
pub fn take(at: &str) -> Option<Vec<f64>> {
    SCOPE.with_borrow(|scope| {
        let (lifted, prefix) = scope.as_ref()?;
        let mut arrays = lifted.0.lock().expect("never poisoned: no code panics holding it");
        arrays.remove(&format!("{prefix}{at}"))
    })
}

/// A place in the body.
enum Segment<'a> {
    Key(&'a str),
    Index(usize),
}

/// An array to lift: its text from `[` to `]` inclusive.
struct Region {
    start: usize,
    end: usize,
    pointer: String,
}

/// A pass over the body that checks only its nesting and finds the arrays to lift.
struct Skim<'a> {
    b: &'a [u8],
    i: usize,
    path: Vec<Segment<'a>>,
    found: Vec<Region>,
}

impl<'a> Skim<'a> {
    fn ws(&mut self) {
        while self.b.get(self.i).is_some_and(|c| matches!(c, b' ' | b'\n' | b'\r' | b'\t')) {
            self.i += 1;
        }
    }

    fn value(&mut self, depth: usize) -> Option<()> {
        if depth > MAX_DEPTH {
            return None;
        }
        self.ws();
        match self.b.get(self.i)? {
            b'{' => self.object(depth),
            b'[' => self.array(depth),
            b'"' => self.string().map(|_| ()),
            _ => {
                let rest = &self.b[self.i..];
                let len = rest.iter().position(|c| b",]} \n\r\t".contains(c)).unwrap_or(rest.len());
                (len > 0).then(|| self.i += len)
            }
        }
    }

    /// Skip a string; its content when it has no escapes.
    fn string(&mut self) -> Option<Option<&'a str>> {
        let start = self.i + 1;
        let mut escaped = false;
        let mut j = start;
        loop {
            match self.b.get(j)? {
                b'"' => break,
                b'\\' => {
                    escaped = true;
                    j += 2;
                }
                _ => j += 1,
            }
        }
        self.i = j + 1;
        let content: &'a [u8] = &self.b[start..j];
        Some(if escaped { None } else { Some(std::str::from_utf8(content).ok()?) })
    }

    fn object(&mut self, depth: usize) -> Option<()> {
        self.i += 1;
        self.ws();
        if self.b.get(self.i) == Some(&b'}') {
            self.i += 1;
            return Some(());
        }
        // The skim does not decode escapes, so it cannot tell an escaped key from a plain one:
        // a body with one is left whole to the ordinary reader, as is one with a key twice.
        let mut keys = HashSet::new();
        loop {
            self.ws();
            if self.b.get(self.i) != Some(&b'"') {
                return None;
            }
            let key = self.string()??;
            if !keys.insert(key) {
                return None;
            }
            self.ws();
            if self.b.get(self.i) != Some(&b':') {
                return None;
            }
            self.i += 1;
            self.path.push(Segment::Key(key));
            self.value(depth + 1)?;
            self.path.pop();
            self.ws();
            match self.b.get(self.i)? {
                b',' => self.i += 1,
                b'}' => {
                    self.i += 1;
                    return Some(());
                }
                _ => return None,
            }
        }
    }

    fn array(&mut self, depth: usize) -> Option<()> {
        if self.holds_data() {
            let rest = &self.b[self.i + 1..];
            if let Some(close) = memchr::memchr(b']', rest) {
                let pointer = (close + 2 >= LIFT_FROM_BYTES && memchr::memchr3(b'[', b'{', b'"', &rest[..close]).is_none())
                    .then(|| self.pointer())
                    .flatten();
                if let Some(pointer) = pointer {
                    let (start, end) = (self.i, self.i + close + 2);
                    self.found.push(Region { start, end, pointer });
                    self.i = end;
                    return Some(());
                }
            }
        }
        self.i += 1;
        self.ws();
        if self.b.get(self.i) == Some(&b']') {
            self.i += 1;
            return Some(());
        }
        for k in 0.. {
            self.path.push(Segment::Index(k));
            self.value(depth + 1)?;
            self.path.pop();
            self.ws();
            match self.b.get(self.i)? {
                b',' => self.i += 1,
                b']' => break,
                _ => return None,
            }
        }
        self.i += 1;
        Some(())
    }

    /// Whether the value at the current path is where data goes.
    fn holds_data(&self) -> bool {
        match self.path.as_slice() {
            [.., Segment::Key(parent), Segment::Key(_)] if *parent == COLUMNS => true,
            [.., Segment::Key(key)] => DATA_KEYS.contains(key),
            _ => false,
        }
    }

    /// The current path as a JSON Pointer; `None` if longer than [`MAX_POINTER_BYTES`].
    fn pointer(&self) -> Option<String> {
        let mut out = String::new();
        for s in &self.path {
            match s {
                Segment::Key(k) if out.len() + k.len() < MAX_POINTER_BYTES => out.push_str(&format!("/{}", escape_token(k))),
                Segment::Key(_) => return None,
                Segment::Index(i) => out.push_str(&format!("/{i}")),
            }
        }
        (out.len() <= MAX_POINTER_BYTES).then_some(out)
    }
}

/// The numbers between an array's brackets, if every element is a plain finite JSON number.
fn numbers(inner: &[u8]) -> Option<Vec<f64>> {
    if skip_ws(inner).is_empty() {
        return Some(Vec::new());
    }
    // Each piece is read straight into its place in the result: a piece of k commas holds k + 1
    // elements (a miscount means a malformed element, which `piece` refuses).
    let pieces = pieces(inner);
    let sizes: Vec<usize> = pieces.par_iter().map(|p| memchr::memchr_iter(b',', p).count() + 1).collect();
    let mut out = vec![0.0; sizes.iter().sum()];
    let mut places = Vec::with_capacity(pieces.len());
    let mut rest = out.as_mut_slice();
    for k in &sizes {
        let (place, tail) = rest.split_at_mut(*k);
        places.push(place);
        rest = tail;
    }
    let ok = pieces.par_iter().zip(places).all(|(p, place)| piece(p, place).is_some());
    ok.then_some(out)
}

/// `inner` cut at commas into pieces of about [`PIECE_BYTES`] (the commas dropped).
fn pieces(inner: &[u8]) -> Vec<&[u8]> {
    let mut out = Vec::with_capacity(inner.len() / PIECE_BYTES + 1);
    let mut rest = inner;
    while rest.len() > PIECE_BYTES {
        match memchr::memchr(b',', &rest[PIECE_BYTES..]) {
            Some(k) => {
                out.push(&rest[..PIECE_BYTES + k]);
                rest = &rest[PIECE_BYTES + k + 1..];
            }
            None => break,
        }
    }
    out.push(rest);
    out
}

/// The comma-separated numbers of one piece, into `place` (which has room for exactly them).
fn piece(text: &[u8], place: &mut [f64]) -> Option<()> {
    let mut rest = skip_ws(text);
    let last = place.len() - 1;
    for (k, slot) in place.iter_mut().enumerate() {
        // fast_float2 reads a superset of JSON's numbers ("+1", ".5", "inf"): what it read is
        // held to JSON's grammar before it counts.
        let (x, len) = fast_float2::parse_partial::<f64, _>(rest).ok()?;
        plain_number(&rest[..len])?;
        *slot = x.is_finite().then_some(x)?;
        rest = skip_ws(&rest[len..]);
        match rest.split_first() {
            None if k == last => return Some(()),
            Some((b',', tail)) => rest = skip_ws(tail),
            _ => return None,
        }
    }
    None
}

/// `s` after JSON's whitespace (RFC 8259 §2: space, tab, line feed, carriage return).
fn skip_ws(s: &[u8]) -> &[u8] {
    let k = s.iter().take_while(|c| matches!(c, b' ' | b'\n' | b'\r' | b'\t')).count();
    &s[k..]
}

/// `Some` if `s` is a JSON number (RFC 8259 §6).
fn plain_number(s: &[u8]) -> Option<()> {
    let digits = |s: &[u8], i: usize| i + s[i..].iter().take_while(|c| c.is_ascii_digit()).count();
    let mut i = usize::from(s.first() == Some(&b'-'));
    match s.get(i)? {
        b'0' => i += 1,
        b'1'..=b'9' => i = digits(s, i),
        _ => return None,
    }
    if s.get(i) == Some(&b'.') {
        let end = digits(s, i + 1);
        (end > i + 1).then_some(())?;
        i = end;
    }
    if matches!(s.get(i), Some(b'e' | b'E')) {
        i += 1 + usize::from(matches!(s.get(i + 1), Some(b'+' | b'-')));
        let end = digits(s, i);
        (end > i).then_some(())?;
        i = end;
    }
    (i == s.len()).then_some(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn long(key_path: &str, n: usize) -> (String, Vec<f64>) {
        let x: Vec<f64> = (0..n).map(|i| (i as f64).mul_add(0.731, -1000.0) / 7.0).collect();
        (format!("{{{key_path}: {}}}", serde_json::to_string(&x).unwrap()), x)
    }

    #[test]
    // The reference is serde_json 1 with `float_roundtrip` (correct rounding), the ordinary path.
    fn a_long_data_array_is_lifted_with_the_same_bits_as_serde_json_reads() {
        let (body, _) = long("\"data\"", 5000);
        let (text, lifted) = lift(body.as_bytes());
        assert_eq!(std::str::from_utf8(&text).unwrap(), "{\"data\": []}");
        let tree: serde_json::Value = serde_json::from_str(&body).unwrap();
        let expected: Vec<u64> = tree["data"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap().to_bits())
            .collect();
        let got = within(&lifted, "", || take("/data")).unwrap();
        assert_eq!(got.iter().map(|x| x.to_bits()).collect::<Vec<_>>(), expected);
        assert_eq!(within(&lifted, "", || take("/data")), None, "taken once");
    }

    #[test]
    fn numbers_parse_as_serde_json_parses_them() {
        for s in [
            "0",
            "-0",
            "-0.0",
            "5",
            "-17",
            "1e3",
            "1E-3",
            "2.5e+300",
            "1e-400",
            "4.9e-324",
            "18446744073709551617",
            "0.1",
            "123456789.123456789e-5",
        ] {
            let serde: f64 = serde_json::from_str::<serde_json::Value>(s).unwrap().as_f64().unwrap();
            assert_eq!(numbers(s.as_bytes()).map(|x| x[0].to_bits()), Some(serde.to_bits()), "{s}");
        }
        for s in [
            "-", "01", "1.", ".5", "+1", "1e", "1e+", "NaN", "Infinity", "inf", "1e400", "0x10", "1 2", "\"1\"", "1,", ",1", "1\x0c",
            "1,,2", "1 , 2 ,",
        ] {
            assert_eq!(numbers(s.as_bytes()), None, "{s}");
        }
    }

    #[test]
    fn only_data_places_are_lifted_and_pointers_are_exact() {
        for key in ["\"labels\"", "\"counts\""] {
            let (x, _) = long(key, 5000);
            assert!(lift(x.as_bytes()).1.is_empty(), "{key} is left to its decoder");
        }
        let (column, data) = long("\"a/b\"", 5000);
        let body = format!("{{\"jobs\": [{{\"kind\": \"interval\", \"data\": {{\"columns\": {column}}}}}]}}");
        let (_, lifted) = lift(body.as_bytes());
        assert_eq!(within(&lifted, "/jobs/0", || take("/data/columns/a~1b")), Some(data));
    }

    #[test]
    fn anything_unusual_is_left_to_the_ordinary_parser() {
        let n = 5000;
        let (ok, _) = long("\"data\"", n);
        let unusual = [
            ok.replacen(',', ",NaN,", 1),
            ok.replacen(',', ",\"3\",", 1),
            ok.replacen(',', ",1e999,", 1),
            ok.replacen(',', ",,", 1),
            ok.replacen("{", "{\"data\": [], ", 1),
            ok.replacen("\"data\"", "\"d\\u0061ta\"", 1),
            ok.replacen('}', "", 1),
            ok.replacen(',', ",[1],", 1),
            // A key escaped anywhere (here one that decodes to a second `data`), or repeated.
            ok.replacen("{", "{\"d\\u0061ta\": [], ", 1),
            ok.replacen("{", "{\"x\": {\"y\": 1, \"y\": 2}, ", 1),
            // A pointer too long to keep.
            ok.replacen("{", &format!("{{\"{}\": {{", "k".repeat(MAX_POINTER_BYTES)), 1) + "}",
        ];
        for (k, body) in unusual.iter().enumerate() {
            let (text, lifted) = lift(body.as_bytes());
            assert!(lifted.is_empty() && text.as_ref() == body.as_bytes(), "case {k}");
        }
        // Many data keys under one long key: the skim builds no pointer for them (this took
        // gigabytes when every data key's pointer was kept).
        let columns: Vec<String> = (0..6000).map(|i| format!("\"c{i}\": 0")).collect();
        let wide = format!("{{\"{}\": {{\"columns\": {{{}}}}}}}", "k".repeat(300_000), columns.join(","));
        assert!(lift(wide.as_bytes()).1.is_empty());
        let deep = format!("{}{}", "[".repeat(10_000), "]".repeat(10_000));
        assert!(lift(deep.as_bytes()).1.is_empty(), "no stack overflow");
    }

    #[test]
    fn large_arrays_are_cut_into_pieces_at_commas() {
        let (body, x) = long("\"values\"", 100_000);
        assert!(body.len() > 4 * PIECE_BYTES);
        let (_, lifted) = lift(body.as_bytes());
        assert_eq!(within(&lifted, "", || take("/values")), Some(x));
    }
}
