-- wrk script for bench/load_mixed.py and bench/soak.py: a weighted mix of prebuilt requests.
--
--   PLANCKTON_WRK_MANIFEST=/path/manifest.tsv [PLANCKTON_WRK_DELAY_MS=N] \
--     wrk ... -s bench/wrk_mixed.lua http://127.0.0.1:PORT/
--
-- The manifest has one line per request kind, tab-separated: weight, method, path (with its query),
-- Content-Type, body file, name. Each thread builds every request once and then cycles through a
-- sequence in which each kind appears `weight` times, interleaved, starting at a thread-dependent
-- offset. PLANCKTON_WRK_DELAY_MS > 0 makes each connection pause that long before each request
-- (a steady, moderate load for the soak). wrk's response() callback does not say which request a
-- response answers, so statuses are counted over the whole mix; per-kind latencies come from runs
-- of one kind each. At the end one line is printed:
--   planckton-wrk-mixed: {"requests":N,"duration_us":N,"bytes":N,"non_2xx":N,"status_counts":{...},
--     "sent":{"kind":N,...},"errors":{...},"latency_us":{"p50":X,"p90":X,"p99":X,"p999":X,"max":X,"mean":X}}

local manifest = os.getenv("PLANCKTON_WRK_MANIFEST")
if manifest == nil or manifest == "" then
  error("wrk_mixed.lua: set PLANCKTON_WRK_MANIFEST to the manifest file")
end
local delay_ms = tonumber(os.getenv("PLANCKTON_WRK_DELAY_MS") or "0") or 0

local threads = {}
local next_id = 0

function setup(thread)
  thread:set("id", next_id)
  next_id = next_id + 1
  table.insert(threads, thread)
end

local kinds = {}
local sequence = {}
local position = 1

local function read_file(path)
  local file = assert(io.open(path, "rb"))
  local text = file:read("*a")
  file:close()
  return text
end

function init(args)
  non_2xx = 0
  status_counts = {}
  sent = {}
  for line in io.lines(manifest) do
    if line ~= "" then
      local fields = {}
      for field in string.gmatch(line, "[^\t]+") do table.insert(fields, field) end
      if #fields ~= 6 then error("wrk_mixed.lua: bad manifest line: " .. line) end
      local kind = {
        weight = tonumber(fields[1]),
        name = fields[6],
        request = wrk.format(fields[2], fields[3],
                             {["Content-Type"] = fields[4], ["Accept"] = "application/json"},
                             read_file(fields[5])),
      }
      table.insert(kinds, kind)
      sent[kind.name] = 0
    end
  end
  -- Interleave: round r takes every kind whose weight exceeds r.
  local most = 0
  for _, kind in ipairs(kinds) do if kind.weight > most then most = kind.weight end end
  for round = 0, most - 1 do
    for _, kind in ipairs(kinds) do
      if kind.weight > round then table.insert(sequence, kind) end
    end
  end
  position = ((id or 0) * 7) % #sequence + 1
end

function request()
  local kind = sequence[position]
  position = position % #sequence + 1
  sent[kind.name] = sent[kind.name] + 1
  return kind.request
end

if delay_ms > 0 then
  function delay()
    return delay_ms
  end
end

function response(status, headers, body)
  if status < 200 or status > 299 then
    non_2xx = non_2xx + 1
    local key = tostring(status)
    status_counts[key] = (status_counts[key] or 0) + 1
  end
end

function done(summary, latency, requests)
  local non = 0
  local counts = {}
  local sent_total = {}
  for _, thread in ipairs(threads) do
    non = non + (thread:get("non_2xx") or 0)
    local c = thread:get("status_counts")
    if c ~= nil then
      for k, v in pairs(c) do counts[k] = (counts[k] or 0) + v end
    end
    local s = thread:get("sent")
    if s ~= nil then
      for k, v in pairs(s) do sent_total[k] = (sent_total[k] or 0) + v end
    end
  end
  local parts = {}
  for k, v in pairs(counts) do table.insert(parts, string.format('"%s":%d', k, v)) end
  local sent_parts = {}
  for k, v in pairs(sent_total) do table.insert(sent_parts, string.format('"%s":%d', k, v)) end
  local e = summary.errors
  io.write(string.format(
    'planckton-wrk-mixed: {"requests":%d,"duration_us":%d,"bytes":%d,"non_2xx":%d,"status_counts":{%s},' ..
    '"sent":{%s},"errors":{"connect":%d,"read":%d,"write":%d,"status":%d,"timeout":%d},' ..
    '"latency_us":{"p50":%.1f,"p90":%.1f,"p99":%.1f,"p999":%.1f,"max":%.1f,"mean":%.1f}}\n',
    summary.requests, summary.duration, summary.bytes, non, table.concat(parts, ","),
    table.concat(sent_parts, ","), e.connect, e.read, e.write, e.status, e.timeout,
    latency:percentile(50), latency:percentile(90), latency:percentile(99), latency:percentile(99.9),
    latency.max, latency.mean))
end
