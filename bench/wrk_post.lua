-- wrk script for bench/throughput.py: POSTs one JSON fit request document, over and over.
--
--   PLANCKTON_WRK_BODY=/path/to/request.json wrk ... -s bench/wrk_post.lua http://127.0.0.1:PORT/v1/fit
--
-- Each wrk thread reads the body file once; every request is the same prebuilt POST with
-- Content-Type application/json. Each thread counts the responses whose status is not 2xx (wrk's own
-- "Non-2xx or 3xx" count lets 3xx through). At the end one line is printed for throughput.py:
--   planckton-wrk: {"requests":N,"duration_us":N,"bytes":N,"non_2xx":N,"status_counts":{...},
--                   "errors":{"connect":N,"read":N,"write":N,"status":N,"timeout":N},
--                   "latency_us":{"p50":X,"p90":X,"p99":X,"max":X,"mean":X}}

local path = os.getenv("PLANCKTON_WRK_BODY")
if path == nil or path == "" then
  error("wrk_post.lua: set PLANCKTON_WRK_BODY to the request body file")
end
local file = assert(io.open(path, "rb"))
local body = file:read("*a")
file:close()

wrk.method = "POST"
wrk.body = body
wrk.headers["Content-Type"] = "application/json"
wrk.headers["Accept"] = "application/json"

local prebuilt = nil
local threads = {}

function setup(thread)
  table.insert(threads, thread)
end

function init(args)
  non_2xx = 0
  status_counts = {}
  prebuilt = wrk.format()
end

function request()
  return prebuilt
end

function response(status, headers, response_body)
  if status < 200 or status > 299 then
    non_2xx = non_2xx + 1
    local key = tostring(status)
    status_counts[key] = (status_counts[key] or 0) + 1
  end
end

function done(summary, latency, requests)
  local non = 0
  local counts = {}
  for _, thread in ipairs(threads) do
    non = non + (thread:get("non_2xx") or 0)
    local c = thread:get("status_counts")
    if c ~= nil then
      for k, v in pairs(c) do counts[k] = (counts[k] or 0) + v end
    end
  end
  local parts = {}
  for k, v in pairs(counts) do table.insert(parts, string.format('"%s":%d', k, v)) end
  local e = summary.errors
  io.write(string.format(
    'planckton-wrk: {"requests":%d,"duration_us":%d,"bytes":%d,"non_2xx":%d,"status_counts":{%s},' ..
    '"errors":{"connect":%d,"read":%d,"write":%d,"status":%d,"timeout":%d},' ..
    '"latency_us":{"p50":%.1f,"p90":%.1f,"p99":%.1f,"max":%.1f,"mean":%.1f}}\n',
    summary.requests, summary.duration, summary.bytes, non, table.concat(parts, ","),
    e.connect, e.read, e.write, e.status, e.timeout,
    latency:percentile(50), latency:percentile(90), latency:percentile(99), latency.max, latency.mean))
end
