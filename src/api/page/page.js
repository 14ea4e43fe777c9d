"use strict";
// The page builds the same JSON body a client would send, posts it to /v1/interval or
// /v1/compare, and shows the answer. Every check of the input is the server's: a word among the
// numbers is sent as a string, so the server's problem document names it by its pointer and
// the message appears beside the field that holds it.
(function () {
  const $ = (id) => document.getElementById(id);

  // Invented example: checkout latency (ms) of a fictional online shop, before and after a
  // new payment widget.
  const EXAMPLE_BEFORE = "203, 222, 329, 177, 230, 191, 227, 200, 139, 211, 132, 238, 139, 188, 238, 163, 207, 151, 193, 145, 180, 180, 157, 131, 195, 192, 320, 238, 181, 273, 222, 147, 568, 145, 246, 137, 172, 223, 624, 196, 193, 136, 298, 256, 332, 134, 187, 170, 176, 161, 229, 133, 175, 182, 171, 159, 113, 233, 244, 287";
  const EXAMPLE_AFTER = "211, 156, 247, 240, 247, 265, 382, 221, 117, 191, 292, 250, 204, 217, 133, 230, 304, 186, 251, 232, 173, 190, 172, 469, 293, 107, 163, 189, 202, 376, 182, 196, 350, 333, 261, 218, 189, 219, 292, 398, 125, 517, 220, 197, 155, 238, 190, 311, 384, 218, 113, 331, 158, 199, 167, 168, 224, 685, 211, 215";

  // A statistic's one parameter: its wire name, label and default.
  const PARAMS = {
    quantile: { name: "p", label: "Quantile p (0 to 1)", value: "0.9" },
    trimmed_mean: { name: "trim", label: "Trim per end (0 to 0.5)", value: "0.1" },
    exceedance: { name: "threshold", label: "Threshold (share strictly above it)", value: "300" },
  };
  const BLOCK_PARAM = { moving_block: "block_length", circular_block: "block_length", stationary_block: "mean_block_length" };
  const LABEL_PARAM = { cluster: "clusters", stratified: "strata" };
  const METHODS = ["percentile", "basic", "normal", "bca", "studentized"];

  let lastToken = "";
  let lastCurl = "";
  let pictureUrl = null;
  let generation = 0;
  let csv = null;

  const mode = () => ($("mode-compare").checked ? "compare" : "interval");

  function tokens(text) {
    return text.split(/[\s,;]+/).filter((t) => t !== "");
  }
  // A number stays a number; anything else is sent as written so the server names it.
  function values(text) {
    return tokens(text).map((t) => (/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(t) ? Number(t) : t));
  }
  function numberOrWord(text) {
    const t = text.trim();
    if (t === "") return undefined;
    return /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(t) ? Number(t) : t;
  }

  function buildBody() {
    const body = {};
    if (mode() === "interval") {
      body.data = values($("data").value);
    } else {
      body.baseline = values($("baseline").value);
      body.candidate = values($("candidate").value);
    }
    const name = $("statistic").value;
    const param = PARAMS[name];
    if (param) {
      const s = { name: name };
      const v = numberOrWord($("param").value);
      if (v !== undefined) s[param.name] = v;
      body.statistic = s;
    } else {
      body.statistic = name;
    }
    const resamples = numberOrWord($("resamples").value);
    if (resamples !== undefined) body.resamples = resamples;
    const seed = numberOrWord($("seed").value);
    if (seed !== undefined) body.seed = seed;
    body.levels = values($("levels").value);
    body.methods = METHODS.filter((m) => $("m-" + m).checked);
    body.scheme = scheme();
    if (mode() === "compare") {
      body.contrast = $("contrast").value;
      body.better = $("better").value;
      const tol = numberOrWord($("tolerance").value);
      if (tol !== undefined) body.tolerance = tol;
      body.paired = $("paired").checked;
    }
    return body;
  }

  function scheme() {
    const kind = $("scheme").value;
    const s = { kind: kind };
    if (BLOCK_PARAM[kind]) {
      const v = numberOrWord($("block-length").value);
      if (v !== undefined) s[BLOCK_PARAM[kind]] = v;
    }
    if (LABEL_PARAM[kind]) {
      s[LABEL_PARAM[kind]] = $("labels").value.split(/[\n,;]+/).map((t) => t.trim()).filter((t) => t !== "");
    }
    return s;
  }

  function route() {
    return mode() === "interval" ? "/v1/interval" : "/v1/compare";
  }

  function headers(accept) {
    const h = { "Content-Type": "application/json", Accept: accept };
    const key = $("api-key").value.trim();
    if (key) h.Authorization = "Bearer " + key;
    return h;
  }

  // The exact command: the same URL, headers and bytes.
  function curlFor(url, text) {
    const q = (s) => "'" + s.replace(/'/g, "'\\''") + "'";
    const lines = ["curl -sS -X POST " + q(url), "  -H " + q("Content-Type: application/json")];
    if ($("api-key").value.trim()) lines.push('  -H "Authorization: Bearer $BANDSAW_KEY"');
    lines.push("  --data-binary " + q(text));
    return lines.join(" \\\n");
  }

  // ---- problems beside their fields -----------------------------------------------------

  const FIELD_ERRORS = Array.from(document.querySelectorAll(".field-error"));

  function controlFor(pointer) {
    const parts = pointer.split("/").slice(1);
    const head = parts[0];
    const direct = { data: "data", baseline: "baseline", candidate: "candidate", resamples: "resamples", seed: "seed", levels: "levels", methods: "methods", contrast: "contrast", tolerance: "tolerance", better: "better", paired: "paired" };
    if (head === "statistic") return parts.length > 1 && parts[1] !== "name" ? "param" : "statistic";
    if (head === "scheme") {
      if (parts[1] === "block_length" || parts[1] === "mean_block_length") return "block-length";
      if (parts[1] === "clusters" || parts[1] === "strata") return "labels";
      return "scheme";
    }
    return direct[head] || null;
  }

  // "/data/3" reads as "value 4 ("abc")" so that the user finds it among the others.
  function where(pointer, body) {
    const parts = pointer.split("/").slice(1);
    if (parts.length === 2 && /^\d+$/.test(parts[1]) && Array.isArray(body[parts[0]])) {
      const i = Number(parts[1]);
      return "value " + (i + 1) + " (" + JSON.stringify(body[parts[0]][i]) + "): ";
    }
    return "";
  }

  function clearProblems() {
    $("general-error").hidden = true;
    $("general-error").textContent = "";
    for (const e of FIELD_ERRORS) {
      e.hidden = true;
      e.textContent = "";
    }
    for (const c of document.querySelectorAll("[aria-invalid]")) c.removeAttribute("aria-invalid");
  }

  function showProblem(problem, body) {
    const general = [problem.title ? problem.title + ": " + problem.detail : problem.detail || "the request failed"];
    let first = null;
    for (const err of problem.errors || []) {
      const id = controlFor(err.pointer || "");
      const box = id && $("err-" + id);
      if (!box || !visible(box.parentElement)) {
        general.push((err.pointer || "the request") + ": " + err.message);
        continue;
      }
      box.textContent = (box.textContent ? box.textContent + " " : "") + where(err.pointer, body) + err.message;
      box.hidden = false;
      const control = id === "methods" ? $("m-percentile") : $(id);
      control.setAttribute("aria-invalid", "true");
      first = first || control;
    }
    $("general-error").textContent = general.join(" ");
    $("general-error").hidden = false;
    if (first) first.focus();
  }

  function visible(el) {
    for (let e = el; e; e = e.parentElement) if (e.hidden) return false;
    return true;
  }

  // ---- results -------------------------------------------------------------------------

  function fmt(x) {
    if (typeof x !== "number" || !isFinite(x)) return String(x);
    if (x === 0) return "0";
    const a = Math.abs(x);
    return a >= 1e6 || a < 1e-4 ? x.toExponential(4) : Number(x.toPrecision(6)).toString();
  }

  function cell(row, value, exact) {
    const td = document.createElement("td");
    td.textContent = fmt(value);
    if (exact) td.dataset.value = JSON.stringify(value);
    row.appendChild(td);
  }

  function term(dl, name, value) {
    const dt = document.createElement("dt");
    dt.textContent = name;
    const dd = document.createElement("dd");
    dd.textContent = value;
    dl.append(dt, dd);
  }

  function showResult(answer) {
    const r = mode() === "compare" ? answer.contrast : answer;
    const dl = $("summary");
    dl.replaceChildren();
    if (mode() === "compare") {
      $("verdict").textContent = "Verdict: " + answer.verdict + ". " + answer.verdict_reason;
      $("verdict").hidden = false;
      term(dl, "baseline estimate", fmt(answer.baseline_estimate) + " (n = " + answer.baseline_n + ")");
      term(dl, "candidate estimate", fmt(answer.candidate_estimate) + " (n = " + answer.candidate_n + ")");
      if (answer.decision && answer.decision.p_value !== undefined) term(dl, "p-value", fmt(answer.decision.p_value));
    } else {
      $("verdict").hidden = true;
    }
    term(dl, mode() === "compare" ? "contrast (" + answer.comparison.contrast + ")" : "estimate", fmt(r.estimate));
    term(dl, "standard error", fmt(r.standard_error) + " ± " + fmt(r.standard_error_mc_error));
    term(dl, "bias", fmt(r.bias) + " ± " + fmt(r.bias_mc_error));
    term(dl, "n", String(r.n));
    term(dl, "resamples", String(r.resamples));
    term(dl, "seed", String(r.seed));
    const tbody = $("intervals").tBodies[0];
    tbody.replaceChildren();
    for (const iv of r.intervals) {
      const tr = document.createElement("tr");
      const th = document.createElement("th");
      th.scope = "row";
      th.textContent = iv.method;
      tr.appendChild(th);
      cell(tr, iv.level, true);
      cell(tr, iv.lower, true);
      cell(tr, iv.lower_mc_error, true);
      cell(tr, iv.upper, true);
      cell(tr, iv.upper_mc_error, true);
      tbody.appendChild(tr);
    }
    const ul = $("warnings");
    ul.replaceChildren();
    for (const w of r.diagnostics.warnings) {
      const li = document.createElement("li");
      const code = document.createElement("code");
      code.textContent = w.code;
      li.append(code, ": " + w.message);
      ul.appendChild(li);
    }
    if (!r.diagnostics.warnings.length) {
      const li = document.createElement("li");
      li.textContent = "none";
      ul.appendChild(li);
    }
    lastToken = r.token || "";
    $("copy-token").disabled = !lastToken;
    $("result-empty").hidden = true;
    $("result-body").hidden = false;
  }

  function noPicture(text) {
    if (pictureUrl) URL.revokeObjectURL(pictureUrl);
    pictureUrl = null;
    const p = document.createElement("p");
    p.textContent = text;
    $("picture").replaceChildren(p);
  }

  // The picture is the same request asked for as SVG; it is shown only when the server
  // answers with that media type. Its <title> and <desc> become the image's text alternative.
  async function fetchPicture(url, text, mine) {
    let resp;
    try {
      resp = await fetch(url, { method: "POST", headers: headers("image/svg+xml"), body: text });
    } catch (e) {
      if (mine === generation) noPicture("No picture is available (the request failed).");
      return;
    }
    const type = (resp.headers.get("Content-Type") || "").split(";")[0].trim().toLowerCase();
    if (mine !== generation) return;
    if (!resp.ok || type !== "image/svg+xml") {
      noPicture("No picture is available from this server.");
      return;
    }
    const svg = await resp.text();
    if (mine !== generation) return;
    const doc = new DOMParser().parseFromString(svg, "image/svg+xml");
    const say = (sel) => ((doc.querySelector(sel) || {}).textContent || "").trim();
    const alt = [say("title"), say("desc")].filter((s) => s).join(". ") || "the bootstrap distribution";
    if (pictureUrl) URL.revokeObjectURL(pictureUrl);
    pictureUrl = URL.createObjectURL(new Blob([svg], { type: "image/svg+xml" }));
    const img = document.createElement("img");
    img.src = pictureUrl;
    img.alt = alt;
    $("picture").replaceChildren(img);
  }

  async function compute() {
    const mine = ++generation;
    clearProblems();
    const body = buildBody();
    const text = JSON.stringify(body);
    const url = new URL(route(), window.location.href).href;
    lastCurl = curlFor(url, text);
    $("curl").textContent = lastCurl;
    $("status").textContent = "Computing…";
    $("compute").disabled = true;
    document.body.dataset.state = "busy";
    try {
      const resp = await fetch(url, { method: "POST", headers: headers("application/json"), body: text });
      const answer = await resp.json().catch(() => ({ detail: "the server answered " + resp.status + " without a JSON body" }));
      if (mine !== generation) return;
      if (!resp.ok) {
        showProblem(answer, body);
        $("status").textContent = "Refused: see the messages above.";
        document.body.dataset.state = "problem";
        return;
      }
      showResult(answer);
      $("status").textContent = "Done.";
      document.body.dataset.state = "done";
      noPicture("Loading the picture…");
      fetchPicture(url, text, mine);
    } catch (e) {
      if (mine !== generation) return;
      showProblem({ detail: "the server could not be reached (" + e.message + ")" }, body);
      $("status").textContent = "";
      document.body.dataset.state = "problem";
    } finally {
      if (mine === generation) $("compute").disabled = false;
    }
  }

  // ---- copying ---------------------------------------------------------------------------

  async function copy(text, what) {
    try {
      await navigator.clipboard.writeText(text);
      $("copy-status").textContent = what + " copied.";
    } catch (e) {
      $("copy-status").textContent = "Could not copy; select it below instead.";
    }
  }

  // ---- CSV -------------------------------------------------------------------------------

  // RFC 4180: quoted fields may hold commas, quotes (doubled) and line breaks.
  function parseCsv(text) {
    const rows = [];
    let row = [];
    let field = "";
    let quoted = false;
    for (let i = 0; i < text.length; i++) {
      const c = text[i];
      if (quoted) {
        if (c === '"' && text[i + 1] === '"') { field += '"'; i++; }
        else if (c === '"') quoted = false;
        else field += c;
      } else if (c === '"') quoted = true;
      else if (c === ",") { row.push(field); field = ""; }
      else if (c === "\n" || c === "\r") {
        if (c === "\r" && text[i + 1] === "\n") i++;
        row.push(field); field = "";
        if (row.some((f) => f.trim() !== "")) rows.push(row);
        row = [];
      } else field += c;
    }
    row.push(field);
    if (row.some((f) => f.trim() !== "")) rows.push(row);
    return rows;
  }

  function column(i) {
    return csv.rows.map((r) => (r[i] === undefined ? "" : r[i].trim())).join("\n");
  }

  async function loadCsv() {
    const file = $("csv-file").files[0];
    $("err-csv-file").hidden = true;
    $("csv-file").removeAttribute("aria-invalid");
    if (!file) return;
    const rows = parseCsv(await file.text());
    if (rows.length < 2) {
      $("err-csv-file").textContent = "The file needs a header row and at least one row of data.";
      $("err-csv-file").hidden = false;
      $("csv-file").setAttribute("aria-invalid", "true");
      return;
    }
    csv = { header: rows[0].map((h, i) => h.trim() || "column " + (i + 1)), rows: rows.slice(1) };
    for (const id of ["csv-column", "csv-baseline", "csv-candidate", "csv-labels"]) {
      const sel = $(id);
      sel.replaceChildren();
      const none = new Option("(choose a column)", "");
      sel.add(none);
      csv.header.forEach((h, i) => sel.add(new Option(h, String(i))));
    }
    $("csv-columns").hidden = false;
    applyMode();
    const sel = mode() === "interval" ? $("csv-column") : $("csv-baseline");
    sel.value = "0";
    sel.dispatchEvent(new Event("change"));
    sel.focus();
  }

  function fromColumn(selectId, targetId) {
    $(selectId).addEventListener("change", () => {
      if ($(selectId).value === "" || !csv) return;
      $(targetId).value = column(Number($(selectId).value));
      if (targetId === "data") countData();
    });
  }

  // ---- showing what applies ----------------------------------------------------------------

  function applyMode() {
    const m = mode();
    for (const el of document.querySelectorAll("[data-mode]")) el.hidden = el.dataset.mode !== m;
    const labelled = Boolean(LABEL_PARAM[$("scheme").value]);
    $("labels-field").hidden = !labelled;
    for (const el of document.querySelectorAll("[data-labelled]")) el.hidden = !labelled;
    if (m === "compare" && $("baseline").value.trim() === "" && $("candidate").value.trim() === "") {
      $("baseline").value = EXAMPLE_BEFORE.replace(/, /g, "\n");
      $("candidate").value = EXAMPLE_AFTER.replace(/, /g, "\n");
    }
  }

  function applyStatistic() {
    const p = PARAMS[$("statistic").value];
    $("param-field").hidden = !p;
    if (p) {
      $("param-label").textContent = p.label;
      $("param").value = p.value;
    }
  }

  function applyScheme() {
    $("block-field").hidden = !BLOCK_PARAM[$("scheme").value];
    applyMode();
  }

  function countData() {
    const n = tokens($("data").value).length;
    $("data-count").textContent = n + (n === 1 ? " value" : " values");
  }

  $("form").addEventListener("submit", (e) => {
    e.preventDefault();
    compute();
  });
  $("mode-interval").addEventListener("change", applyMode);
  $("mode-compare").addEventListener("change", applyMode);
  $("statistic").addEventListener("change", applyStatistic);
  $("scheme").addEventListener("change", applyScheme);
  $("data").addEventListener("input", countData);
  $("csv-file").addEventListener("change", loadCsv);
  fromColumn("csv-column", "data");
  fromColumn("csv-baseline", "baseline");
  fromColumn("csv-candidate", "candidate");
  fromColumn("csv-labels", "labels");
  $("copy-curl").addEventListener("click", () => copy(lastCurl, "Command"));
  $("copy-token").addEventListener("click", () => copy(lastToken, "Token"));

  $("data").value = EXAMPLE_BEFORE.replace(/, /g, "\n");
  countData();
  applyStatistic();
  applyScheme();
  compute();
})();
