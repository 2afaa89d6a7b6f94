#!/usr/bin/env python3
"""Gammaline walkthrough in Python 3, standard library only.

Refers a meter reading through a catalog cable, transforms a load through a line, and streams a
500-item NDJSON batch, printing each figure as name=value on its own line.

    GAMMALINE_URL=http://127.0.0.1:8080 GAMMALINE_KEY=... python3 walkthrough.py
"""
import json
import os
import sys
import time
import urllib.error
import urllib.request

API = os.environ["GAMMALINE_URL"].rstrip("/") + "/api/v1"
KEY = os.environ["GAMMALINE_KEY"]
# A 429 is retried at most this many times, and only when Retry-After is short: a spent daily quota
# answers with the seconds until 00:00 UTC, which an unattended program should report, not sleep through.
MAX_RETRIES = 3
MAX_WAIT_S = 60


def post(path, body, content_type="application/json"):
    """POSTs and returns the open response (2xx); waits out short 429s; exits on any other problem."""
    data = body if isinstance(body, bytes) else json.dumps(body).encode()
    for attempt in range(MAX_RETRIES + 1):
        request = urllib.request.Request(
            API + path,
            data=data,
            method="POST",
            headers={"Authorization": "Bearer " + KEY, "Content-Type": content_type},
        )
        try:
            return urllib.request.urlopen(request)
        except urllib.error.HTTPError as err:
            wait = err.headers.get("Retry-After", "")
            if err.code == 429 and attempt < MAX_RETRIES and wait.isdigit() and int(wait) <= MAX_WAIT_S:
                print(f"429 from {path}: waiting {wait} s (retry {attempt + 1} of {MAX_RETRIES})", file=sys.stderr)
                err.close()
                time.sleep(int(wait))
                continue
            fail(err.code, err.read())


def fail(status, body):
    """Prints an RFC 9457 problem (or whatever came instead) and exits non-zero."""
    try:
        problem = json.loads(body)
        print(f"status={problem.get('status', status)}", file=sys.stderr)
        print(f"title={problem.get('title')}", file=sys.stderr)
        print(f"detail={problem.get('detail')}", file=sys.stderr)
    except ValueError:
        print(f"status={status}", file=sys.stderr)
        print(f"body={body[:500]!r}", file=sys.stderr)
    sys.exit(1)


def show(name, value):
    # json.dumps keeps full precision (the shortest text that reads back as the same double) and
    # writes null for the unbounded figures the API answers with null.
    print(f"{name}={json.dumps(value)}")


# 1. A transmitter-end reading of 100 W forward, 4 W reflected: what happens at the antenna?
with post("/refer", {
    "frequencyHz": 28_400_000,
    "line": {"cableId": "rg-58", "lengthM": 30},
    "direction": "inputToLoad",
    "reading": {"forwardPowerW": 100, "reflectedPowerW": 4},
}) as response:
    refer = json.load(response)
show("referAtInputSwr", refer["atInput"]["swr"])
show("referAtLoadSwr", refer["atLoad"]["swr"])
show("referMatchedLossDb", refer["matchedLossDb"])
show("referTotalLossDb", refer["totalLossDb"])
show("referAtLoadNetPowerW", refer["atLoad"]["netPowerW"])

# 2. A 72 + j18 ohm load at the far end of 30 m of RG-213 on 14.2 MHz.
with post("/line", {
    "frequencyHz": 14_200_000,
    "line": {"cableId": "rg-213", "lengthM": 30},
    "loadOhm": {"re": 72, "im": 18},
    "powerW": 100,
}) as response:
    line = json.load(response)
show("lineInputOhmRe", line["inputOhm"]["re"])
show("lineInputOhmIm", line["inputOhm"]["im"])
show("lineAtInputSwr", line["atInput"]["swr"])
show("lineTotalLossDb", line["totalLossDb"])
show("lineLoadW", line["power"]["loadW"])
for caution in line["cautions"]:
    print("caution: " + caution, file=sys.stderr)

# 3. 500 SWR values, 1.00 to 5.99, as NDJSON. (100 + i) / 100 is the double nearest to the decimal
# 1.xx, so every client sends the same numbers.
items = "".join(json.dumps({"op": "mismatch", "input": {"swr": (100 + i) / 100}}) + "\n" for i in range(500))
ok = failed = 0
picked = None
end = None
with post("/batch", items.encode(), "application/x-ndjson") as response:
    # Iterating the response yields each line as soon as it has arrived, not after the whole answer.
    for raw in response:
        result = json.loads(raw)
        if "end" in result:
            end = result
        elif result["ok"]:
            ok += 1
            if result["line"] == 250:
                picked = result["output"]["returnLossDb"]
        else:
            failed += 1
            print(f"line {result['line']}: {result['problem']['detail']}", file=sys.stderr)
# Only the closing line proves the answer is whole; without it the stream was cut off.
if end is None:
    print("the batch answer was cut off (no end line); send the items again", file=sys.stderr)
    sys.exit(1)
if end["end"] != "complete":
    print(f"the batch stopped early: {end.get('problem', {}).get('detail')}", file=sys.stderr)
    sys.exit(1)
show("batchOk", ok)
show("batchFailed", failed)
show("batchLine250ReturnLossDb", picked)
