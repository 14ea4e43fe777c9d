// The page at `/` in a real browser (Debian's chromium through playwright-core): the example's
// result equals a direct POST of the same body, a changed input gives a new interval, a
// refused input shows the server's message beside its field, the form works from the keyboard,
// a screenshot is not blank, a CSV file fills the data, and an API key is sent (and kept out of
// the curl command) on a server that needs one.
//
// Usage: node page.test.mjs [BANDSAW_BINARY]   (default: target/release/bandsaw from the root)
// BANDSAW_WRITE_SCREENSHOT=1 also writes docs/img/page.png.

import { spawn } from "node:child_process";
import { mkdtempSync, mkdirSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, dirname, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { inflateSync } from "node:zlib";
import { chromium } from "playwright-core";

const here = dirname(fileURLToPath(import.meta.url));
const root = resolve(here, "../..");
const binary = resolve(root, process.argv[2] || "target/release/bandsaw");
const out = join(here, "out");
const FLAGS = [
  "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
  "--disable-background-networking", "--disable-component-update", "--disable-sync",
];

let passed = 0;
let failed = 0;
function check(name, ok, detail = "") {
  if (ok) passed++;
  else failed++;
  console.log(`${ok ? "ok" : "not ok"} ${passed + failed} - ${name}${detail && !ok ? ` (${detail})` : ""}`);
}

function startServer(extra = []) {
  return new Promise((res, rej) => {
    const child = spawn(binary, ["serve", "--listen", "127.0.0.1:0", ...extra], { stdio: ["ignore", "pipe", "pipe"] });
    let seen = "";
    const look = (chunk) => {
      seen += chunk;
      const m = seen.match(/listening on (http:\/\/[0-9.:]+)/);
      if (m) res({ child, base: m[1] });
    };
    child.stdout.on("data", look);
    child.stderr.on("data", look);
    child.on("exit", (code) => rej(new Error(`the server exited (${code}) before listening: ${seen}`)));
  });
}

async function post(url, text, accept = "application/json") {
  const r = await fetch(url, { method: "POST", headers: { "Content-Type": "application/json", Accept: accept }, body: text });
  return { status: r.status, type: r.headers.get("content-type") || "", text: await r.text() };
}

// Every interval row of the table, from the exact values the page keeps beside the text.
async function tableRows(page) {
  return page.$$eval("#intervals tbody tr", (trs) =>
    trs.map((tr) => {
      const cells = Array.from(tr.querySelectorAll("td")).map((td) => ({ text: td.textContent, value: JSON.parse(td.dataset.value) }));
      return { method: tr.querySelector("th").textContent, cells };
    }));
}

async function computeAndWait(page, action, state = "done") {
  const request = page.waitForRequest((r) => r.method() === "POST" && r.url().includes("/v1/") && r.headers()["accept"] === "application/json");
  await action();
  const req = await request;
  await page.waitForFunction((s) => document.body.dataset.state === s, state);
  return req;
}

// A PNG's distinct colours: chunks, inflate, undo each scanline's filter (8-bit RGB or RGBA).
function pngColours(buf) {
  let pos = 8;
  let width = 0, height = 0, type = 0;
  const idat = [];
  while (pos < buf.length) {
    const len = buf.readUInt32BE(pos);
    const kind = buf.toString("ascii", pos + 4, pos + 8);
    const data = buf.subarray(pos + 8, pos + 8 + len);
    if (kind === "IHDR") {
      width = data.readUInt32BE(0);
      height = data.readUInt32BE(4);
      if (data[8] !== 8) throw new Error("only 8-bit PNGs");
      type = data[9];
    } else if (kind === "IDAT") idat.push(data);
    pos += 12 + len;
  }
  const bpp = type === 6 ? 4 : type === 2 ? 3 : 0;
  if (!bpp) throw new Error(`colour type ${type}`);
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * bpp;
  const prev = Buffer.alloc(stride);
  const line = Buffer.alloc(stride);
  const counts = new Map();
  for (let y = 0; y < height; y++) {
    const f = raw[y * (stride + 1)];
    const src = raw.subarray(y * (stride + 1) + 1, (y + 1) * (stride + 1));
    for (let i = 0; i < stride; i++) {
      const a = i >= bpp ? line[i - bpp] : 0, b = prev[i], c = i >= bpp ? prev[i - bpp] : 0;
      let p = a;
      if (f === 4) {
        const pa = Math.abs(b - c), pb = Math.abs(a - c), pc = Math.abs(a + b - 2 * c);
        p = pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
      }
      const add = [0, a, b, (a + b) >> 1, p][f];
      line[i] = (src[i] + add) & 255;
    }
    for (let x = 0; x < stride; x += bpp) {
      const k = line.readUIntBE(x, 3);
      counts.set(k, (counts.get(k) || 0) + 1);
    }
    line.copy(prev);
  }
  const top = Math.max(...counts.values());
  return { distinct: counts.size, topShare: top / (width * height), width, height };
}

async function main() {
  const { child, base } = await startServer();
  const profile = mkdtempSync(join(tmpdir(), "bandsaw-chromium-"));
  let context;
  try {
    context = await chromium.launchPersistentContext(profile, {
      executablePath: "/usr/bin/chromium",
      headless: true,
      args: FLAGS,
      viewport: { width: 1000, height: 900 },
    });
    const page = context.pages()[0] || (await context.newPage());
    const consoleErrors = [];
    page.on("console", (m) => { if (m.type() === "error") consoleErrors.push(m.text()); });
    page.on("pageerror", (e) => consoleErrors.push(String(e)));
    await run(page, base);
    await fromCsv(page);
    await withKey(context);
    // A CSP violation or a script error shows here (a refused request's 422 is logged by the
    // browser as a failed resource, which is expected).
    const unexpected = consoleErrors.filter((e) => !/status of 422/.test(e));
    check("no script error or Content-Security-Policy violation", unexpected.length === 0, unexpected.join(" | "));
  } finally {
    if (context) await context.close();
    child.kill();
    rmSync(profile, { recursive: true, force: true });
  }
}

async function run(page, base) {
  const first = page.waitForRequest((r) => r.method() === "POST" && r.url().endsWith("/v1/interval"));
  const resp = await page.goto(base + "/");
  check("GET / is HTML with a Content-Security-Policy", resp.status() === 200 && /^text\/html/.test(resp.headers()["content-type"]) && /default-src 'self'/.test(resp.headers()["content-security-policy"] || ""));
  const req = await first;
  await page.waitForFunction(() => document.body.dataset.state === "done");
  const sent = req.postData();
  const body = JSON.parse(sent);
  check("the example is filled in (about 60 numbers, a fixed seed)", Array.isArray(body.data) && body.data.length >= 50 && body.data.every((x) => typeof x === "number") && Number.isInteger(body.seed));
  const direct = JSON.parse((await post(base + "/v1/interval", sent)).text);
  const rows = await tableRows(page);
  check("the interval table shows numbers", rows.length > 0 && rows.every((r) => r.cells.every((c) => Number.isFinite(Number(c.text)) && Number.isFinite(c.value))));
  const expected = direct.intervals.map((iv) => ({ method: iv.method, values: [iv.level, iv.lower, iv.lower_mc_error, iv.upper, iv.upper_mc_error] }));
  const shown = rows.map((r) => ({ method: r.method, values: r.cells.map((c) => c.value) }));
  check("the table equals a direct POST of the same body", JSON.stringify(shown) === JSON.stringify(expected), `${JSON.stringify(shown)} vs ${JSON.stringify(expected)}`);
  const textClose = rows.every((r, i) => r.cells.every((c, j) => Math.abs(Number(c.text) - expected[i].values[j]) <= 1e-5 * Math.abs(expected[i].values[j]) + 1e-12));
  check("the shown text rounds the exact values", textClose);
  const curl = await page.textContent("#curl");
  check("copy as curl holds the exact body sent", curl.includes(base + "/v1/interval") && curl.includes(sent));

  // The picture: the server answers image/svg+xml, and the page shows it as a decoded image.
  const svg = await post(base + "/v1/interval", sent, "image/svg+xml");
  check("the server answers the same body as image/svg+xml", svg.status === 200 && svg.type.split(";")[0].trim() === "image/svg+xml");
  await page.waitForFunction(() => !/Loading/.test(document.getElementById("picture").textContent));
  const drawn = await page.$eval("#picture", (d) => {
    const img = d.querySelector("img");
    return img !== null && img.complete && img.naturalWidth > 0;
  });
  check("the picture area shows the SVG, decoded by the browser", drawn);

  // A changed level gives a new, different interval.
  const before = shown;
  await page.fill("#levels", "0.8");
  const req2 = await computeAndWait(page, () => page.press("#levels", "Enter"));
  const after = (await tableRows(page)).map((r) => ({ method: r.method, values: r.cells.map((c) => c.value) }));
  check("a changed level is sent", JSON.parse(req2.postData()).levels[0] === 0.8);
  check("a changed level gives a new, narrower interval", after.length === before.length && after.every((r, i) => r.values[0] === 0.8 && r.values[3] - r.values[1] < before[i].values[3] - before[i].values[1]));

  // Refused input: a word among the numbers and resamples 0, each message beside its field.
  const good = await page.inputValue("#data");
  const lines = good.split("\n");
  lines.splice(3, 0, "fast");
  await page.fill("#data", lines.join("\n"));
  await page.fill("#resamples", "0");
  const bad = await computeAndWait(page, () => page.click("#compute"), "problem");
  const problem = JSON.parse((await post(base + "/v1/interval", bad.postData())).text);
  const messageAt = (p) => (problem.errors || []).find((e) => e.pointer === p)?.message;
  for (const [pointer, field] of [["/data/3", "data"], ["/resamples", "resamples"]]) {
    const beside = await page.$eval(`#${field}`, (el) => {
      const ids = (el.getAttribute("aria-describedby") || "").split(/\s+/);
      const box = ids.map((id) => document.getElementById(id)).find((b) => b && b.classList.contains("field-error"));
      return { text: box ? box.textContent : "", visible: box ? box.offsetParent !== null : false, sibling: box ? box.parentElement === el.parentElement : false, invalid: el.getAttribute("aria-invalid") };
    });
    const message = messageAt(pointer);
    check(`the problem at ${pointer} is shown beside #${field}`, Boolean(message) && beside.visible && beside.sibling && beside.text.includes(message) && beside.invalid === "true", JSON.stringify({ message, beside }));
  }
  const general = await page.textContent("#general-error");
  check("the problem's detail is shown on top", general.includes(problem.detail));

  // Keyboard: fix the inputs, then Tab to the compute button and press Enter.
  await page.fill("#data", good);
  await page.fill("#resamples", "2000");
  await page.focus("#seed");
  let onButton = false;
  for (let i = 0; i < 12 && !onButton; i++) {
    await page.keyboard.press("Tab");
    onButton = await page.evaluate(() => document.activeElement && document.activeElement.id === "compute");
  }
  check("Tab reaches the compute button", onButton);
  const focusRing = await page.$eval("#compute", (b) => getComputedStyle(b).outlineStyle);
  check("the focused button shows a focus ring", focusRing !== "none", focusRing);
  await computeAndWait(page, () => page.keyboard.press("Enter"));
  const errorsLeft = await page.$$eval(".field-error", (els) => els.filter((e) => !e.hidden).length);
  check("Enter on the button computes again and clears the messages", errorsLeft === 0 && (await tableRows(page)).length > 0);

  // A comparison shows its verdict.
  await page.check("#mode-compare");
  const cmp = await computeAndWait(page, () => page.click("#compute"));
  const cmpDirect = JSON.parse((await post(base + "/v1/compare", cmp.postData())).text);
  const verdict = await page.textContent("#verdict");
  check("a comparison shows its verdict", cmp.url().endsWith("/v1/compare") && verdict.includes(cmpDirect.verdict) && verdict.includes(cmpDirect.verdict_reason));
  await page.check("#mode-interval");
  await page.fill("#levels", "0.95");
  await computeAndWait(page, () => page.click("#compute"));

  // A screenshot that is not blank.
  mkdirSync(out, { recursive: true });
  const shot = join(out, "page.png");
  await page.screenshot({ path: shot, fullPage: true });
  const colours = pngColours(readFileSync(shot));
  console.log(`# screenshot ${shot}: ${colours.width}x${colours.height}, ${colours.distinct} colours, the commonest ${(100 * colours.topShare).toFixed(1)} %`);
  check("the screenshot is not blank", colours.distinct >= 32 && colours.topShare < 0.97);
  if (process.env.BANDSAW_WRITE_SCREENSHOT) {
    const small = join(root, "docs/img/page.png");
    mkdirSync(dirname(small), { recursive: true });
    // The result card alone keeps the file small.
    await page.locator("#result").screenshot({ path: small });
    console.log(`# wrote ${small}`);
  }
}

// A CSV file fills the data from the column chosen, read in the browser (RFC 4180 quoting: a
// header with a comma, a doubled quote, a line break inside a field, CRLF line ends).
async function fromCsv(page) {
  const text = 'branch,"wait, minutes",note\r\nnorth,4.5,"said ""fine"""\r\nsouth,6.25,\r\neast,3.75,"two\nlines"\r\nwest,8,\r\nharbour,5.5,\r\n';
  await page.setInputFiles("#csv-file", { name: "waits.csv", mimeType: "text/csv", buffer: Buffer.from(text) });
  await page.waitForFunction(() => !document.getElementById("csv-columns").hidden);
  const names = await page.$$eval("#csv-column option", (os) => os.map((o) => o.textContent));
  check("a CSV file's header names the columns to choose from", JSON.stringify(names) === JSON.stringify(["(choose a column)", "branch", "wait, minutes", "note"]), JSON.stringify(names));
  await page.selectOption("#csv-column", "1");
  const req = await computeAndWait(page, () => page.click("#compute"));
  const data = JSON.parse(req.postData()).data;
  check("the chosen CSV column is the data sent", JSON.stringify(data) === JSON.stringify([4.5, 6.25, 3.75, 8, 5.5]), JSON.stringify(data));
  check("and it gives an interval", (await tableRows(page)).length > 0);
  await page.setInputFiles("#csv-file", { name: "header-only.csv", mimeType: "text/csv", buffer: Buffer.from("minutes\n") });
  await page.waitForFunction(() => !document.getElementById("err-csv-file").hidden);
  const said = await page.$eval("#csv-file", (el) => ({ invalid: el.getAttribute("aria-invalid"), text: document.getElementById("err-csv-file").textContent }));
  check("a CSV file without data rows is refused beside the file field", said.invalid === "true" && /header row/.test(said.text), JSON.stringify(said));
}

// A server started with API keys: without one the page shows the refusal; with one it computes,
// sends it as a bearer token, and its curl command names $BANDSAW_KEY instead of the key.
async function withKey(context) {
  const key = "tile-key-7f3a9c";
  const { child, base } = await startServer(["--api-keys", key]);
  try {
    const page = await context.newPage();
    const errors = [];
    page.on("console", (m) => { if (m.type() === "error") errors.push(m.text()); });
    page.on("pageerror", (e) => errors.push(String(e)));
    const first = page.waitForResponse((r) => r.url().endsWith("/v1/interval"));
    await page.goto(base + "/");
    const refused = await first;
    await page.waitForFunction(() => document.body.dataset.state === "problem");
    const general = await page.textContent("#general-error");
    check("without a key the page shows the server's 401", refused.status() === 401 && general.trim().length > 0, `${refused.status()} ${general}`);
    await page.click("summary:has-text('API key')");
    await page.fill("#api-key", key);
    const req = await computeAndWait(page, () => page.click("#compute"));
    check("with the key it computes, sending it as a bearer token", req.headers()["authorization"] === "Bearer " + key && (await tableRows(page)).length > 0);
    const curl = await page.textContent("#curl");
    check("the curl command names $BANDSAW_KEY, not the key", curl.includes("Authorization: Bearer $BANDSAW_KEY") && !curl.includes(key));
    // The browser logs the refused request as a failed resource; nothing else may be logged.
    const unexpected = errors.filter((e) => !/status of 401/.test(e));
    check("no script error or policy violation on the page with a key", unexpected.length === 0, unexpected.join(" | "));
    await page.close();
  } finally {
    child.kill();
  }
}

main()
  .catch((e) => {
    failed++;
    console.log(`not ok - the run stopped: ${e && e.stack ? e.stack : e}`);
  })
  .finally(() => {
    console.log(`# ${passed} passed, ${failed} failed`);
    process.exitCode = failed ? 1 : 0;
  });
