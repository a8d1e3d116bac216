"""POST /v1/fit/batch (NDJSON) end to end: 20 body lines mixing good requests, bad ones and blank
lines answer one line each, in input order, with the right 0-based "index"; good lines carry the
full response (the same document as POST /v1/fit), bad lines a problem with a 4xx status; the
answer streams (the first line arrives before a slow last line is computed); more lines than
--max-batch-lines is a 413 problem for the whole batch with nothing streamed."""
import json
import os
import time

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, Server, start_checked_server, describe, http, is_response, json_of, media_type, problem_issues

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
SAMPLES = os.path.join(args.repo, "sample-spectra")
NDJSON = "application/x-ndjson"


def small(temperature=5000.0, seed=1, n=40):
    return harness.planck_spectrum(n, temperature=temperature, seed=seed)


def changed(doc, path, value):
    doc = json.loads(json.dumps(doc))
    node = doc
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    return doc


def sample_line(name, **extra):
    with open(os.path.join(SAMPLES, name + ".json"), encoding="utf-8") as f:
        return harness.compact({**extra, **json.load(f)})


# (line text, expectation): None for blank lines, ("good", id or None), ("bad", status, pointer or None, id or None)
C = harness.compact
BATCH = [
    (C({"id": "first", **small()}), ("good", "first")),
    (C({"id": 7, **small(6000, 2)}), ("good", 7)),
    ('{"spectrum": [', ("bad", 400, None, None)),
    ("", None),
    (C({"id": "bad-unit", **changed(small(), ["spectrum", "x_unit"], "furlong")}), ("bad", 422, "/spectrum/x_unit", "bad-unit")),
    (C(small(4000, 3)), ("good", None)),
    (C(changed(small(), ["spectrum", "y_error", 2], -1.0e-12)), ("bad", 422, "/spectrum/y_error/2", None)),
    (sample_line("tms-0112-cool-star"), ("good", None)),
    (C({**small(), "model": {"kind": "rainbow"}}), ("bad", 422, "/model/kind", None)),
    ("", None),
    (C({"id": "line-10", **small(8000, 4)}), ("good", "line-10")),
    (C(changed(small(), ["spectrum", "y", 2], "three")), ("bad", 422, "/spectrum/y/2", None)),
    ("[1, 2, 3]", ("bad", 422, "", None)),
    (sample_line("tms-0047-hot-star", id="hot"), ("good", "hot")),
    (C(small()).replace('"y":[', '"y":[NaN,', 1), ("bad", 400, None, None)),
    (C(changed(small(), ["spectrum", "colour"], "red")), ("bad", 422, "/spectrum/colour", None)),
    (C(small(3000, 5)), ("good", None)),
    (C({"model": {"kind": "planck"}}), ("bad", 422, "/spectrum", None)),
    ("", None),
    (C({"id": "last", **small(12000, 6)}), ("good", "last")),
]
assert len(BATCH) == 20


def read_stream(r, chunk_size=64, max_lines=10000, max_seconds=180):
    """Reads an NDJSON answer line by line (bounded: at most max_lines lines and max_seconds);
    returns ([(arrival time, text)], error or None)."""
    lines, error = [], None
    deadline = time.monotonic() + max_seconds
    try:
        for raw in r.iter_lines(chunk_size=chunk_size):
            if raw:
                lines.append((time.monotonic(), raw.decode("utf-8", errors="replace")))
            if len(lines) >= max_lines or time.monotonic() > deadline:
                error = f"stopped reading after {len(lines)} lines / {max_seconds} s"
                r.close()
                break
    except Exception as e:  # noqa: BLE001 - a broken stream is a failed check
        error = f"{type(e).__name__}: {e}"
    return lines, error


def mixed_batch(server):
    body = "\n".join(text for text, _ in BATCH) + "\n"
    r = http("POST", server, "/v1/fit/batch", data=body.encode(), headers={"Content-Type": NDJSON}, stream=True,
             timeout=120)
    ok = is_response(r) and r.status_code == 200
    checks.check("mixed batch: 200", ok, describe(r) if not ok else "")
    if not ok:
        return
    checks.check(f"mixed batch: Content-Type {NDJSON}", media_type(r) == NDJSON, r.headers.get("Content-Type"))
    checks.check("mixed batch: streamed (Transfer-Encoding: chunked)",
                 "chunked" in r.headers.get("Transfer-Encoding", "").lower(), dict(r.headers))
    lines, error = read_stream(r)
    checks.check("mixed batch: the stream ends cleanly", error is None, error or "")
    expected = [(i, e) for i, (_, e) in enumerate(BATCH) if e is not None]
    docs = []
    for _, text in lines:
        try:
            docs.append(json.loads(text))
        except json.JSONDecodeError as e:
            docs.append(None)
            checks.check("mixed batch: every answer line is one JSON object", False, f"{e}: {text[:120]}")
    checks.check("mixed batch: one answer line per non-blank body line (17)", len(docs) == len(expected),
                 f"{len(docs)} lines")
    indices = [d.get("index") if isinstance(d, dict) else None for d in docs]
    checks.check("mixed batch: lines in input order with the 0-based line number as index (blank lines skipped)",
                 indices == [i for i, _ in expected], f"got {indices}")
    checks.check("mixed batch: 'index' is the first member of every line",
                 all(isinstance(d, dict) and next(iter(d), None) == "index" for d in docs))

    by_index = {d.get("index"): d for d in docs if isinstance(d, dict)}
    for i, e in expected:
        d = by_index.get(i)
        label = f"batch line {i} ({'good' if e[0] == 'good' else 'bad, ' + str(e[1])})"
        if d is None:
            checks.check(f"{label}: answered", False, "no line with this index")
            continue
        if e[0] == "good":
            checks.check(f"{label}: status 200 with a response and no problem",
                         d.get("status") == 200 and isinstance(d.get("response"), dict) and "problem" not in d,
                         json.dumps(d)[:200])
            given = e[1]
            if given is not None:
                checks.check(f"{label}: id {given!r} echoed", d.get("id") == given and type(d.get("id")) is type(given),
                             f"got {d.get('id')!r}")
            else:
                checks.check(f"{label}: no id when none was given", "id" not in d, f"got {d.get('id')!r}")
            # A full response: the same document POST /v1/fit answers for this line.
            single = http("POST", server, "/v1/fit", data=BATCH[i][0].encode(), headers={"Content-Type": "application/json"})
            single_doc = json_of(single) if is_response(single) and single.status_code == 200 else None
            response = d.get("response")
            diff = harness.strict_diff(harness.without_id(response), harness.without_id(single_doc)) \
                if isinstance(response, dict) and single_doc is not None else "missing"
            checks.check(f"{label}: the full response, the same document as POST /v1/fit", diff is None, diff or "")
            if isinstance(response, dict):
                schema.check(checks, f"{label}: response matches the OpenAPI fit response schema", response,
                             "/v1/fit", "post", 200, "application/json")
        else:
            _, status, pointer, given = e
            problem = d.get("problem")
            checks.check(f"{label}: status {status} with a problem and no response",
                         d.get("status") == status and isinstance(problem, dict) and "response" not in d,
                         json.dumps(d)[:200])
            issues = problem_issues(problem, d.get("status"))
            checks.check(f"{label}: problem has type, title, status (= the line's), detail", not issues, "; ".join(issues))
            if pointer is not None and isinstance(problem, dict):
                checks.check(f"{label}: problem pointer {pointer!r}", problem.get("pointer") == pointer,
                             f"got {problem.get('pointer')!r}")
            if given is not None:
                checks.check(f"{label}: id {given!r} echoed on a problem line too", d.get("id") == given,
                             f"got {d.get('id')!r}")
            if isinstance(problem, dict):
                schema.check(checks, f"{label}: problem matches the OpenAPI problem schema", problem,
                             "/v1/fit", "post", status, "application/problem+json")
        schema.check(checks, f"{label}: the line matches the OpenAPI batch line schema", d, "/v1/fit/batch", "post",
                     200, NDJSON)


def line_endings(server):
    # No newline after the last line, and CRLF line ends: the same lines.
    lines = [C(small(5000, 11)), C(small(5500, 12)), C(small(6000, 13))]
    for label, body in (("no final newline", "\n".join(lines)), ("CRLF line ends", "\r\n".join(lines) + "\r\n")):
        r = http("POST", server, "/v1/fit/batch", data=body.encode(), headers={"Content-Type": NDJSON}, timeout=60)
        docs = []
        if is_response(r) and r.status_code == 200:
            for text in r.text.split("\n"):
                if text.strip():
                    try:
                        docs.append(json.loads(text))
                    except json.JSONDecodeError:
                        docs.append(None)
        checks.check(f"batch with {label}: three 200 lines, index 0, 1, 2",
                     [(d or {}).get("index") for d in docs] == [0, 1, 2]
                     and all((d or {}).get("status") == 200 for d in docs), describe(r, 200))


def streaming(server):
    # Three quick lines, then a slow one (200000 points with a Cauchy loss: the robust path).
    slow = harness.planck_spectrum(200000, temperature=5200.0, seed=21)
    slow["options"] = {"loss": {"kind": "cauchy", "scale": 2.0}}
    slow_line = C(slow)
    quick = [C(small(5000 + 500 * k, 30 + k)) for k in range(3)]
    body = ("\n".join(quick + [slow_line]) + "\n").encode()
    checks.note(f"streaming batch: {len(body)} bytes, the last line has 200000 points")
    t0 = time.monotonic()
    r = http("POST", server, "/v1/fit/batch", data=body, headers={"Content-Type": NDJSON}, stream=True, timeout=120)
    ok = is_response(r) and r.status_code == 200
    checks.check("streaming batch: 200", ok, describe(r) if not ok else "")
    if not ok:
        return
    lines, error = read_stream(r, chunk_size=16)
    checks.check("streaming batch: the stream ends cleanly with four lines", error is None and len(lines) == 4,
                 error or f"{len(lines)} lines")
    if len(lines) < 2:
        return
    first, last = lines[0][0] - t0, lines[-1][0] - t0
    checks.check("streaming batch: the first line arrives before the slow last line is computed (>= 0.3 s earlier)",
                 last - first >= 0.3, f"first after {first:.3f} s, last after {last:.3f} s")
    try:
        final = json.loads(lines[-1][1])
    except json.JSONDecodeError:
        final = {}
    checks.check("streaming batch: the slow line is a 200 response with index 3",
                 final.get("index") == 3 and final.get("status") == 200, json.dumps(final)[:200])


def limits(binary):
    server = Server(binary, ["--max-batch-lines", "5", "--max-body-bytes", "200000"], name="server (batch limit 5)")
    if not server.start(checks):
        return
    five = "\n".join(C(small(5000 + k, 40 + k)) for k in range(5)) + "\n"
    r = http("POST", server, "/v1/fit/batch", data=five.encode(), headers={"Content-Type": NDJSON}, timeout=60)
    n = len([t for t in r.text.split("\n") if t.strip()]) if is_response(r) else 0
    checks.check("batch of exactly --max-batch-lines (5) lines: 200 with five lines",
                 is_response(r) and r.status_code == 200 and n == 5, describe(r, 120))
    six = five + C(small(6000, 50)) + "\n"
    r = http("POST", server, "/v1/fit/batch", data=six.encode(), headers={"Content-Type": NDJSON}, timeout=60)
    doc = harness.check_problem(checks, "batch of 6 lines over --max-batch-lines 5", r, status=413, schema=None)
    if doc is not None:
        checks.check("batch over the line limit: type /problems/payload-too-large",
                     doc.get("type") == "/problems/payload-too-large", doc.get("type"))
        checks.check("batch over the line limit: nothing streamed (the body is the one problem document)",
                     harness.json_of(r) is not None and '"index"' not in r.text, r.text[:200])
        schema.check(checks, "batch over the line limit: problem matches the OpenAPI schema", doc, "/v1/fit/batch",
                     "post", 413, "application/problem+json")
    big = "\n".join(C(small(5000, 60 + k, n=2000)) for k in range(4)) + "\n"
    assert len(big) > 200000, len(big)
    r = http("POST", server, "/v1/fit/batch", data=big.encode(), headers={"Content-Type": NDJSON}, timeout=60)
    checks.note(f"batch body of {len(big)} bytes against --max-body-bytes 200000")
    harness.check_problem(checks, "batch body over --max-body-bytes", r, status=413)
    r = http("POST", server, "/v1/fit/batch", data=five.encode(), headers={"Content-Type": "application/json"}, timeout=60)
    harness.check_problem(checks, "batch sent as application/json", r, status=415)
    r = http("GET", server, "/v1/fit/batch", timeout=30)
    doc = harness.check_problem(checks, "GET /v1/fit/batch", r, status=405)
    if is_response(r):
        checks.check("GET /v1/fit/batch: Allow names POST", "POST" in r.headers.get("Allow", ""),
                     r.headers.get("Allow"))
    server.stop(checks)


def main():
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    mixed_batch(server)
    line_endings(server)
    streaming(server)
    r = http("GET", server, "/v1/health", timeout=10)
    checks.check("the server still answers after the batches", is_response(r) and r.status_code == 200, describe(r, 80))
    server.stop(checks)
    limits(args.server)


harness.crash_guard(checks, main)
