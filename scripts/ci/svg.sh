#!/usr/bin/env bash
# Pictures in a real browser: start the release server, fetch an interval picture, a compare
# picture and a band tile (Accept: image/svg+xml), render each with headless chromium, and check
# that each screenshot is not blank (many distinct colours, not all white). Run from the
# repository root after `cargo build --release`.
set -euo pipefail

if ! command -v chromium >/dev/null; then
  apt-get update
  apt-get install -y --no-install-recommends chromium
fi
command -v curl >/dev/null || { apt-get update; apt-get install -y --no-install-recommends curl; }

work=$(mktemp -d)
server_pid=""
cleanup() {
  [ -n "$server_pid" ] && kill "$server_pid" 2>/dev/null || true
  rm -rf "$work"
}
trap cleanup EXIT

target/release/bandsaw serve --listen 127.0.0.1:0 >"$work/server.log" 2>&1 &
server_pid=$!
base=""
for _ in $(seq 1 100); do
  base=$(grep -o 'http://[0-9.:]*' "$work/server.log" | head -1 || true)
  [ -n "$base" ] && break
  sleep 0.1
done
[ -n "$base" ] || { echo "svg: the server did not start"; cat "$work/server.log"; exit 1; }

# Invented checkout latencies (ms) of a fictional shop, and two benchmark suites.
latency='[212,187,240,198,305,221,189,260,233,199,412,208,226,195,251,230,217,288,203,244,219,197,265,236,210,348,225,201,239,214]'
fetch() { # name path body
  curl -sS --fail-with-body -o "$work/$1.svg" -w '%{content_type}\n' \
    -H 'Content-Type: application/json' -H 'Accept: image/svg+xml' "$base$2" -d "$3" >"$work/$1.type"
  grep -qx 'image/svg+xml' "$work/$1.type" || { echo "svg: $1 came back as $(cat "$work/$1.type")"; exit 1; }
}
fetch interval /v1/interval "{\"data\": $latency, \"statistic\": \"median\", \"methods\": [\"percentile\", \"bca\"], \"levels\": [0.9, 0.95], \"resamples\": 4000, \"seed\": 11, \"unit\": \"ms\"}"
fetch compare /v1/compare '{"baseline": [100.2, 101.5, 99.8, 100.9, 100.4, 101.1, 99.6, 100.7], "candidate": [105.1, 106.0, 104.2, 105.8, 104.9, 106.3, 105.0, 104.6], "tolerance": 0.02, "seed": 3}'
fetch band /v1/interval "{\"data\": $latency, \"statistic\": \"median\", \"methods\": [\"percentile\", \"bca\"], \"levels\": [0.5, 0.9], \"seed\": 11, \"unit\": \"ms\", \"format\": \"band\"}"

shoot() { # name width height
  timeout 120 chromium --headless --no-sandbox --disable-gpu --disable-background-networking \
    --disable-component-update --disable-sync --no-first-run --hide-scrollbars \
    --user-data-dir="$work/profile-$1" --window-size="$2,$3" \
    --screenshot="$work/$1.png" "file://$work/$1.svg" >/dev/null 2>&1 || true
  [ -s "$work/$1.png" ] || { echo "svg: chromium made no screenshot of $1"; exit 1; }
}
shoot interval 760 600
shoot compare 760 600
shoot band 260 60

python3 - "$work" <<'PY'
"""Decode each PNG with the standard library (zlib, PNG filters) and count its colours."""
import struct, sys, zlib

def pixels(path):
    data = open(path, "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "a PNG"
    pos, idat, head = 8, b"", None
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            head = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat += body
        pos += 12 + n
    w, h, depth, colour = head[:4]
    assert depth == 8 and colour in (2, 6), f"8-bit RGB(A), got depth {depth} colour type {colour}"
    bpp = 3 if colour == 2 else 4
    raw, stride, prev, out, i = zlib.decompress(idat), w * bpp, bytearray(w * bpp), [], 0
    for _ in range(h):
        f, line = raw[i], bytearray(raw[i + 1:i + 1 + stride])
        i += 1 + stride
        for x in range(stride):
            a = line[x - bpp] if x >= bpp else 0
            b, c = prev[x], (prev[x - bpp] if x >= bpp else 0)
            if f == 1: line[x] = (line[x] + a) & 255
            elif f == 2: line[x] = (line[x] + b) & 255
            elif f == 3: line[x] = (line[x] + (a + b) // 2) & 255
            elif f == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[x] = (line[x] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        out.extend(tuple(line[x:x + 3]) for x in range(0, stride, bpp))
        prev = line
    return w, h, out

failed = 0
for name, least in (("interval", 20), ("compare", 20), ("band", 6)):
    w, h, px = pixels(f"{sys.argv[1]}/{name}.png")
    colours = len(set(px))
    ink = sum(1 for p in px if p != (255, 255, 255)) / len(px)
    ok = colours >= least and ink > 0.002
    failed += not ok
    print(f"svg: {name}.png {w}x{h}: {colours} distinct colours, {ink:.1%} not white: {'ok' if ok else 'BLANK?'}")
print(f"svg: {3 - failed} passed, {failed} failed")
sys.exit(1 if failed else 0)
PY
