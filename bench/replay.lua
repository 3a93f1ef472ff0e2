-- wrk script: replay a day's query log against widen, in order.
-- Usage: wrk -t2 -c32 -d20s -s bench/replay.lua http://127.0.0.1:8000 -- PATHS_FILE THREADS
-- PATHS_FILE holds one request path a line ("/v1/expand?q=care+assistant+hensby"), in the log's
-- order; THREADS is wrk's -t. Thread n of T sends lines n, n+T, n+2T, ... and wraps round at the
-- end, so together the threads walk the log in order. done() prints one JSON line (latencies in
-- microseconds) for bench/server.py to read. wrk's Lua API: setup runs once a thread in the main
-- state, init and request in each thread's own state, done once at the end.

local next_id = 0

function setup(thread)
  thread:set("id", next_id)
  next_id = next_id + 1
end

function init(args)
  paths = {}
  for line in io.lines(args[1]) do
    paths[#paths + 1] = line
  end
  step = tonumber(args[2]) or 1
  position = (id % #paths) + 1
end

function request()
  local path = paths[position]
  position = position + step
  if position > #paths then
    position = position - #paths
  end
  return wrk.format("GET", path)
end

function done(summary, latency, requests)
  local e = summary.errors
  io.write(string.format(
    '{"requests": %d, "seconds": %.3f, "p50_us": %d, "p99_us": %d, "max_us": %d, "non_2xx": %d, "socket_errors": %d,'
      .. ' "connect": %d, "read": %d, "write": %d, "timeout": %d}\n',
    summary.requests, summary.duration / 1e6, latency:percentile(50), latency:percentile(99), latency.max,
    e.status, e.connect + e.read + e.write + e.timeout, e.connect, e.read, e.write, e.timeout))
end
