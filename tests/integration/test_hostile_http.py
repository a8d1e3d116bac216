"""Hostile HTTP on raw sockets, table-driven: framing that lies (a 1 GB Content-Length with a short
body, lengths that are not numbers, two lengths, transfer codings, truncated chunked bodies),
megabytes of header fields, a megabyte request line, broken request lines, 10^7 points, 10^5
nesting levels, and slow clients that send a byte a second. Every case must be answered with a 4xx
application/problem+json document (RFC 9457) within its time bound (an early answer well before the
30 s read timeout), never a 5xx, and a good request on a fresh connection must be answered 200
right after each. Three slow clients (a byte a second for a bounded 12 s) run at once on a server
with --threads 4 while good requests from other connections must still be answered within 2 s;
each slow client holds one worker for as long as it trickles (httplib serves a connection on one
thread), so as many slow clients as workers would make others wait: a limit of the server's design
that this script does not hide by testing it with fewer workers than clients."""
import json
import re
import socket
import sys
import threading
import time

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, Server, describe, is_response, problem_issues

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)

GOOD = harness.planck_spectrum(20, temperature=5000.0, seed=3)
GOOD_TEXT = harness.compact(GOOD).encode()
EARLY = 3.0        # s: an answer that needs no body must come well before the 30 s read timeout
# Reading 10^7 points before refusing them is work in proportion to them: its bound is scaled for
# the instrumented builds (harness.SLOWDOWN), unlike the early answers'.
READ_ALL = 60.0 * harness.SLOWDOWN
GOOD_BOUND = 5.0   # s: the good request after each case (2 workers, one fit of 20 points)
SLOW_SECONDS = 12  # s: how long each slow client trickles its bytes (a byte a second)
MAX_BODY = 16 * 1024 * 1024  # the default --max-body-bytes (README)
BIG_BODY = 400 * 1024 * 1024  # --max-body-bytes of the server that reads 10^7 points


# ---- raw HTTP/1.1 ----------------------------------------------------------------------------

def request_bytes(method, path, headers=(), body=b"", length="auto"):
    """A request as bytes. length: "auto" (Content-Length of the body), None (no Content-Length),
    or the exact header value text to send."""
    lines = [f"{method} {path} HTTP/1.1", "Host: 127.0.0.1"]
    lines += [f"{k}: {v}" for k, v in headers]
    if length == "auto":
        lines.append(f"Content-Length: {len(body)}")
    elif length is not None:
        lines.append(f"Content-Length: {length}")
    return ("\r\n".join(lines) + "\r\n\r\n").encode("latin-1") + body


class Answer:
    def __init__(self):
        self.status = None
        self.headers = {}
        self.body = b""
        self.elapsed = None
        self.interim = []   # 1xx statuses before the final answer
        self.error = None

    def problem(self):
        try:
            return json.loads(self.body.decode("utf-8"))
        except (UnicodeDecodeError, json.JSONDecodeError):
            return None

    def describe(self):
        if self.status is None:
            return f"no answer ({self.error}) after {self.elapsed:.2f} s"
        return (f"HTTP {self.status} {self.headers.get('content-type', '')} after {self.elapsed:.2f} s "
                f"{self.body[:200].decode('utf-8', errors='replace')}")


def exchange(port, parts, bound, pace=0.0, half_close=False, head_request=False):
    """Sends parts (bytes, written in order, each byte `pace` seconds apart when pace > 0) from a
    thread, and reads the first final answer (skipping 1xx) on the same connection, for at most
    `bound` + 2 seconds. The socket is closed afterwards (which frees the server's worker). head_request:
    the answer to a HEAD request has no body whatever its Content-Length says."""
    answer = Answer()
    sock = socket.create_connection(("127.0.0.1", port), timeout=5)
    stop = threading.Event()

    # The sender has its own socket object (the same connection) with a long timeout; the reader's
    # short one must not cut a large body short.
    out = sock.dup()
    out.settimeout(60)

    def send():
        try:
            for part in parts:
                if pace > 0:
                    for i in range(len(part)):
                        if stop.is_set():
                            return
                        out.sendall(part[i:i + 1])
                        time.sleep(pace)
                else:
                    view = memoryview(part)
                    for i in range(0, len(view), 1 << 20):
                        if stop.is_set():
                            return
                        out.sendall(view[i:i + (1 << 20)])
            if half_close:
                out.shutdown(socket.SHUT_WR)
        except OSError:
            pass  # the server answered and stopped reading: expected for early answers

    t0 = time.monotonic()
    sender = threading.Thread(target=send, daemon=True)
    sender.start()
    data = b""
    deadline = t0 + bound + 2.0
    sock.settimeout(0.25)
    try:
        while time.monotonic() < deadline:
            try:
                chunk = sock.recv(65536)
            except socket.timeout:
                continue
            if not chunk:
                answer.error = "connection closed"
                break
            data += chunk
            while True:
                head, sep, rest = data.partition(b"\r\n\r\n")
                if not sep:
                    break
                m = re.match(rb"HTTP/1\.[01] (\d{3})", head)
                if not m:
                    answer.error = f"not an HTTP answer: {head[:80]!r}"
                    break
                status = int(m.group(1))
                if 100 <= status < 200:
                    answer.interim.append(status)
                    data = rest
                    continue
                headers = {}
                for line in head.split(b"\r\n")[1:]:
                    k, _, v = line.decode("latin-1").partition(":")
                    headers[k.strip().lower()] = v.strip()
                length = 0 if head_request else int(headers.get("content-length", "0") or 0)
                if len(rest) >= length:
                    answer.status, answer.headers, answer.body = status, headers, rest[:length]
                break
            if answer.status is not None or answer.error:
                break
    except OSError as e:
        answer.error = f"{type(e).__name__}: {e}"
    answer.elapsed = time.monotonic() - t0
    if answer.status is None and answer.error is None:
        answer.error = "timed out"
    stop.set()
    for s in (sock, out):
        try:
            s.close()
        except OSError:
            pass
    sender.join(timeout=5)
    return answer


def once(method, server, path, timeout=30, headers=None, **kwargs):
    """One request on a new connection that is closed afterwards: an idle kept-alive connection of
    the test would hold one of the server's workers for --keep-alive-timeout (5 s)."""
    with harness.session() as s:
        try:
            return s.request(method, server.url(path), timeout=timeout,
                             headers={**(headers or {}), "Connection": "close"}, **kwargs)
        except Exception as e:  # noqa: BLE001
            return e


def fresh_good(server, timeout=30):
    """A good POST /v1/fit on a new connection that is closed afterwards (no kept-alive connection
    of the test holds a worker); returns (response or exception, seconds)."""
    t0 = time.monotonic()
    with harness.session() as s:
        try:
            r = s.post(server.url("/v1/fit"), data=GOOD_TEXT, timeout=timeout,
                       headers={"Content-Type": "application/json", "Connection": "close"})
        except Exception as e:  # noqa: BLE001
            r = e
    return r, time.monotonic() - t0


# A client that half-closes after its request (shutdown(SHUT_WR)) is not a case here: httplib 0.11
# drops the answer to it about half the time (its writability check peeks at the socket and takes
# the client's FIN for a closed connection), whatever the request: a limitation of the library.

# ---- the cases -------------------------------------------------------------------------------

J = [("Content-Type", "application/json")]
ND = [("Content-Type", "application/x-ndjson")]
CHUNKED = [("Transfer-Encoding", "chunked")]
SHORT = b'{"spectrum":{"x":[400,'  # the short body that never reaches its Content-Length


def nested_arrays(levels):
    return b"[" * levels + b"]" * levels


def points_json(n):
    """A spectrum of n points, compact: ~18 bytes a point (x, y and y_error)."""
    xs = ",".join(str(400 + i % 1000) for i in range(n))
    ys = ",".join("1e-12" for _ in range(n))
    return ('{"spectrum":{"x":[' + xs + '],"x_unit":"nm","y":[' + ys + '],"y_unit":"W/m2/nm","y_error":[' + ys +
            "]}}").encode()


def points_csv(n):
    return b"".join(b"%d,1e-12\n" % (400 + i % 1000) for i in range(n))


_POINTS = {}


def cached(key, make):
    if key not in _POINTS:
        _POINTS[key] = make()
    return _POINTS[key]


def header_block(total_bytes, line_bytes=4000):
    n = total_bytes // (line_bytes + 12) + 1
    return [(f"X-Padding-{i}", "p" * line_bytes) for i in range(n)]


# (name, server, route, parts, statuses, bound seconds, options); route is the OpenAPI path of the
# problem's schema check (None: the Problem schema). statuses: the documented answer (README,
# openapi.yaml info: 413 over the body limit, 411 for a body without a length, a malformed-document
# problem (400, or the 4xx the HTTP layer chose, e.g. 414 or 431) for a request that cannot be read).
GB = "1000000000"
CASES = [
    # -- a length that lies: answered from the headers, before (and instead of) waiting for the body
    ("1 GB Content-Length with a short JSON body to POST /v1/fit", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J, length=GB) + SHORT], {413}, EARLY, {}),
    ("1 GB Content-Length with a short body to POST /v1/fit/batch", "main", "/v1/fit/batch",
     [request_bytes("POST", "/v1/fit/batch", ND, length=GB) + SHORT], {413}, EARLY, {}),
    ("1 GB Content-Length with a short body to POST /v1/light", "main", "/v1/light",
     [request_bytes("POST", "/v1/light", J, length=GB) + SHORT], {413}, EARLY, {}),
    ("1 GB Content-Length with a short body to POST /v1/hot-body", "main", "/v1/hot-body",
     [request_bytes("POST", "/v1/hot-body", J, length=GB) + SHORT], {413}, EARLY, {}),
    ("1 GB Content-Length with a short CSV body", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit?x_unit=nm&y_unit=W/m2/nm", [("Content-Type", "text/csv")], length=GB) +
      b"400,1e-12\n"], {413}, EARLY, {}),
    ("1 GB Content-Length on GET /v1/health", "main", None,
     [request_bytes("GET", "/v1/health", length=GB) + b"x"], {413}, EARLY, {}),
    ("Content-Length one byte over --max-body-bytes, no body", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J, length=str(MAX_BODY + 1))], {413}, EARLY, {}),
    ("1 GB Content-Length with Expect: 100-continue", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + [("Expect", "100-continue")], length=GB)], {413}, EARLY, {}),
    # RFC 9112 section 6.3: a Content-Length that is not a valid number is unrecoverable: 400.
    ("Content-Length beyond 64 bits", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J, length="99999999999999999999999") + SHORT], {400}, EARLY, {}),
    ("Content-Length -1", "main", "/v1/fit", [request_bytes("POST", "/v1/fit", J, length="-1") + SHORT], {400}, EARLY, {}),
    ("Content-Length 'abc'", "main", "/v1/fit", [request_bytes("POST", "/v1/fit", J, length="abc") + GOOD_TEXT],
     {400}, EARLY, {}),
    ("Content-Length '12, 12' (a list)", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J, length="12, 12") + b"{}"], {400}, EARLY, {}),
    ("Content-Length 0x10", "main", "/v1/fit", [request_bytes("POST", "/v1/fit", J, length="0x10") + b"{}"],
     {400}, EARLY, {}),
    # Two lengths are the request-smuggling shape (RFC 9112 sections 6.3 and 11.2): refused, even when
    # equal (RFC 9112 allows either; refusing is the simpler rule and no client needs to send two).
    ("two different Content-Length headers", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + [("Content-Length", "5")], length=str(len(GOOD_TEXT))) + GOOD_TEXT],
     {400}, EARLY, {}),
    ("two equal Content-Length headers", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + [("Content-Length", str(len(GOOD_TEXT)))], length=str(len(GOOD_TEXT))) +
      GOOD_TEXT], {400}, EARLY, {}),
    # -- transfer codings: the service takes Content-Length bodies only (411, RFC 9110 section 15.5.12)
    ("truncated chunked body, connection held open", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + CHUNKED, length=None) + b"40\r\n" + GOOD_TEXT[:20]], {411}, EARLY, {}),
    ("chunked body without its last chunk", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + CHUNKED, length=None) + b"%x\r\n" % len(GOOD_TEXT) + GOOD_TEXT + b"\r\n"],
     {411}, EARLY, {}),
    ("chunked body with a chunk size that is not hex", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + CHUNKED, length=None) + b"zz\r\n{}\r\n0\r\n\r\n"], {411}, EARLY, {}),
    ("truncated chunked body spelt 'Chunked'", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + [("Transfer-Encoding", "Chunked")], length=None) + b"40\r\n{"],
     {411}, EARLY, {}),
    ("truncated chunked body spelt 'CHUNKED' to the batch", "main", "/v1/fit/batch",
     [request_bytes("POST", "/v1/fit/batch", ND + [("Transfer-Encoding", "CHUNKED")], length=None) + b"40\r\n{"],
     {411}, EARLY, {}),
    ("Transfer-Encoding: gzip, chunked", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + [("Transfer-Encoding", "gzip, chunked")], length=None) + b"40\r\n{"],
     {411}, EARLY, {}),
    ("Transfer-Encoding: gzip (no length at all)", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + [("Transfer-Encoding", "gzip")], length=None) + b"\x1f\x8b"],
     {411}, EARLY, {}),
    ("Content-Length and Transfer-Encoding: chunked together", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + CHUNKED, length="5") + b"5\r\n{}{}{\r\n"], {400, 411}, EARLY, {}),
    ("truncated chunked body to POST /v1/light", "main", "/v1/light",
     [request_bytes("POST", "/v1/light", J + CHUNKED, length=None) + b"40\r\n{"], {411}, EARLY, {}),
    # -- no length at all: without it httplib would read to the end of the connection
    ("POST /v1/fit without Content-Length, connection held open", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J, length=None) + GOOD_TEXT], {411}, EARLY, {}),
    ("POST /v1/fit/batch without Content-Length", "main", "/v1/fit/batch",
     [request_bytes("POST", "/v1/fit/batch", ND, length=None) + GOOD_TEXT + b"\n"], {411}, EARLY, {}),
    ("DELETE /v1/health without Content-Length (405 at once)", "main", None,
     [request_bytes("DELETE", "/v1/health", length=None)], {405}, EARLY, {"allow": "GET"}),
    ("POST to an unknown path without Content-Length (404 at once)", "main", None,
     [request_bytes("POST", "/v1/nowhere", J, length=None) + b"{"], {404}, EARLY, {}),
    # -- header fields and request lines of megabytes
    ("one header field of 1 MB", "main", None,
     [request_bytes("GET", "/v1/health", [("X-Big", "a" * (1 << 20))], length=None)], {400, 431}, EARLY, {}),
    ("2 MB of header fields in 4 KB lines", "main", None,
     [request_bytes("GET", "/v1/health", header_block(2 << 20), length=None)], {431}, EARLY, {}),
    ("80 KB of header fields (over the 64 KiB total)", "main", "/v1/fit",
     [request_bytes("POST", "/v1/fit", J + header_block(80 << 10), body=GOOD_TEXT)], {431}, EARLY, {}),
    ("1 MB request target", "main", None,
     [request_bytes("GET", "/v1/health?" + "a" * (1 << 20), length=None)], {414}, EARLY, {}),
    ("1 MB query string on a CSV fit", "main", None,
     [request_bytes("POST", "/v1/fit?x_unit=nm&y_unit=W/m2/nm&pad=" + "b" * (1 << 20), [("Content-Type", "text/csv")],
                    body=b"400,1e-12\n500,2e-12\n")], {414}, EARLY, {}),
    # -- request lines that are not HTTP
    ("a request line that is not HTTP", "main", None, [b"GARBAGE\r\n\r\n"], {400}, EARLY, {}),
    ("HTTP/9.9", "main", None, [b"GET /v1/health HTTP/9.9\r\nHost: x\r\n\r\n"], {400, 505}, EARLY, {}),
    ("a NUL byte in the request target", "main", None, [b"GET /v1/he\x00alth HTTP/1.1\r\nHost: x\r\n\r\n"],
     {400}, EARLY, {}),
    ("a lower-case method", "main", None, [b"get /v1/health HTTP/1.1\r\nHost: x\r\n\r\n"], {400, 405}, EARLY, {}),
    ("binary garbage instead of a request", "main", None, [bytes(range(256)) * 8 + b"\r\n\r\n"], {400}, EARLY, {}),
    # -- 10^5 nesting levels on the endpoints that read JSON (the batch line is checked below)
    ("10^5 nested arrays to POST /v1/light", "main", "/v1/light",
     [request_bytes("POST", "/v1/light", J, body=nested_arrays(100000))], {400}, 10.0, {}),
    ("10^5 nested objects to POST /v1/hot-body", "main", "/v1/hot-body",
     [request_bytes("POST", "/v1/hot-body", J, body=b'{"a":' * 100000 + b"1" + b"}" * 100000)], {400}, 10.0, {}),
    # -- 10^7 points: refused on its length by the default server; by a server whose body limit
    # admits it, refused on --max-points (1,000,000 by default: 413, README) after reading it
    ("10^7 points as JSON to the default server (body limit)", "main", "/v1/fit",
     [lambda: request_bytes("POST", "/v1/fit", J, body=cached("json", lambda: points_json(10_000_000)))],
     {413}, EARLY, {}),
    ("10^7 points as JSON with --max-body-bytes 400 MiB (points limit)", "big", "/v1/fit",
     [lambda: request_bytes("POST", "/v1/fit", J, body=cached("json", lambda: points_json(10_000_000)))],
     {413}, READ_ALL, {}),
    ("10^7 rows of CSV with --max-body-bytes 400 MiB (points limit)", "big", "/v1/fit",
     [lambda: request_bytes("POST", "/v1/fit?x_unit=nm&y_unit=W/m2/nm", [("Content-Type", "text/csv")],
                            body=cached("csv", lambda: points_csv(10_000_000)))], {413}, READ_ALL, {}),
    ("10^7 batch lines with --max-body-bytes 400 MiB (--max-batch-lines)", "big", "/v1/fit/batch",
     [lambda: request_bytes("POST", "/v1/fit/batch", ND, body=b"{}\n" * 10_000_000)], {413}, READ_ALL, {}),
]


def check_answer(name, route, answer, statuses, bound, options):
    wanted = "/".join(str(s) for s in sorted(statuses))
    checks.check(f"{name}: answered, not 5xx", answer.status is not None and answer.status < 500, answer.describe())
    checks.check(f"{name}: status {wanted}", answer.status in statuses, answer.describe())
    checks.check(f"{name}: answered within {bound:g} s", answer.elapsed is not None and answer.elapsed < bound,
                 f"{answer.elapsed:.2f} s")
    if answer.status is None:
        return
    checks.check(f"{name}: Content-Type {harness.PROBLEM_TYPE}",
                 answer.headers.get("content-type", "").split(";")[0].strip() == harness.PROBLEM_TYPE,
                 answer.headers.get("content-type"))
    doc = answer.problem()
    issues = problem_issues(doc, answer.status)
    checks.check(f"{name}: problem document has type, title, status, detail", not issues,
                 "; ".join(issues) + " | " + answer.describe() if issues else doc.get("type"))
    if "allow" in options:
        checks.check(f"{name}: Allow names {options['allow']}", options["allow"] in answer.headers.get("allow", ""),
                     answer.headers.get("allow"))
    if isinstance(doc, dict) and not issues:
        schema.check(checks, f"{name}: problem matches the OpenAPI schema", doc, route or "/nowhere", "post",
                     answer.status, harness.PROBLEM_TYPE, fallback="Problem")


def good_after(name, server):
    r, seconds = fresh_good(server)
    checks.check(f"{name}: a good request on a fresh connection right after answers 200 within {GOOD_BOUND:g} s",
                 is_response(r) and r.status_code == 200 and seconds < GOOD_BOUND, f"{seconds:.2f} s, {describe(r, 100)}")


def run_cases(server, key):
    for name, which, route, parts, statuses, bound, options in CASES:
        if which != key:
            continue
        parts = [p() if callable(p) else p for p in parts]
        answer = exchange(server.port, parts, bound, half_close=options.get("half_close", False))
        check_answer(name, route, answer, statuses, bound, options)
        good_after(name, server)


# ---- the batch with hostile lines ------------------------------------------------------------

def hostile_batch(server):
    """One NDJSON batch whose lines are hostile: each is answered on its own line with a 4xx
    problem, in order, and the good lines between them are fitted."""
    lines = [
        (b'{"id":"ok-0",' + GOOD_TEXT[1:], 200),
        (nested_arrays(100000), 400),
        (b'{"a":' * 100000 + b"1" + b"}" * 100000, 400),
        (GOOD_TEXT.replace(b'"y":[', b'"y":[NaN,', 1), 400),
        (GOOD_TEXT.replace(b'"x":[', b'"x":[1e999,', 1), 400),
        (GOOD_TEXT.replace(b'"nm"', b'"n\xffm"', 1), 400),
        (b'{"id":"dup","spectrum":' + json.dumps(GOOD["spectrum"]).encode() + b',"spectrum":{}}', 422),
        (b"\x00" * 100, 400),
        (b'{"id":"ok-8",' + GOOD_TEXT[1:], 200),
    ]
    body = b"\n".join(text for text, _ in lines) + b"\n"
    name = "batch of hostile lines (10^5 nesting, NaN, 1e999, invalid UTF-8, a duplicate key, NUL bytes)"
    t0 = time.monotonic()
    r = once("POST", server, "/v1/fit/batch", data=body, headers={"Content-Type": "application/x-ndjson"}, timeout=60)
    seconds = time.monotonic() - t0
    checks.check(f"{name}: 200 application/x-ndjson within 20 s",
                 is_response(r) and r.status_code == 200 and seconds < 20, f"{seconds:.2f} s, {describe(r, 100)}")
    if not is_response(r):
        return
    answers = []
    for raw in r.content.split(b"\n"):
        if raw.strip():
            try:
                answers.append(json.loads(raw))
            except json.JSONDecodeError:
                answers.append(None)
    got = [(a or {}).get("index") for a in answers], [(a or {}).get("status") for a in answers]
    checks.check(f"{name}: one answer line per request line, in order, with the documented statuses",
                 got == (list(range(len(lines))), [s for _, s in lines]), f"got {got}")
    for a in answers:
        if isinstance(a, dict) and "problem" in a:
            issues = problem_issues(a["problem"], a.get("status"))
            if issues:
                checks.check(f"{name}: line {a.get('index')}: problem document", False, "; ".join(issues))
            schema.check(checks, f"{name}: line {a.get('index')} matches BatchLine", a, "/v1/fit/batch", "post", 200,
                         "application/x-ndjson")
    return 1


# ---- slow clients ----------------------------------------------------------------------------

def trickler(server, head, tail, finish, result):
    """Sends `head` at once, then `tail` a byte a second for at most SLOW_SECONDS bytes; with
    finish, the rest of tail at once (tail ends a complete request) and reads the answer's status."""
    try:
        with socket.create_connection(("127.0.0.1", server.port), timeout=5) as s:
            s.sendall(head)
            t0 = time.monotonic()
            for i in range(min(len(tail), SLOW_SECONDS)):
                s.sendall(tail[i:i + 1])
                time.sleep(1.0)
            if finish:
                s.sendall(tail[SLOW_SECONDS:])
                s.settimeout(10)
                data = b""
                while b"\r\n\r\n" not in data:
                    chunk = s.recv(65536)
                    if not chunk:
                        break
                    data += chunk
                result["answer"] = data[:12].decode("latin-1")
            result["seconds"] = time.monotonic() - t0
    except OSError as e:
        result["error"] = f"{type(e).__name__}: {e}"


def slow_clients(server):
    """Three slow clients at once, a byte a second for SLOW_SECONDS: one sending its header fields
    (never finished within the bound), one its body (Content-Length says more than is sent), one
    finishing a complete request (its last bytes a second apart: served once complete). Each holds
    one worker (httplib serves a connection on one thread); the server has --threads 4, so one
    worker stays free and good requests from other connections, one a second, must each be
    answered within 2 s meanwhile."""
    whole = request_bytes("POST", "/v1/fit", J, body=GOOD_TEXT)
    clients = [
        ("slow client sending its header fields a byte a second", b"GET /v1/health HTTP/1.1\r\n",
         b"X-Slow: " + b"s" * 64, False),
        ("slow client sending its body a byte a second",
         request_bytes("POST", "/v1/fit", J, length=str(len(GOOD_TEXT))), GOOD_TEXT, False),
        ("slow client finishing its request a byte a second", whole[:-SLOW_SECONDS], whole[-SLOW_SECONDS:], True),
    ]
    results = [{} for _ in clients]
    threads = [threading.Thread(target=trickler, args=(server, head, tail, finish, result), daemon=True)
               for (_, head, tail, finish), result in zip(clients, results)]
    for t in threads:
        t.start()
    time.sleep(1.5)
    latencies, failures = [], []
    while any(t.is_alive() for t in threads) and len(latencies) < SLOW_SECONDS + 5:
        r, seconds = fresh_good(server, timeout=15)
        latencies.append(seconds)
        if not (is_response(r) and r.status_code == 200):
            failures.append(describe(r, 80))
        time.sleep(max(0.0, 1.0 - seconds))
    for t in threads:
        t.join(timeout=SLOW_SECONDS + 20)
    worst = max(latencies) if latencies else None
    checks.check(f"3 slow clients at once ({SLOW_SECONDS} s, --threads 4): {len(latencies)} good requests from other "
                 f"connections answer 200, each within 2 s", latencies and not failures and worst < 2.0,
                 f"worst {worst if worst is None else round(worst, 3)} s, failures {failures[:2]}")
    for (label, _, _, finish), result in zip(clients, results):
        checks.check(f"{label}: ran for about {SLOW_SECONDS} s (bounded)",
                     "error" not in result and SLOW_SECONDS - 1 <= result.get("seconds", 0) < SLOW_SECONDS + 12,
                     str(result))
        if finish:
            checks.check(f"{label}: its request, complete at last, is answered 200",
                         result.get("answer", "").startswith("HTTP/1.1 200"), str(result))
    good_after("slow clients", server)
    return 3


# ---- HEAD --------------------------------------------------------------------------------------

def head_requests(server):
    """RFC 9110 section 9.1: a server supports HEAD wherever it supports GET (the GET answer's header
    fields, no body); HEAD of a POST-only endpoint is a 405 naming POST."""
    n = 0
    for path in ("/v1/health", "/v1/models", "/openapi.yaml", "/v1/passbands/2mass-j"):
        answer = exchange(server.port, [request_bytes("HEAD", path, length=None)], EARLY, head_request=True)
        get = once("GET", server, path, timeout=30)
        same_length = is_response(get) and answer.headers.get("content-length") == str(len(get.content))
        checks.check(f"HEAD {path}: 200 with the GET answer's Content-Length and no body",
                     answer.status == 200 and same_length and answer.body == b"", answer.describe())
        n += 1
    answer = exchange(server.port, [request_bytes("HEAD", "/v1/fit", length=None)], EARLY, head_request=True)
    checks.check("HEAD /v1/fit: 405 with Allow naming POST", answer.status == 405 and
                 "POST" in answer.headers.get("allow", ""), answer.describe() + f" Allow {answer.headers.get('allow')}")
    good_after("HEAD requests", server)
    return n + 1


def main():
    if not schema.available:
        checks.note(f"schema checks will not run: {schema.problem}")
    extra = 1 + 3 + 5  # the hostile batch, the slow clients, the HEAD requests
    checks.note(f"{len(CASES) + extra} hostile cases ({len(CASES)} raw-socket cases in the table, "
                f"1 batch of hostile lines, 3 slow clients, 5 HEAD requests)")
    main_server = Server(args.server, ["--threads", "2"], name="server (--threads 2)")
    if not main_server.start(checks):
        return
    good_after("before the cases", main_server)
    run_cases(main_server, "main")
    hostile_batch(main_server)
    head_requests(main_server)
    log = main_server.wait_for_log(1)
    fives = [d for d in log if isinstance(d.get("status"), int) and d["status"] >= 500]
    checks.check("the access log shows no 5xx answer", not fives, fives[:3])
    main_server.stop(checks)

    slow = Server(args.server, ["--threads", "4"], name="server (--threads 4, slow clients)")
    if slow.start(checks):
        slow_clients(slow)
        slow.stop(checks)

    big = Server(args.server, ["--threads", "2", "--max-body-bytes", str(BIG_BODY)],
                 name=f"server (--max-body-bytes {BIG_BODY})")
    if big.start(checks):
        run_cases(big, "big")
        big.stop(checks)


harness.crash_guard(checks, main)
