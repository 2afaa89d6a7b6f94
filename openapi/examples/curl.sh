#!/usr/bin/env bash
# Gammaline walkthrough with curl (and python3 to read JSON answers).
#
# Refers a meter reading through a catalog cable, transforms a load through a line, and streams a
# 500-item NDJSON batch, printing each figure as name=value on its own line.
#
#   GAMMALINE_URL=http://127.0.0.1:8080 GAMMALINE_KEY=... bash curl.sh
set -euo pipefail

: "${GAMMALINE_URL:?set GAMMALINE_URL, e.g. http://127.0.0.1:8080}"
: "${GAMMALINE_KEY:?set GAMMALINE_KEY to an API key}"
API="${GAMMALINE_URL%/}/api/v1"
# A 429 is retried at most this many times, and only when Retry-After is short: a spent daily quota
# answers with the seconds until 00:00 UTC, which an unattended program should report, not sleep through.
MAX_RETRIES=3
MAX_WAIT_S=60

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

# show FILE name=a.b.c …: prints name=value for each path into a JSON file; numbers as JSON (full
# precision; null stays null), strings as they are.
show() {
  python3 -c '
import json, sys
answer = json.load(open(sys.argv[1]))
for wanted in sys.argv[2:]:
    name, _, path = wanted.partition("=")
    value = answer
    for key in path.split("."):
        value = value[key]
    print(name + "=" + (value if isinstance(value, str) else json.dumps(value)))' "$@"
}

# The status of the last answer in a curl -D header file (a 100 Continue may come first).
status_of() { grep -a '^HTTP/' "$1" | tail -n 1 | cut -d ' ' -f 2; }
retry_after_of() { grep -ai '^retry-after:' "$1" | tr -dc '0-9' || true; }

# Prints an RFC 9457 problem (or whatever came instead) and exits non-zero.
fail() {
  local status=$1 body=$2
  if ! show "$body" status=status title=title detail=detail >&2 2>/dev/null; then
    echo "status=$status" >&2
    echo "body=$(head -c 500 "$body")" >&2
  fi
  exit 1
}

# should_retry STATUS ATTEMPT: true (after waiting) when the answer was a 429 worth waiting for.
should_retry() {
  local wait
  wait=$(retry_after_of "$work/headers")
  if [[ $1 == 429 && $2 -lt $MAX_RETRIES && -n $wait && $wait -le $MAX_WAIT_S ]]; then
    echo "429: waiting $wait s (retry $(($2 + 1)) of $MAX_RETRIES)" >&2
    sleep "$wait"
    return 0
  fi
  return 1
}

# post PATH BODY_FILE: the 2xx answer ends up in $work/answer.
post() {
  local attempt status
  for ((attempt = 0; ; attempt++)); do
    curl -sS -o "$work/answer" -D "$work/headers" -H "Authorization: Bearer $GAMMALINE_KEY" \
      -H 'Content-Type: application/json' --data-binary "@$2" "$API$1"
    status=$(status_of "$work/headers")
    [[ $status == 2* ]] && return 0
    should_retry "$status" "$attempt" || fail "$status" "$work/answer"
  done
}

# 1. A transmitter-end reading of 100 W forward, 4 W reflected: what happens at the antenna?
cat >"$work/refer.json" <<'JSON'
{"frequencyHz":28400000,"line":{"cableId":"rg-58","lengthM":30},"direction":"inputToLoad",
 "reading":{"forwardPowerW":100,"reflectedPowerW":4}}
JSON
post /refer "$work/refer.json"
show "$work/answer" referAtInputSwr=atInput.swr referAtLoadSwr=atLoad.swr referMatchedLossDb=matchedLossDb \
  referTotalLossDb=totalLossDb referAtLoadNetPowerW=atLoad.netPowerW

# 2. A 72 + j18 ohm load at the far end of 30 m of RG-213 on 14.2 MHz.
cat >"$work/line.json" <<'JSON'
{"frequencyHz":14200000,"line":{"cableId":"rg-213","lengthM":30},"loadOhm":{"re":72,"im":18},"powerW":100}
JSON
post /line "$work/line.json"
show "$work/answer" lineInputOhmRe=inputOhm.re lineInputOhmIm=inputOhm.im lineAtInputSwr=atInput.swr \
  lineTotalLossDb=totalLossDb lineLoadW=power.loadW

# 3. 500 SWR values, 1.00 to 5.99, as NDJSON, written as decimals (1.00, 1.01, …) with integer
# arithmetic so the numbers match what the Python and Node examples send.
for ((i = 0; i < 500; i++)); do
  printf '{"op":"mismatch","input":{"swr":%d.%02d}}\n' $((1 + i / 100)) $((i % 100))
done >"$work/batch.ndjson"

# Reads result lines as curl hands them over (--no-buffer) and prints the totals at the end.
# Plain bash pattern matching: one python3 per line would be slow for a long stream.
read_results() {
  local line ok=0 failed=0 picked=null end=''
  while IFS= read -r line || [[ -n $line ]]; do
    if [[ $line == '{"end":'* ]]; then
      [[ $line =~ ^\{\"end\":\"([a-z]+)\" ]] && end=${BASH_REMATCH[1]}
    elif [[ $line == '{"line":'*'"ok":true'* ]]; then
      ok=$((ok + 1))
      if [[ $line == '{"line":250,'* && $line =~ \"returnLossDb\":([-+.0-9eE]+|null) ]]; then picked=${BASH_REMATCH[1]}; fi
    elif [[ $line == '{"line":'* ]]; then
      failed=$((failed + 1))
      echo "failed: $line" >&2
    fi
  done
  printf '%s\n' "$end" "$ok" "$failed" "$picked"
}

for ((attempt = 0; ; attempt++)); do
  # tee keeps the body, so a problem answered instead of a stream can still be shown.
  curl -sS --no-buffer -D "$work/headers" -H "Authorization: Bearer $GAMMALINE_KEY" \
    -H 'Content-Type: application/x-ndjson' --data-binary "@$work/batch.ndjson" "$API/batch" |
    tee "$work/answer" | read_results >"$work/totals"
  status=$(status_of "$work/headers")
  [[ $status == 2* ]] && break
  should_retry "$status" "$attempt" || fail "$status" "$work/answer"
done
{ read -r end; read -r ok; read -r failed; read -r picked; } <"$work/totals"
# Only the closing line proves the answer is whole; without it the stream was cut off.
if [[ -z $end ]]; then
  echo 'the batch answer was cut off (no end line); send the items again' >&2
  exit 1
fi
if [[ $end != complete ]]; then
  echo "the batch stopped early: $(tail -n 1 "$work/answer")" >&2
  exit 1
fi
echo "batchOk=$ok"
echo "batchFailed=$failed"
echo "batchLine250ReturnLossDb=$picked"
