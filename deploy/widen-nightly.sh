#!/usr/bin/env bash
# Train on the newest dump in a folder; called by the systemd timer or cron below.
# Exit codes are widen train's: 0 published, 1 failure, 2 bad input, 3 refused by the gate.
# Settings (environment): WIDEN_DUMPS (folder of dumps), WIDEN_STORE (store folder),
# WIDEN_CONFIG (TOML, optional), WIDEN_BIN (the widen command, default: widen on PATH),
# WIDEN_QUERY_LOG (optional: the day's query log; after a published bundle, the worklist's summary
# line goes to this log beside the training's, docs/review.md).
set -euo pipefail
dumps=${WIDEN_DUMPS:?set WIDEN_DUMPS to the folder the nightly dumps land in}
store=${WIDEN_STORE:?set WIDEN_STORE to the store folder}
bin=${WIDEN_BIN:-widen}
newest=$(find "$dumps" -maxdepth 1 -type f \( -name '*.jsonl' -o -name '*.jsonl.gz' -o -name '*.csv' -o -name '*.csv.gz' \) \
  -printf '%T@ %p\n' | sort -n | tail -n 1 | cut -d' ' -f2-)
if [ -z "$newest" ]; then
  echo "widen-nightly: no dump in $dumps" >&2
  exit 2
fi
echo "widen-nightly: training on $newest"
args=(train --corpus "$newest" --store "$store")
[ -n "${WIDEN_CONFIG:-}" ] && args+=(--config "$WIDEN_CONFIG")
set +e
"$bin" "${args[@]}"
code=$?
set -e
if [ "$code" -eq 0 ] && [ -n "${WIDEN_QUERY_LOG:-}" ]; then
  "$bin" worklist --store "$store" --log "$WIDEN_QUERY_LOG" --summary || echo "widen-nightly: no worklist summary" >&2
fi
exit "$code"
