-- wrk script: replay a day's query log against widen once, in order (or round and round).
-- Usage: wrk -t2 -c32 -d300s -s bench/replay.lua http://127.0.0.1:8000 -- PATHS_FILE THREADS [loop]
-- PATHS_FILE holds one request path a line ("/v1/expand?q=care+assistant+hensby"), in the log's
-- order; THREADS is wrk's -t. Thread n of T sends lines n, n+T, n+2T, ...: together the threads
-- walk the log once, in order. With "loop" (the failover drill's steady load) they wrap round at
-- the end and run until -d, and the time is wrk's own. Else a thread stops once it has the
-- answers to its share; until then a
-- connection that is free while the last answers are on their way sends the next line again from
-- the top (at most one a connection). wrk itself runs until -d or SIGINT (bench/traffic.py sends
-- it once the server has answered the whole log), so done() reports the pass's own time: from the
-- first request to the last thread's stop, read with clock_gettime through LuaJIT's ffi. One JSON
-- line, latencies in microseconds. wrk's Lua API: setup runs once a thread in the main state,
-- init, request and response in each thread's own state, done once at the end in the main state.

local ffi = require("ffi")
ffi.cdef[[
typedef struct { long tv_sec; long tv_nsec; } widen_timespec;
int clock_gettime(int clock, widen_timespec *out);
]]
local CLOCK_MONOTONIC = 1
local stamp = ffi.new("widen_timespec")

local function now_us()
  ffi.C.clock_gettime(CLOCK_MONOTONIC, stamp)
  return tonumber(stamp.tv_sec) * 1e6 + tonumber(stamp.tv_nsec) / 1e3
end

local threads = {}
local next_id = 0

function setup(thread)
  thread:set("id", next_id)
  next_id = next_id + 1
  threads[#threads + 1] = thread
end

function init(args)
  paths = {}
  for line in io.lines(args[1]) do
    paths[#paths + 1] = line
  end
  step = tonumber(args[2]) or 1
  position = (id % #paths) + 1
  share = 0
  for n = position, #paths, step do
    share = share + 1
  end
  loop = args[3] == "loop"
  answered = 0
  first_us = -1
  last_us = -1
end

function request()
  if first_us < 0 then
    first_us = now_us()
  end
  local path = paths[position]
  position = position + step
  if position > #paths then
    position = position - #paths
  end
  return wrk.format("GET", path)
end

function response(status, headers, body)
  answered = answered + 1
  if answered == share and not loop then
    last_us = now_us()
    wrk.thread:stop()
  end
end

function done(summary, latency, requests)
  local e = summary.errors
  if threads[1]:get("loop") then
    io.write(string.format(
      '{"requests": %d, "seconds": %.3f, "p50_us": %d, "p99_us": %d, "max_us": %d, "non_2xx": %d,'
        .. ' "socket_errors": %d, "connect": %d, "read": %d, "write": %d, "timeout": %d}\n',
      summary.requests, summary.duration / 1e6, latency:percentile(50), latency:percentile(99), latency.max,
      e.status, e.connect + e.read + e.write + e.timeout, e.connect, e.read, e.write, e.timeout))
    return
  end
  local answers, first, last, whole = 0, math.huge, 0, true
  for _, thread in ipairs(threads) do
    local answered, share = thread:get("answered"), thread:get("share")
    answers = answers + math.min(answered, share)
    whole = whole and answered >= share
    first = math.min(first, thread:get("first_us"))
    local stopped = thread:get("last_us")
    if stopped < 0 then
      stopped = now_us() -- stopped by wrk before its share was answered
    end
    last = math.max(last, stopped)
  end
  io.write(string.format(
    '{"requests": %d, "seconds": %.3f, "p50_us": %d, "p99_us": %d, "max_us": %d, "non_2xx": %d, "socket_errors": %d,'
      .. ' "connect": %d, "read": %d, "write": %d, "timeout": %d, "whole_log": %s}\n',
    answers, (last - first) / 1e6, latency:percentile(50), latency:percentile(99), latency.max,
    e.status, e.connect + e.read + e.write + e.timeout, e.connect, e.read, e.write, e.timeout,
    tostring(whole)))
end
