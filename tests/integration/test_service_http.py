"""The service around the fits: API keys (PLANCKTON_API_KEYS and --api-keys-file), CORS, /metrics
(Prometheus text exposition format 0.0.4), the access log, the per-fit time budget and graceful
shutdown on SIGTERM (a streaming batch in flight finishes, exit code 0)."""
import json
import os
import re
import signal
import tempfile
import threading
import time

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import (Checks, OpenAPI, Server, check_problem, describe, fresh_http, http, is_response, json_of,
                     media_type, metric_value)

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)

GOOD = harness.planck_spectrum(30, temperature=5000.0, seed=7)
GOOD_TEXT = harness.compact(GOOD).encode()
JSON_CT = {"Content-Type": "application/json"}
NDJSON_CT = {"Content-Type": "application/x-ndjson"}

# Invented test keys; they must never show up in any stderr line of the server.
ENV_KEYS = ["alpha-key-7Qx2pLm0", "beta-key-9Zr4wTn3"]
FILE_KEYS = ["file-key-Kd83vBq1", "file-key-Lm51cXe6"]
COMMENTED_KEY = "commented-key-Zz00aa"
WRONG_KEY = "wrong-key-Hh11gg"


def bearer(key):
    return {"Authorization": f"Bearer {key}"}


def keys_in_stderr(server, keys):
    lines = server.stderr_lines() + [json.dumps(server.listening or {})]
    return [k for k in keys if any(k in line for line in lines)]


# ---- API keys ------------------------------------------------------------------------------

def auth_checks(server, label, good_keys, bad_keys):
    # The plan shows "auth": "off" for an open service; any other value says keys are required.
    checks.check(f"{label}: the listening line says auth is not off",
                 (server.listening or {}).get("auth") not in (None, "off"), server.listening)
    r_none = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers=JSON_CT)
    doc_none = check_problem(checks, f"{label}: POST /v1/fit without a key", r_none, status=401)
    if is_response(r_none):
        checks.check(f"{label}: 401 carries WWW-Authenticate: Bearer",
                     r_none.headers.get("WWW-Authenticate", "").split(" ")[0].lower() == "bearer",
                     r_none.headers.get("WWW-Authenticate"))
    if doc_none is not None:
        schema.check(checks, f"{label}: 401 problem matches the OpenAPI schema", doc_none, "/v1/fit", "post", 401,
                     "application/problem+json", fallback="Problem")
    for bad in bad_keys:
        r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, **bearer(bad)})
        doc = check_problem(checks, f"{label}: POST /v1/fit with key {bad!r}", r, status=401)
        if doc is not None and doc_none is not None:
            checks.check(f"{label}: 401 for key {bad!r} says no more than 401 without a key (same document)",
                         doc == doc_none, f"{doc} vs {doc_none}")
        if is_response(r):
            leaked = [k for k in good_keys + [bad] if k in r.text or k in str(r.headers)]
            checks.check(f"{label}: 401 for key {bad!r} names no key", not leaked, leaked)
    for scheme, key in (("Basic", good_keys[0]), ("Token", good_keys[0])):
        r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, "Authorization": f"{scheme} {key}"})
        checks.check(f"{label}: a right key under the {scheme} scheme is refused (401)",
                     is_response(r) and r.status_code == 401, describe(r, 100))
    r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, **bearer(good_keys[0] + "x")})
    checks.check(f"{label}: a right key with an extra character is refused (401)",
                 is_response(r) and r.status_code == 401, describe(r, 100))
    r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, **bearer(good_keys[0][:-1])})
    checks.check(f"{label}: a prefix of a right key is refused (401)", is_response(r) and r.status_code == 401,
                 describe(r, 100))
    for key in good_keys:
        r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, **bearer(key)})
        checks.check(f"{label}: POST /v1/fit with key {key!r} answers 200", is_response(r) and r.status_code == 200,
                     describe(r, 100))
    # RFC 9110 section 11.1: the authentication scheme name is case-insensitive.
    r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, "Authorization": f"bearer {good_keys[0]}"})
    checks.check(f"{label}: 'bearer' in lower case works too (RFC 9110 section 11.1)",
                 is_response(r) and r.status_code == 200, describe(r, 100))
    r = fresh_http("GET", server, "/v1/health")
    checks.check(f"{label}: GET /v1/health is open (200 without a key)", is_response(r) and r.status_code == 200,
                 describe(r, 100))
    for method, path, body, headers in (("GET", "/v1/models", None, {}), ("GET", "/v1/units", None, {}),
                                        ("GET", "/metrics", None, {}), ("GET", "/openapi.yaml", None, {}),
                                        ("POST", "/v1/fit/batch", GOOD_TEXT + b"\n", NDJSON_CT),
                                        ("POST", "/v1/fit?x_unit=nm&y_unit=Jy", b"400,1\n500,2\n600,1\n",
                                         {"Content-Type": "text/csv"})):
        r = fresh_http(method, server, path, data=body, headers=headers)
        checks.check(f"{label}: {method} {path.split('?')[0]} without a key is 401",
                     is_response(r) and r.status_code == 401 and media_type(r) == harness.PROBLEM_TYPE, describe(r, 100))
        r = fresh_http(method, server, path, data=body, headers={**headers, **bearer(good_keys[-1])})
        checks.check(f"{label}: {method} {path.split('?')[0]} with a key is 200", is_response(r) and r.status_code == 200,
                     describe(r, 100))
    log = server.wait_for_log(20)
    checks.check(f"{label}: the access log logs the 401 answers", any(d.get("status") == 401 for d in log),
                 f"{len(log)} lines")
    leaked = keys_in_stderr(server, good_keys + bad_keys)
    checks.check(f"{label}: no key appears in the access log or any stderr line", not leaked, leaked)
    checks.check(f"{label}: the access log has no Authorization header value",
                 not any("Bearer" in line or "authorization" in line.lower() for line in server.stderr_lines()),
                 [line for line in server.stderr_lines() if "Bearer" in line][:2])


def keep_alive_after_early_answers(server, label, first, rounds=40):
    """A request answered before its body is used (401, 404, 405) must leave the keep-alive
    connection usable: the next request on it is answered normally (RFC 9112 section 9.3: a
    server that does not read the body must close the connection, or read and discard it)."""
    method, path, headers = first
    failures = []
    with harness.session() as s:
        for i in range(rounds):
            try:
                s.request(method, server.url(path), data=GOOD_TEXT, headers={**JSON_CT, **headers}, timeout=5)
                r = s.get(server.url("/v1/health"), timeout=5)
                if r.status_code != 200:
                    failures.append(f"round {i}: {r.status_code} {r.text[:80]}")
            except Exception as e:  # noqa: BLE001
                failures.append(f"round {i}: {type(e).__name__}")
    checks.check(f"{label}: after {rounds} x {method} {path} with a body, the next request on the same connection "
                 f"is answered 200", not failures, f"{len(failures)} of {rounds} failed: {failures[:3]}")


def pipelined_after_early_answer(server, label, method, path, headers=b""):
    """The same on a raw socket, deterministic: headers, then the body, then the next request,
    each written apart; the server must answer both requests, the second with 200."""
    import socket
    body = GOOD_TEXT
    head = (f"{method} {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
            f"Content-Length: {len(body)}\r\n").encode() + headers + b"\r\n"
    follow = b"GET /v1/health HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n"
    data = b""
    try:
        with socket.create_connection(("127.0.0.1", server.port), timeout=5) as s:
            s.settimeout(5)
            for part in (head, body, follow):
                s.sendall(part)
                time.sleep(0.2)
            for _ in range(100):  # bounded: at most 100 reads
                chunk = s.recv(65536)
                if not chunk:
                    break
                data += chunk
    except OSError as e:
        data += f" <{type(e).__name__}>".encode()
    statuses = re.findall(rb"HTTP/1\.1 (\d{3})", data)
    closes = b"connection: close" in data.split(b"\r\n\r\n")[0].lower()
    # RFC 9112 section 9.6: after a response with "Connection: close" the server closes the
    # connection and answers nothing more on it.
    ok = (len(statuses) == 2 and statuses[1] == b"200" and not closes) or (len(statuses) == 1 and closes)
    checks.check(f"{label}: {method} {path} with a body, then GET /v1/health on the same connection: "
                 f"the second is answered 200, or the first says Connection: close and nothing more is answered "
                 f"(RFC 9112 section 9.6)", ok,
                 f"statuses {[x.decode() for x in statuses]}, first says close: {closes}, {data[-160:]!r}")


def api_keys():
    server = Server(args.server, env={"PLANCKTON_API_KEYS": ",".join(ENV_KEYS)}, name="server (PLANCKTON_API_KEYS)")
    if server.start(checks):
        auth_checks(server, "env keys", ENV_KEYS, [WRONG_KEY, FILE_KEYS[0]])
        keep_alive_after_early_answers(server, "keep-alive after 401", ("POST", "/v1/fit", {}))
        pipelined_after_early_answer(server, "keep-alive after 401 (raw socket)", "POST", "/v1/fit")
        server.stop(checks)

    with tempfile.NamedTemporaryFile("w", suffix=".keys", delete=False) as f:
        f.write(f"# planckton test keys (invented)\n\n{FILE_KEYS[0]}\n   # an indented comment\n"
                f"{FILE_KEYS[1]}\n#{COMMENTED_KEY}\n")
        keys_file = f.name
    try:
        server = Server(args.server, ["--api-keys-file", keys_file], name="server (--api-keys-file)")
        if server.start(checks):
            auth_checks(server, "file keys", FILE_KEYS, [WRONG_KEY, COMMENTED_KEY, ENV_KEYS[0], "#" + COMMENTED_KEY])
            server.stop(checks)
        server = Server(args.server, env={"PLANCKTON_API_KEYS_FILE": keys_file}, name="server (PLANCKTON_API_KEYS_FILE)")
        if server.start(checks):
            checks.check("PLANCKTON_API_KEYS_FILE: auth is not off",
                         (server.listening or {}).get("auth") not in (None, "off"), server.listening)
            r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers=JSON_CT)
            checks.check("PLANCKTON_API_KEYS_FILE: no key is 401", is_response(r) and r.status_code == 401, describe(r, 80))
            r = fresh_http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, **bearer(FILE_KEYS[1])})
            checks.check("PLANCKTON_API_KEYS_FILE: a key of the file is 200", is_response(r) and r.status_code == 200,
                         describe(r, 80))
            server.stop(checks)
    finally:
        os.unlink(keys_file)

    server = Server(args.server, name="server (no keys)")
    if server.start(checks):
        checks.check("no keys: the listening line says auth off", (server.listening or {}).get("auth") == "off",
                     server.listening)
        for method, path, body, headers in (("POST", "/v1/fit", GOOD_TEXT, JSON_CT), ("GET", "/metrics", None, {}),
                                            ("GET", "/v1/models", None, {})):
            r = http(method, server, path, data=body, headers=headers)
            checks.check(f"no keys: {method} {path} open (200)", is_response(r) and r.status_code == 200, describe(r, 80))
        r = http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, **bearer(WRONG_KEY)})
        checks.check("no keys: an Authorization header is ignored (200)", is_response(r) and r.status_code == 200,
                     describe(r, 80))
        keep_alive_after_early_answers(server, "keep-alive after 404", ("POST", "/v1/nothing", {}))
        keep_alive_after_early_answers(server, "keep-alive after 405", ("PUT", "/v1/fit", {}))
        pipelined_after_early_answer(server, "keep-alive after 404 (raw socket)", "POST", "/v1/nothing")
        pipelined_after_early_answer(server, "keep-alive after 405 (raw socket)", "PUT", "/v1/fit")
        pipelined_after_early_answer(server, "keep-alive after 200 (raw socket, control)", "POST", "/v1/fit")
        server.stop(checks)


# ---- CORS ------------------------------------------------------------------------------------

ALLOWED = "https://app.example.org"
OTHER = "https://elsewhere.example.net"


def preflight(server, origin, headers="content-type"):
    return http("OPTIONS", server, "/v1/fit", headers={"Origin": origin, "Access-Control-Request-Method": "POST",
                                                       "Access-Control-Request-Headers": headers})


def acao(r):
    return r.headers.get("Access-Control-Allow-Origin") if is_response(r) else "(no response)"


def cors():
    server = Server(args.server, name="server (CORS off)")
    if server.start(checks):
        r = http("GET", server, "/v1/health", headers={"Origin": ALLOWED})
        checks.check("CORS off by default: GET with an Origin has no Access-Control-Allow-Origin",
                     is_response(r) and r.status_code == 200 and acao(r) is None, acao(r))
        r = http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, "Origin": ALLOWED})
        checks.check("CORS off by default: POST /v1/fit with an Origin has no Access-Control-Allow-Origin",
                     is_response(r) and r.status_code == 200 and acao(r) is None, acao(r))
        r = preflight(server, ALLOWED)
        checks.check("CORS off by default: a preflight gets no Access-Control-Allow-Origin and is not 5xx",
                     is_response(r) and r.status_code < 500 and acao(r) is None, describe(r, 100))
        server.stop(checks)

    server = Server(args.server, ["--cors-origin", ALLOWED], name="server (--cors-origin)")
    if server.start(checks):
        for method, path, body, headers in (("GET", "/v1/health", None, {}), ("POST", "/v1/fit", GOOD_TEXT, JSON_CT)):
            r = http(method, server, path, data=body, headers={**headers, "Origin": ALLOWED})
            checks.check(f"--cors-origin: {method} {path} from the allowed origin has Access-Control-Allow-Origin: {ALLOWED}",
                         is_response(r) and r.status_code == 200 and acao(r) == ALLOWED, acao(r))
            r = http(method, server, path, data=body, headers={**headers, "Origin": OTHER})
            checks.check(f"--cors-origin: {method} {path} from another origin has no Access-Control-Allow-Origin",
                         is_response(r) and r.status_code == 200 and acao(r) is None, acao(r))
        r = http("POST", server, "/v1/fit", data=b"{", headers={**JSON_CT, "Origin": ALLOWED})
        checks.check("--cors-origin: a problem answer to the allowed origin carries Access-Control-Allow-Origin too",
                     is_response(r) and r.status_code == 400 and acao(r) == ALLOWED, acao(r))
        r = preflight(server, ALLOWED)
        ok = is_response(r) and r.status_code in (200, 204)
        checks.check("--cors-origin: a preflight from the allowed origin answers 200/204", ok, describe(r, 100))
        if ok:
            checks.check("--cors-origin: the preflight allows the origin", acao(r) == ALLOWED, acao(r))
            methods = [m.strip().upper() for m in r.headers.get("Access-Control-Allow-Methods", "").split(",")]
            checks.check("--cors-origin: the preflight allows POST", "POST" in methods,
                         r.headers.get("Access-Control-Allow-Methods"))
            allowed_headers = [h.strip().lower() for h in r.headers.get("Access-Control-Allow-Headers", "").split(",")]
            checks.check("--cors-origin: the preflight allows the Content-Type header",
                         "content-type" in allowed_headers or "*" in allowed_headers,
                         r.headers.get("Access-Control-Allow-Headers"))
            if "origin" not in r.headers.get("Vary", "").lower():
                checks.note("the CORS answers carry no 'Vary: Origin' (not in the plan; caches may mix origins)")
        r = preflight(server, OTHER)
        checks.check("--cors-origin: a preflight from another origin gets no Access-Control-Allow-Origin",
                     is_response(r) and r.status_code < 500 and acao(r) is None, describe(r, 100))
        server.stop(checks)

    two = ["https://one.example.org", "https://two.example.org"]
    server = Server(args.server, env={"PLANCKTON_CORS_ORIGINS": ",".join(two)}, name="server (PLANCKTON_CORS_ORIGINS)")
    if server.start(checks):
        for origin in two:
            r = http("GET", server, "/v1/health", headers={"Origin": origin})
            checks.check(f"PLANCKTON_CORS_ORIGINS: {origin} allowed", acao(r) == origin, acao(r))
        r = http("GET", server, "/v1/health", headers={"Origin": "https://three.example.org"})
        checks.check("PLANCKTON_CORS_ORIGINS: an unlisted origin gets no Access-Control-Allow-Origin", acao(r) is None,
                     acao(r))
        server.stop(checks)

    server = Server(args.server, ["--cors-origin", ALLOWED], env={"PLANCKTON_API_KEYS": ENV_KEYS[0]},
                    name="server (CORS and keys)")
    if server.start(checks):
        # Fetch standard: a CORS preflight never carries credentials, so it cannot need the key.
        r = preflight(server, ALLOWED, headers="authorization, content-type")
        checks.check("CORS with keys: a preflight without a key answers 200/204 with the origin allowed",
                     is_response(r) and r.status_code in (200, 204) and acao(r) == ALLOWED, describe(r, 120))
        if is_response(r):
            allowed_headers = [h.strip().lower() for h in r.headers.get("Access-Control-Allow-Headers", "").split(",")]
            checks.check("CORS with keys: the preflight allows the Authorization header", "authorization" in allowed_headers,
                         r.headers.get("Access-Control-Allow-Headers"))
        r = http("POST", server, "/v1/fit", data=GOOD_TEXT, headers={**JSON_CT, "Origin": ALLOWED, **bearer(ENV_KEYS[0])})
        checks.check("CORS with keys: POST with the key from the allowed origin is 200 with the origin allowed",
                     is_response(r) and r.status_code == 200 and acao(r) == ALLOWED, describe(r, 80))
        server.stop(checks)


# ---- metrics ---------------------------------------------------------------------------------

def metrics():
    server = Server(args.server, name="server (metrics)")
    if not server.start(checks):
        return
    parsed, r = harness.fetch_metrics(server)
    checks.check("GET /metrics: 200", parsed is not None, describe(r, 100))
    if parsed is None:
        server.stop(checks)
        return
    checks.check("GET /metrics: Content-Type text/plain; version=0.0.4 (Prometheus text format 0.0.4)",
                 media_type(r) == "text/plain" and "version=0.0.4" in r.headers.get("Content-Type", "").replace(" ", ""),
                 r.headers.get("Content-Type"))
    samples0, types0, errors0 = parsed
    checks.check("GET /metrics: every line parses as the Prometheus text format 0.0.4", not errors0, errors0[:3])

    n = 5
    for k in range(n):
        doc = harness.planck_spectrum(30, temperature=4000.0 + 300 * k, seed=100 + k)
        r = http("POST", server, "/v1/fit", data=harness.compact(doc).encode(), headers=JSON_CT)
        if not (is_response(r) and r.status_code == 200):
            checks.check(f"metrics: fit {k} answers 200", False, describe(r, 100))
    bad = json.loads(GOOD_TEXT)
    bad["spectrum"]["x_unit"] = "furlong"
    for _ in range(2):
        http("POST", server, "/v1/fit", data=harness.compact(bad).encode(), headers=JSON_CT)
    http("GET", server, "/v1/nothing-7781234")
    parsed, r = harness.fetch_metrics(server)
    if parsed is None:
        checks.check("GET /metrics again: 200", False, describe(r, 100))
        server.stop(checks)
        return
    samples1, types1, errors1 = parsed
    checks.check("GET /metrics again: parses", not errors1, errors1[:3])

    def delta(name, **labels):
        return metric_value(samples1, name, **labels) - metric_value(samples0, name, **labels)

    d = delta("planckton_http_requests_total", route="/v1/fit", status="200")
    checks.check(f"after {n} fits planckton_http_requests_total{{route=\"/v1/fit\",status=\"200\"}} rose by {n}", d == n,
                 f"rose by {d}")
    d = delta("planckton_http_requests_total", route="/v1/fit", status="422")
    checks.check("after 2 invalid fits planckton_http_requests_total{route=\"/v1/fit\",status=\"422\"} rose by 2", d == 2,
                 f"rose by {d}")
    d = delta("planckton_fits_total", model="planck")
    checks.check(f"planckton_fits_total{{model=\"planck\"}} rose by {n} (the successful fits)", d == n, f"rose by {d}")
    d = delta("planckton_fits_failed_total", reason="invalid_input")
    checks.check("planckton_fits_failed_total{reason=\"invalid_input\"} rose by 2", d == 2, f"rose by {d}")
    for name, kind in (("planckton_http_requests_total", "counter"), ("planckton_fits_total", "counter"),
                       ("planckton_fits_failed_total", "counter"),
                       ("planckton_http_request_duration_seconds", "histogram")):
        checks.check(f"# TYPE {name} {kind}", types1.get(name) == kind, f"got {types1.get(name)!r}")
    # The histogram of /v1/fit: cumulative buckets ending in +Inf = _count, and _sum.
    h = "planckton_http_request_duration_seconds"
    buckets = sorted(((float(l["le"]) if l.get("le") != "+Inf" else float("inf"), v)
                      for name, l, v in samples1 if name == h + "_bucket" and l.get("route") == "/v1/fit"))
    count = metric_value(samples1, h + "_count", route="/v1/fit")
    total = metric_value(samples1, h + "_sum", route="/v1/fit")
    checks.check("histogram: /v1/fit has buckets with an +Inf bucket", len(buckets) >= 2 and buckets[-1][0] == float("inf"),
                 buckets[:3])
    checks.check("histogram: buckets are cumulative (non-decreasing)",
                 all(a[1] <= b[1] for a, b in zip(buckets, buckets[1:])), buckets)
    checks.check("histogram: the +Inf bucket equals _count", bool(buckets) and buckets[-1][1] == count,
                 f"+Inf {buckets[-1][1] if buckets else None}, _count {count}")
    dc = count - metric_value(samples0, h + "_count", route="/v1/fit")
    checks.check(f"histogram: _count of /v1/fit rose by the {n + 2} requests to it", dc == n + 2, f"rose by {dc}")
    checks.check("histogram: _sum of /v1/fit is positive", total > 0, total)
    labels = [v for _, l, _ in samples1 for v in l.values()]
    checks.check("an unknown path does not become a label value (bounded label values, Prometheus practice)",
                 not any("nothing-7781234" in v for v in labels), [v for v in labels if "nothing" in v][:3])

    # Time budget: a non-converged fit is counted.
    budget_doc = big_spectrum(time_budget=0.001)
    r = http("POST", server, "/v1/fit", data=budget_doc, headers=JSON_CT, timeout=120)
    doc = json_of(r)
    outcome = (r.status_code, doc.get("status") if isinstance(doc, dict) else None) if is_response(r) else None
    parsed, _ = harness.fetch_metrics(server)
    if parsed is not None and outcome is not None:
        samples2 = parsed[0]
        d = metric_value(samples2, "planckton_fits_failed_total", reason="not_converged") - \
            metric_value(samples1, "planckton_fits_failed_total", reason="not_converged")
        if outcome[0] == 200 and outcome[1] == "converged":
            checks.note("the tiny time budget fit converged; not_converged counter not checkable")
        else:
            checks.check("planckton_fits_failed_total{reason=\"not_converged\"} rose by 1 after a cut-off fit", d == 1,
                         f"rose by {d} (answer {outcome})")
    server.stop(checks)


# ---- access log ------------------------------------------------------------------------------

TIME_RE = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?Z$")  # RFC 3339 / ISO 8601 in UTC


def access_log():
    server = Server(args.server, name="server (access log)")
    if not server.start(checks):
        return
    marker = "zzbodymarker4417"
    bad = json.loads(GOOD_TEXT)
    bad["spectrum"]["x_unit"] = marker
    bad_body = harness.compact(bad).encode()
    csv = b"# " + marker.encode() + b"\nx,y\n400,1e-12\n500,1.2e-12\n600,1e-12\n"
    sent = [("POST", "/v1/fit", GOOD_TEXT, JSON_CT, 200),
            ("POST", "/v1/fit", bad_body, JSON_CT, 422),
            ("POST", "/v1/fit?x_unit=nm&y_unit=W/m2/nm", csv, {"Content-Type": "text/csv"}, 200),
            ("GET", "/v1/health", None, {}, 200),
            ("GET", "/v1/nothing", None, {}, 404),
            ("POST", "/v1/fit/batch", GOOD_TEXT + b"\n" + bad_body + b"\n", NDJSON_CT, 200)]
    answers = []
    for method, path, body, headers, _ in sent:
        # Accept-Encoding: identity, so the body received is the body sent (no gzip in between).
        answers.append(http(method, server, path, data=body, headers={**headers, "Accept-Encoding": "identity"}))
    log = server.wait_for_log(len(sent))
    time.sleep(0.5)
    log = server.access_log()
    checks.check(f"access log: one line per request ({len(sent)})", len(log) == len(sent), f"{len(log)} lines")
    all_json = all(_parses(line) and isinstance(json.loads(line), dict) for line in server.stderr_lines() if line.strip())
    checks.check("access log: every stderr line is one JSON object", all_json,
                 [line[:100] for line in server.stderr_lines() if not _parses(line)][:2])
    for (method, path, body, _, status), entry, answer in zip(sent, log, answers):
        label = f"access log: {method} {path.split('?')[0]} ({status})"
        want = {"event", "time", "method", "path", "status", "duration_ms", "request_bytes", "response_bytes", "remote"}
        missing = sorted(want - set(entry))
        checks.check(f"{label}: has every member of the plan", not missing, f"missing {missing}")
        checks.check(f"{label}: method, path and status match", entry.get("method") == method and
                     entry.get("path") == path.split("?")[0] and entry.get("status") == status,
                     {k: entry.get(k) for k in ("method", "path", "status")})
        checks.check(f"{label}: time is RFC 3339 UTC", isinstance(entry.get("time"), str) and TIME_RE.match(entry["time"]),
                     entry.get("time"))
        checks.check(f"{label}: duration_ms is a non-negative number",
                     isinstance(entry.get("duration_ms"), (int, float)) and entry["duration_ms"] >= 0, entry.get("duration_ms"))
        checks.check(f"{label}: remote is 127.0.0.1", entry.get("remote") == "127.0.0.1", entry.get("remote"))
        checks.check(f"{label}: request_bytes is the body length", entry.get("request_bytes") == len(body or b""),
                     f"{entry.get('request_bytes')} vs {len(body or b'')}")
        if is_response(answer):
            checks.check(f"{label}: response_bytes is the answer's length",
                         entry.get("response_bytes") == len(answer.content),
                         f"{entry.get('response_bytes')} vs {len(answer.content)}")
    leaked = [line[:120] for line in server.stderr_lines() if marker in line]
    checks.check("access log: no request or response body content in any stderr line", not leaked, leaked[:2])

    # Concurrent requests: a slow fit's duration is its own, not disturbed by quick requests meanwhile.
    before = len(server.access_log())
    slow_body = big_spectrum()
    result = {}

    def slow():
        t0 = time.monotonic()
        result["r"] = fresh_http("POST", server, "/v1/fit", data=slow_body, headers=JSON_CT, timeout=120)
        result["elapsed"] = time.monotonic() - t0

    worker = threading.Thread(target=slow, daemon=True)
    worker.start()
    time.sleep(0.8)
    for _ in range(3):
        fresh_http("GET", server, "/v1/health", timeout=10)
    worker.join(timeout=130)
    log = server.wait_for_log(before + 4)
    slow_entries = [e for e in log[before:] if e.get("path") == "/v1/fit"]
    elapsed = result.get("elapsed", 0)
    logged = slow_entries[0].get("duration_ms", 0) / 1000 if slow_entries else None
    checks.check("access log: a slow fit's duration_ms stays its own while quick requests run meanwhile "
                 "(at least half the time the client waited)",
                 logged is not None and isinstance(logged, (int, float)) and logged >= 0.5 * elapsed,
                 f"logged {logged} s, client waited {elapsed:.2f} s")
    server.stop(checks)


def _parses(line):
    try:
        json.loads(line)
        return True
    except json.JSONDecodeError:
        return False


# ---- time budget -----------------------------------------------------------------------------

_BIG = {}


def big_spectrum(time_budget=None, n=200000):
    if n not in _BIG:
        doc = harness.planck_spectrum(n, temperature=5200.0, seed=9)
        doc["options"] = {"loss": {"kind": "cauchy", "scale": 2.0}}
        _BIG[n] = doc
    doc = json.loads(json.dumps(_BIG[n]))
    if time_budget is not None:
        doc["options"]["time_budget_seconds"] = time_budget
    return harness.compact(doc).encode()


def cut_off(label, r, elapsed, bound):
    ok_time = elapsed < bound
    checks.check(f"{label}: answered within {bound} s (no hang)", is_response(r) and ok_time,
                 f"{elapsed:.2f} s, {describe(r, 80)}")
    if not is_response(r):
        return
    doc = json_of(r)
    if r.status_code == 200:
        checks.check(f"{label}: 200 with a status other than converged", isinstance(doc, dict)
                     and doc.get("status") not in (None, "converged"), f"status {doc.get('status') if doc else None}")
        if isinstance(doc, dict) and doc.get("status") != "converged":
            schema.check(checks, f"{label}: response matches the OpenAPI schema", doc, "/v1/fit", "post", 200,
                         "application/json")
    else:
        checks.check(f"{label}: or a 422 problem", r.status_code == 422 and media_type(r) == harness.PROBLEM_TYPE,
                     describe(r, 200))


def time_budget():
    server = Server(args.server, name="server (time budget)")
    if server.start(checks):
        body = big_spectrum(time_budget=0.001)
        t0 = time.monotonic()
        r = http("POST", server, "/v1/fit", data=body, headers=JSON_CT, timeout=120)
        cut_off("time_budget_seconds 0.001 on 200000 points", r, time.monotonic() - t0, 60)
        t0 = time.monotonic()
        r = http("POST", server, "/v1/fit", data=big_spectrum(), headers=JSON_CT, timeout=120)
        elapsed = time.monotonic() - t0
        doc = json_of(r)
        checks.check("the same spectrum without a budget converges (control)", is_response(r) and r.status_code == 200
                     and isinstance(doc, dict) and doc.get("status") == "converged",
                     f"{elapsed:.2f} s, {describe(r, 120)}")
        server.stop(checks)
    server = Server(args.server, ["--time-budget", "0.001"], name="server (--time-budget 0.001)")
    if server.start(checks):
        t0 = time.monotonic()
        r = http("POST", server, "/v1/fit", data=big_spectrum(time_budget=100), headers=JSON_CT, timeout=120)
        cut_off("--time-budget 0.001 and a request asking for 100 s (never more)", r, time.monotonic() - t0, 60)
        t0 = time.monotonic()
        r = http("POST", server, "/v1/fit", data=big_spectrum(), headers=JSON_CT, timeout=120)
        cut_off("--time-budget 0.001 and a request asking for nothing", r, time.monotonic() - t0, 60)
        server.stop(checks)


# ---- graceful shutdown -----------------------------------------------------------------------

def shutdown():
    n_lines, points = 30, 20000
    base = [harness.planck_spectrum(points, temperature=4500.0 + 250 * k, seed=200 + k) for k in range(3)]
    lines = []
    for i in range(n_lines):
        doc = json.loads(json.dumps(base[i % 3]))
        doc["options"] = {"loss": {"kind": "cauchy", "scale": 2.0}}
        lines.append(harness.compact({"id": f"slow-{i}", **doc}))
    body = ("\n".join(lines) + "\n").encode()
    server = Server(args.server, ["--max-body-bytes", str(4 * len(body)), "--drain-timeout", str(60 * harness.SLOWDOWN)],
                    name="server (shutdown)")
    if not server.start(checks):
        return
    checks.note(f"shutdown batch: {n_lines} lines of {points} points with a Cauchy loss, {len(body)} bytes")
    t0 = time.monotonic()
    r = http("POST", server, "/v1/fit/batch", data=body, headers=NDJSON_CT, stream=True, timeout=120)
    if not (is_response(r) and r.status_code == 200):
        checks.check("shutdown batch: 200", False, describe(r, 200))
        server.stop(checks)
        return
    received, error = [], None
    signalled_at, running_at_signal = None, None
    refused = {}

    def try_new_connection():
        # Until the batch ends the listener stays open and answers 503 with Retry-After; then it
        # closes. How long that takes depends on the machine, so probe until the server is gone.
        deadline = time.monotonic() + 150 * harness.SLOWDOWN
        while time.monotonic() < deadline and "result" not in refused:
            probe = fresh_http("GET", server, "/v1/health", timeout=2)
            if not is_response(probe):
                refused["result"] = f"refused: {type(probe).__name__}"
            elif server.process.poll() is not None:
                break
            else:
                refused.setdefault("answers", []).append((probe.status_code, probe.headers.get("Retry-After")))
            time.sleep(0.2)

    prober = None
    deadline = time.monotonic() + 180 * harness.SLOWDOWN
    try:
        for raw in r.iter_lines(chunk_size=64):
            if time.monotonic() > deadline or len(received) > 10 * n_lines:
                error = f"stopped reading after {len(received)} lines / {180 * harness.SLOWDOWN} s"
                r.close()
                break
            if not raw:
                continue
            received.append(raw.decode("utf-8", errors="replace"))
            if len(received) == 3 and signalled_at is None:
                running_at_signal = server.process.poll() is None
                server.send_signal(signal.SIGTERM)
                signalled_at = time.monotonic() - t0
                prober = threading.Thread(target=try_new_connection, daemon=True)
                prober.start()
    except Exception as e:  # noqa: BLE001
        error = f"{type(e).__name__}: {e}"
    ended = time.monotonic() - t0
    checks.check("shutdown batch: SIGTERM sent mid-stream (server running, 3 of 30 lines received)",
                 signalled_at is not None and running_at_signal, f"at {signalled_at} s")
    checks.check("shutdown batch: the stream ends cleanly after SIGTERM", error is None,
                 f"{error or 'clean end'}; stream ended {ended:.2f} s after the start, SIGTERM at {signalled_at or 0:.2f} s")
    docs = []
    for text in received:
        try:
            docs.append(json.loads(text))
        except json.JSONDecodeError:
            docs.append(None)
    checks.check("shutdown batch: every streamed line is complete JSON", all(isinstance(d, dict) for d in docs),
                 [t[:80] for t, d in zip(received, docs) if not isinstance(d, dict)][:2])
    checks.check(f"shutdown batch: all {n_lines} lines arrive (in-flight work finishes)", len(docs) == n_lines,
                 f"{len(docs)} lines")
    checks.check("shutdown batch: indices 0..29 in order, every line 200 with its id",
                 [(d or {}).get("index") for d in docs] == list(range(n_lines))
                 and all((d or {}).get("status") == 200 and (d or {}).get("id") == f"slow-{i}" for i, d in enumerate(docs)),
                 [((d or {}).get("index"), (d or {}).get("status")) for d in docs][:5])
    if prober:
        prober.join(timeout=160)
    answers = refused.get("answers", [])
    checks.check("after SIGTERM a new connection gets 503 with Retry-After, never a fit, while the batch finishes",
                 all(status == 503 and retry for status, retry in answers),
                 f"{len(answers)} answers, first {answers[:3]}")
    checks.check("after the batch ends the listener closes (new connections refused)",
                 "result" in refused or server.process.poll() is not None, f"{refused.get('result')}")
    code = server.stop(checks)
    stopped_after = False
    events = server.events()
    idx_stop = next((i for i, e in enumerate(events) if e.get("event") == "stopped"), None)
    idx_batch = next((i for i, e in enumerate(events) if e.get("event") == "request" and e.get("path") == "/v1/fit/batch"), None)
    if idx_stop is not None and idx_batch is not None:
        stopped_after = idx_batch < idx_stop
    checks.check("shutdown: the batch's access-log line comes before the 'stopped' event", stopped_after,
                 f"batch line {idx_batch}, stopped {idx_stop}")
    _ = code

    server = Server(args.server, name="server (SIGINT)")
    if server.start(checks):
        http("GET", server, "/v1/health", timeout=10)
        server.stop(checks, sig=signal.SIGINT)


def main():
    if not schema.available:
        checks.note(f"schema checks will not run: {schema.problem}")
    if not os.access(args.server, os.X_OK):
        checks.check("server binary exists", False, args.server)
        return
    api_keys()
    cors()
    metrics()
    access_log()
    time_budget()
    shutdown()


harness.crash_guard(checks, main)
