// Ask bandsaw for a median with bootstrap intervals, using Node 20's built-in fetch.
//
// The data are invented: minutes to first reply on a fictional support desk's tickets this
// week. Run a server (`bandsaw serve`), then `node client.mjs`; BANDSAW_URL says where it is.

const URL = process.env.BANDSAW_URL ?? "http://127.0.0.1:8080";

const MINUTES = [2.9, 5.4, 1.8, 8.3, 4.1, 12.6, 6.2, 3.5, 7.7, 44.0, 5.1, 9.4, 4.6, 2.2, 15.8, 6.9, 3.3, 11.2, 5.6, 8.1,
                 27.5, 4.4, 6.5, 2.6, 9.9, 5.0, 3.8, 18.3, 7.2, 4.9, 6.0, 33.1, 5.3, 10.4, 3.1, 8.6, 4.2, 14.7, 6.7, 61.0];

// POST a JSON body; the answer is JSON whatever the status (errors are problem documents).
async function post(path, body) {
  const res = await fetch(URL + path, {
    method: "POST",
    headers: { "Content-Type": "application/json" },
    body: JSON.stringify(body),
  });
  return [res.status, await res.json()];
}

// 1. A good request: the median, percentile and BCa intervals at 90 % and 95 %, a fixed seed
//    (the same seed gives the same numbers on every run).
const [status, r] = await post("/v1/interval", {
  data: MINUTES, statistic: "median", methods: ["percentile", "bca"],
  levels: [0.9, 0.95], resamples: 4000, seed: 2024,
});
if (status !== 200) throw new Error(`expected 200, got ${status}: ${JSON.stringify(r)}`);
console.log(`median: ${r.estimate.toFixed(3)} minutes (n = ${r.n}, seed ${r.seed})`);
for (const iv of r.intervals) {
  const pct = Math.round(iv.level * 100);
  console.log(`${iv.method} ${pct}%: ${iv.lower.toFixed(3)} to ${iv.upper.toFixed(3)}`);
}

// 2. A bad request: a string among the data and a statistic that does not exist. The server
//    answers 422 with one error per bad field, each with a JSON Pointer into the request.
const [bad, p] = await post("/v1/interval", { data: [3, 5, "twelve", 8], statistic: "typical" });
const errors = p.errors ?? [];
for (const e of errors) console.log(`problem at ${e.pointer}: ${e.message}`);
const pointers = errors.map((e) => e.pointer).sort().join(" ");
process.exitCode = bad === 422 && pointers === "/data/2 /statistic" ? 0 : 1;
