-- wrk script: one fixed URL (the command line's), with the same one-line JSON summary as replay.lua.

function done(summary, latency, requests)
  local e = summary.errors
  io.write(string.format(
    '{"requests": %d, "seconds": %.3f, "p50_us": %d, "p99_us": %d, "max_us": %d, "non_2xx": %d, "socket_errors": %d}\n',
    summary.requests, summary.duration / 1e6, latency:percentile(50), latency:percentile(99), latency.max,
    e.status, e.connect + e.read + e.write + e.timeout))
end
