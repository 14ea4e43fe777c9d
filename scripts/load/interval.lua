-- wrk script for bandsaw's POST /v1/interval (used by scripts/load/run.sh).
--
-- Every request carries the same fixed body: 200 invented page load times in milliseconds
-- (a lognormal bulk around 900 ms with a few slow outliers), the mean, B = 1000 resamples,
-- the percentile interval, seed 1. run.sh extracts the same body from this file for its
-- sequential curl runs, so both measure the identical request.
--
-- Besides wrk's own summary, done() prints machine-readable lines:
--   LOAD       requests, duration, requests/s and latency percentiles (all statuses together)
--   STATUS     responses counted by HTTP status in the response() hook, over all threads
--   ERRORS     wrk's socket errors (connect/read/write/timeout) and its non-2xx/3xx count
--   SERVER200  p50/p99 of the "elapsed_ms" field of the 200 responses: the server's own time
--              from the start of the handler (so including any wait in the compute queue,
--              excluding response encoding and the network)

-- BODY BEGIN
local body = [[
{"data": [493, 555, 753, 372, 589, 377, 709, 1209, 1333, 973, 690, 1053, 853, 584, 914, 1828, 666, 1238, 1689, 686, 676, 1193, 761, 1007, 573, 2017, 843, 776, 764, 444, 1272, 728, 904, 1376, 796, 957, 1598, 563, 856, 1686, 782, 790, 600, 1060, 251, 951, 870, 1047, 1038, 870, 1077, 470, 1053, 3377, 1097, 1270, 1500, 649, 375, 1401, 581, 1172, 997, 571, 1245, 1103, 846, 581, 498, 3083, 1131, 627, 604, 1632, 484, 811, 1081, 378, 1536, 1001, 760, 1949, 846, 1191, 1659, 1062, 975, 311, 1065, 626, 976, 587, 487, 663, 314, 1011, 824, 650, 1852, 451, 543, 806, 521, 1760, 1720, 938, 2120, 919, 585, 343, 1677, 895, 832, 1165, 2092, 1173, 437, 1012, 619, 910, 1015, 529, 1241, 283, 536, 976, 380, 561, 720, 1676, 699, 843, 388, 668, 526, 1437, 698, 2110, 331, 779, 756, 565, 3003, 1056, 898, 953, 795, 1332, 754, 724, 876, 1636, 2353, 1358, 1360, 614, 1050, 566, 1209, 549, 1287, 749, 2789, 1147, 457, 1086, 1557, 1128, 1161, 547, 930, 477, 607, 4247, 350, 1313, 498, 684, 1196, 988, 435, 1613, 483, 519, 1473, 1428, 809, 921, 774, 1737, 1869, 1640, 1372, 647, 1257, 1237, 1996, 1465, 1195, 1855], "statistic": "mean", "resamples": 1000, "methods": ["percentile"], "seed": 1}
]]
-- BODY END

wrk.method = "POST"
wrk.body = body
wrk.headers["Content-Type"] = "application/json"

-- Per-thread state (each wrk thread has its own Lua state).
counts = {}
elapsed = {}
nelapsed = 0

function response(status, headers, resp_body)
  local k = tostring(status)
  counts[k] = (counts[k] or 0) + 1
  if status == 200 then
    local e = string.match(resp_body, '"elapsed_ms"%s*:%s*([%d%.eE+-]+)')
    if e then
      nelapsed = nelapsed + 1
      elapsed[nelapsed] = tonumber(e)
    end
  end
end

-- Main state: remember the threads so done() can read their counters.
local threads = {}
function setup(thread)
  table.insert(threads, thread)
end

local function quantile(sorted, p)
  -- linear interpolation between order statistics (numpy's default, type 7)
  local n = #sorted
  if n == 0 then return 0 end
  local h = (n - 1) * p + 1
  local lo = math.floor(h)
  local hi = math.min(lo + 1, n)
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo])
end

function done(summary, latency, requests)
  local total = {}
  local all = {}
  for _, t in ipairs(threads) do
    local c = t:get("counts")
    for k, v in pairs(c) do total[k] = (total[k] or 0) + v end
    local e = t:get("elapsed")
    for _, v in ipairs(e) do all[#all + 1] = v end
  end
  table.sort(all)
  local secs = summary.duration / 1e6
  io.write(string.format("LOAD requests=%d duration_s=%.3f rps=%.1f p50_ms=%.3f p90_ms=%.3f p99_ms=%.3f max_ms=%.3f\n",
    summary.requests, secs, summary.requests / secs,
    latency:percentile(50) / 1e3, latency:percentile(90) / 1e3, latency:percentile(99) / 1e3, latency.max / 1e3))
  local keys = {}
  for k, _ in pairs(total) do keys[#keys + 1] = k end
  table.sort(keys)
  local parts = {}
  for _, k in ipairs(keys) do parts[#parts + 1] = k .. "=" .. total[k] end
  io.write("STATUS " .. table.concat(parts, " ") .. "\n")
  local e = summary.errors
  io.write(string.format("ERRORS connect=%d read=%d write=%d timeout=%d non2xx=%d\n",
    e.connect, e.read, e.write, e.timeout, e.status))
  io.write(string.format("SERVER200 n=%d p50_ms=%.3f p99_ms=%.3f max_ms=%.3f\n",
    #all, quantile(all, 0.50), quantile(all, 0.99), all[#all] or 0))
end
