"""Security checks of the service (the threat model in the README, "Exposing the service"): keys
never logged on any channel, request bodies bounded however they are encoded, the index of a batch
bounded before it is built, the overload answer (a slow client beyond the queue does not hold it; a
request beyond the queue gets one 503 and its body is not read as requests), kept-alive connections
yielding their worker while others wait, the listening socket (backlog, no shared port), no file opened on a request's behalf, a container that runs as a
non-root user.
Loopback only; every socket has a timeout. test_service_http.py covers keys in the Authorization
header (right, wrong, schemes); this script covers the other channels."""
import gzip
import json
import os
import re
import socket
import subprocess
import threading
import time
import zlib

import harness
from harness import check_problem, compact, describe, fresh_http, is_response, media_type, planck_spectrum

args = harness.parse_args(__doc__.splitlines()[0])
checks = harness.Checks(args.require_schema)

# Invented keys, for this script only; none may appear in any stderr line of the server.
GOOD_KEY = "sec-good-5b1e0f3a7c"
OTHER_KEY = "sec-other-e29d44c8a1"
WRONG_KEY = "sec-wrong-73aa0b9d26"
FILE_KEY = "sec-file-0c6f18be57"
ALL_KEYS = [GOOD_KEY, OTHER_KEY, WRONG_KEY, FILE_KEY]
JSON_CT = {"Content-Type": "application/json"}
SMALL = compact(planck_spectrum(60, temperature=5200.0, seed=7)).encode()


def bearer(key):
    return {"Authorization": f"Bearer {key}"}


def response_complete(got):
    """True when got holds a whole response (headers and Content-Length bytes of body)."""
    head, sep, body = got.partition(b"\r\n\r\n")
    if not sep:
        return False
    m = re.search(rb"(?im)^content-length:\s*(\d+)", head)
    return m is not None and len(body) >= int(m.group(1))


def raw_exchange(server, data, timeout=5.0, until_close=False):
    """Sends raw bytes on a fresh connection and reads until one whole response has arrived (or,
    with until_close, until the server closes the connection), or timeout. Returns (bytes read,
    seconds, error name or None)."""
    started = time.monotonic()
    got = b""
    error = None
    try:
        with socket.create_connection(("127.0.0.1", server.port), timeout=timeout) as s:
            s.settimeout(timeout)
            s.sendall(data)
            while until_close or not response_complete(got):
                chunk = s.recv(65536)
                if not chunk:
                    break
                got += chunk
    except OSError as e:
        error = type(e).__name__
    return got, time.monotonic() - started, error


def status_of(raw):
    m = re.match(rb"HTTP/1\.[01] (\d{3})", raw)
    return int(m.group(1)) if m else None


# ---- API keys are never logged ---------------------------------------------------------------

def keys_never_logged(key_file):
    server = harness.Server(args.server, ["--api-keys-file", key_file],
                            env={"PLANCKTON_API_KEYS": f"{GOOD_KEY},{OTHER_KEY}"}, name="server (keys)")
    if not server.start(checks):
        return
    label = "keys"
    expected = []  # (name, response, wanted status)

    def ask(name, method, path, wanted, **kwargs):
        r = fresh_http(method, server, path, timeout=20, **kwargs)
        expected.append((name, r, wanted))

    ask("right key in the header", "GET", "/v1/models", 200, headers=bearer(GOOD_KEY))
    ask("key from the key file in the header", "GET", "/v1/models", 200, headers=bearer(FILE_KEY))
    ask("wrong key in the header", "GET", "/v1/models", 401, headers=bearer(WRONG_KEY))
    for name in ("api_key", "access_token", "key"):
        ask(f"right key as ?{name}=", "GET", f"/v1/models?{name}={GOOD_KEY}", 401)
        ask(f"wrong key as ?{name}=", "GET", f"/v1/models?{name}={WRONG_KEY}", 401)
    ask("right key in the query and the header (JSON takes no query)", "POST", f"/v1/fit?api_key={OTHER_KEY}", 422,
        data=SMALL, headers={**JSON_CT, **bearer(GOOD_KEY)})
    ask("wrong key as an unknown table parameter", "POST",
        f"/v1/fit?x_unit=nm&y_unit=W/m2/nm&token={WRONG_KEY}", 422,
        data=b"400,1e-12\n500,2e-12\n600,1.5e-12\n", headers={"Content-Type": "text/csv", **bearer(GOOD_KEY)})
    ask("right key in X-Api-Key", "GET", "/v1/units", 401, headers={"X-Api-Key": GOOD_KEY})
    ask("right key as a cookie", "GET", "/v1/units", 401, headers={"Cookie": f"key={GOOD_KEY}"})
    ask("wrong key with a 404 path", "GET", "/v1/nothing-here", 404, headers=bearer(WRONG_KEY))
    ask("wrong key with a 405 method", "DELETE", "/v1/models", 405, headers=bearer(WRONG_KEY))
    for name, r, wanted in expected:
        checks.check(f"{label}: {name}: {wanted}", is_response(r) and r.status_code == wanted, describe(r, 150))
    # Requests httplib itself refuses, with a key inside: a header line over its 8 KiB limit, a
    # request target over its limit, a malformed request line.
    raw_cases = [
        ("a header line over 8 KiB holding the key",
         f"GET /v1/models HTTP/1.1\r\nHost: 127.0.0.1\r\nAuthorization: Bearer {GOOD_KEY}{'k' * 9000}\r\n"
         f"Connection: close\r\n\r\n".encode()),
        ("a request target over 8 KiB holding the key",
         f"GET /v1/models?api_key={WRONG_KEY}&pad={'p' * 9000} HTTP/1.1\r\nHost: 127.0.0.1\r\n"
         f"Connection: close\r\n\r\n".encode()),
        ("a malformed request line holding the key",
         f"GET /v1/models?api_key={OTHER_KEY} HTTP/1.1 extra\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n".encode()),
    ]
    for name, data in raw_cases:
        got, seconds, error = raw_exchange(server, data)
        status = status_of(got)
        checks.check(f"{label}: {name}: answered 4xx, quickly", status is not None and 400 <= status < 500 and seconds < 5,
                     f"status {status}, {seconds:.2f} s, {error}, {got[:120]!r}")
        checks.check(f"{label}: {name}: the answer does not echo the key",
                     not any(k.encode() in got for k in ALL_KEYS), got[:200])
    metrics = fresh_http("GET", server, "/metrics", timeout=20, headers=bearer(GOOD_KEY))
    checks.check(f"{label}: /metrics names no key", is_response(metrics) and metrics.status_code == 200
                 and not any(k in metrics.text for k in ALL_KEYS), describe(metrics, 100))
    log = server.wait_for_log(len(expected) + 1, timeout=10)
    checks.check(f"{label}: every answered request is in the access log (so the next checks look at them)",
                 len(log) >= len(expected) + 1, f"{len(log)} lines for {len(expected) + 1} requests")
    paths = {d.get("path") for d in log}
    checks.check(f"{label}: logged paths carry no query string", not any("?" in (p or "") for p in paths), sorted(paths))
    checks.check(f"{label}: 401 answers are logged", any(d.get("status") == 401 for d in log), "")
    server.stop(checks)
    lines = server.stderr_lines() + [json.dumps(server.listening or {})]
    for key in ALL_KEYS:
        found = [line[:160] for line in lines if key in line]
        checks.check(f"{label}: key {key!r} appears in no stderr line", not found, found[:2])
    checks.check(f"{label}: the key file's path is not a secret, but its content is not logged either",
                 not any("sec-file" in line for line in lines), "")


# ---- bodies are bounded however they are framed or encoded -----------------------------------

LIMIT = 20000


def padded_request():
    """A valid fit request of ~1 MB (the small spectrum, then spaces): over LIMIT as it is, a few
    KB when compressed."""
    return SMALL + b" " * 1_000_000


def encoded_bodies(server):
    label = "encoding"
    body = padded_request()
    for coding, data in (("gzip", gzip.compress(body)), ("deflate", zlib.compress(body))):
        checks.check(f"{label}: the {coding} body is under the limit ({len(data)} bytes) and decodes to "
                     f"{len(body)} bytes", len(data) < LIMIT < len(body), "")
        r = fresh_http("POST", server, "/v1/fit", timeout=20, data=data,
                       headers={**JSON_CT, "Content-Encoding": coding})
        # Before the fix httplib decoded it past --max-body-bytes and the fit answered 200.
        check_problem(checks, f"{label}: a {coding}-encoded request is refused (415), not decoded past the limit",
                      r, status=415)
    r = fresh_http("POST", server, "/v1/fit", timeout=20, data=b"\x00" * 64,
                   headers={**JSON_CT, "Content-Encoding": "br"})
    check_problem(checks, f"{label}: a br-encoded request is refused (415)", r, status=415)
    r = fresh_http("POST", server, "/v1/fit", timeout=20, data=SMALL,
                   headers={**JSON_CT, "Content-Encoding": "identity"})
    checks.check(f"{label}: Content-Encoding: identity is a plain body (200)", is_response(r) and r.status_code == 200,
                 describe(r, 150))
    r = fresh_http("POST", server, "/v1/fit", timeout=20, data=body, headers=JSON_CT)
    check_problem(checks, f"{label}: the same request unencoded is over the limit (413)", r, status=413)


def batch_index_bounded():
    """--max-batch-lines is checked before the index of the lines is built: a 15 MB batch of tiny
    lines (5 million) must not make the server allocate an index of every line first (24 bytes a
    line: 120 MB and more) before refusing it."""
    label = "batch lines"
    server = harness.Server(args.server, ["--max-batch-lines", "10", "--threads", "1"], name="server (batch limit)")
    if not server.start(checks):
        return
    fresh_http("GET", server, "/v1/health", timeout=10)
    pid = server.process.pid

    def peak_kib():
        with open(f"/proc/{pid}/status") as handle:
            for line in handle:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1])
        return None

    before = peak_kib()
    body = b"{}\n" * 5_000_000
    r = fresh_http("POST", server, "/v1/fit/batch", timeout=60, data=body,
                   headers={"Content-Type": "application/x-ndjson"})
    check_problem(checks, f"{label}: 5,000,000 lines over --max-batch-lines 10: 413", r, status=413)
    after = peak_kib()
    grown_mb = (after - before) / 1024.0 if before and after else None
    # The body itself is held twice (httplib's request and the batch's copy, 2 x 15 MB) plus
    # httplib's growth of it; the index of 5 million lines would add 120-190 MB. ThreadSanitizer's
    # shadow and meta memory (about 5 times what the program touches) count in VmHWM too.
    limit_mb = 500 if "thread" in harness.SANITIZERS else 100
    checks.check(f"{label}: the server's peak memory grows by less than {limit_mb} MB",
                 grown_mb is not None and grown_mb < limit_mb, f"VmHWM {before} -> {after} KiB ({grown_mb:.0f} MB)"
                 if grown_mb is not None else "no VmHWM")
    server.stop(checks)


# ---- a slow client beyond the queue ----------------------------------------------------------

def slow_client_in_overflow():
    """One worker, one waiting connection: a third connection goes to the overflow answerer. When
    that connection trickles its request (a byte every 0.4 s), further clients must still get
    their 503 at once, not after the trickle ends."""
    label = "overflow"
    server = harness.Server(args.server, ["--threads", "1", "--max-waiting-connections", "1",
                                          "--keep-alive-timeout", "5"], name="server (overflow)")
    if not server.start(checks):
        return
    held = socket.create_connection(("127.0.0.1", server.port), timeout=10)
    held.sendall(b"GET /v1/health HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n")
    held.recv(65536)                                                    # the worker waits on it
    waiting = socket.create_connection(("127.0.0.1", server.port), timeout=10)  # fills the queue
    time.sleep(0.2)
    slow = socket.create_connection(("127.0.0.1", server.port), timeout=10)
    stop = threading.Event()

    def trickle():
        for byte in b"GET /v1/health HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n":
            if stop.wait(0.4):
                return
            try:
                slow.send(bytes([byte]))
            except OSError:
                return

    trickler = threading.Thread(target=trickle, daemon=True)
    trickler.start()
    time.sleep(0.3)
    results = []
    for _ in range(3):
        started = time.monotonic()
        r = fresh_http("GET", server, "/v1/health", timeout=4)
        results.append((r.status_code if is_response(r) else type(r).__name__, round(time.monotonic() - started, 2)))
    checks.check(f"{label}: with a slow client on the overflow answerer, 3 more clients each get 503 within 1 s",
                 all(status == 503 and seconds < 1.0 for status, seconds in results), results)
    stop.set()
    trickler.join(5)
    for s in (slow, waiting, held):
        s.close()
    deadline = time.monotonic() + 15
    status = None
    while time.monotonic() < deadline:
        r = fresh_http("GET", server, "/v1/health", timeout=5)
        status = r.status_code if is_response(r) else None
        if status == 200:
            break
        time.sleep(0.2)
    checks.check(f"{label}: the server recovers (200) once the connections close", status == 200, f"last {status}")
    server.stop(checks)


def overflow_stays_in_step():
    """A request beyond the queue is answered 503 once, after its body has been read. Answered
    before its body, the body was read as further requests on the kept-alive connection: under load
    one 414 per 503 (a body's first "line" over 8 KiB), and a request written inside a body was
    answered as a request of its own."""
    label = "overflow body"
    server = harness.Server(args.server, ["--threads", "1", "--max-waiting-connections", "1",
                                          "--keep-alive-timeout", "2"], name="server (overflow body)")
    if not server.start(checks):
        return
    held = socket.create_connection(("127.0.0.1", server.port), timeout=10)
    held.sendall(b"GET /v1/health HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n")
    held.recv(65536)
    waiting = socket.create_connection(("127.0.0.1", server.port), timeout=10)
    time.sleep(0.2)
    body = b"x" * 9000 + b"\r\n\r\n" + b"GET /v1/units HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n"
    request = (b"POST /v1/fit HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
               b"Content-Length: %d\r\n\r\n" % len(body)) + body
    got, seconds, error = raw_exchange(server, request, timeout=8, until_close=True)
    statuses = [int(m) for m in re.findall(rb"HTTP/1\.1 (\d{3}) ", got)]
    checks.check(f"{label}: a POST beyond the queue gets exactly one answer, a 503", statuses == [503],
                 f"statuses {statuses}, {seconds:.2f} s, {error}")
    head = got.partition(b"\r\n\r\n")[0].lower()
    # Without it a client kept the connection, and its next requests pinned an overflow thread
    # (bench/overload.py: 503 latency p50 255 ms instead of 5 ms).
    checks.check(f"{label}: the 503 says Connection: close and Retry-After",
                 b"\r\nconnection: close" in head and b"\r\nretry-after: 1" in head, head[:300])
    held.close()
    waiting.close()
    time.sleep(0.3)
    log = server.access_log()
    checks.check(f"{label}: the access log has no 414 or 400 from a body read as requests",
                 not any(d.get("status") in (400, 414) for d in log), [d.get("status") for d in log])
    server.stop(checks)


def listener_settings():
    """The listening socket: a backlog wider than httplib's 5 (with 5, a burst of reconnecting
    clients had SYNs dropped and waited a 1 s retransmission before reaching even the 503), and no
    SO_REUSEPORT (with it, a second server of the same user on the same port started and silently
    took a share of the connections)."""
    label = "listener"
    server = harness.Server(args.server, [], name="server (listener)")
    if not server.start(checks):
        return
    try:
        out = subprocess.run(["ss", "-ltnH", f"sport = :{server.port}"], capture_output=True, text=True, timeout=10)
        fields = out.stdout.split()
        backlog = int(fields[2]) if out.returncode == 0 and len(fields) >= 3 else None
        checks.check(f"{label}: the listen backlog is at least 128 (ss -ltn: Send-Q)", backlog is not None and backlog >= 128,
                     out.stdout.strip() or out.stderr.strip())
    except (OSError, subprocess.TimeoutExpired, ValueError) as e:
        checks.skip(f"{label}: the listen backlog is at least 128", f"ss (iproute2) not usable: {e}")
    second = subprocess.Popen([args.server, "--bind", "127.0.0.1", "--port", str(server.port)],
                              stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                              env=harness.clean_environment())
    try:
        code = second.wait(timeout=10)
        err = second.stderr.read().decode("utf-8", "replace")
    except subprocess.TimeoutExpired:
        second.kill()
        second.wait(timeout=10)
        code, err = None, "still running after 10 s: it shares the port"
    checks.check(f"{label}: a second server on the same port fails to start (exit 1, 'cannot listen')",
                 code == 1 and "cannot listen" in err, f"exit {code}: {err.strip()[:200]}")
    r = fresh_http("GET", server, "/v1/health", timeout=10)
    checks.check(f"{label}: the first server still answers", is_response(r) and r.status_code == 200, describe(r, 80))
    server.stop(checks)


def kept_alive_connection_yields():
    """A kept-alive connection holds its worker between requests. While another connection waits,
    the answer asks the client to close (Connection: close), so the waiting one is served at once;
    before, it waited for the first client's keep-alive timeout (or its 100 requests)."""
    import http.client
    label = "fair turns"
    server = harness.Server(args.server, ["--threads", "1", "--max-waiting-connections", "4",
                                          "--keep-alive-timeout", "5"], name="server (turns)")
    if not server.start(checks):
        return
    first = http.client.HTTPConnection("127.0.0.1", server.port, timeout=10)
    first.request("GET", "/v1/health")
    r1 = first.getresponse()
    r1.read()
    checks.check(f"{label}: alone, a connection is kept alive", (r1.getheader("Connection") or "").lower() != "close",
                 dict(r1.getheaders()))
    second = socket.create_connection(("127.0.0.1", server.port), timeout=10)
    second.sendall(b"GET /v1/health HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n")
    time.sleep(0.3)  # the second connection now waits: the worker is held by the first
    first.request("GET", "/v1/health")
    r2 = first.getresponse()
    r2.read()
    closing = (r2.getheader("Connection") or "").lower() == "close"
    checks.check(f"{label}: with a connection waiting, the answer says Connection: close", closing,
                 dict(r2.getheaders()))
    started = time.monotonic()
    if closing:
        first.close()  # what a client does on Connection: close; a client that ignores it keeps the worker
    second.settimeout(8)
    got = b""
    try:
        while not response_complete(got):
            chunk = second.recv(65536)
            if not chunk:
                break
            got += chunk
    except OSError as e:
        got += f"<{type(e).__name__}>".encode()
    waited = time.monotonic() - started
    checks.check(f"{label}: the waiting connection is then answered 200 within 1 s (not after the 5 s keep-alive)",
                 status_of(got) == 200 and waited < 1.0, f"{waited:.2f} s, {got[:60]!r}")
    first.close()
    second.close()
    server.stop(checks)


# ---- nothing is opened on a request's behalf --------------------------------------------------

OPEN_CALL = re.compile(r"\b(fopen|freopen|fits_open_\w+|fits_create_\w*file|opendir|popen|system|open|openat|creat)\s*\("
                       r"|\b(ifstream|ofstream|fstream|filebuf)\b")


def no_file_opened_for_requests(server):
    label = "files"
    allowed = {  # (file, call) -> why it may be there
        (os.path.join("server", "server_config.cpp"), "fstream"): "#include <fstream>",
        (os.path.join("server", "server_config.cpp"), "ifstream"): "the API key file named on the command line, at start",
        (os.path.join("core", "api", "fits_reader.cpp"), "fits_open_memfile"): "a FITS body, from memory",
    }
    found = []
    for room in ("core/api", "core/science", "server"):
        for name in sorted(os.listdir(os.path.join(args.repo, room))):
            if not name.endswith((".cpp", ".h")):
                continue
            relative = os.path.join(room, name)
            with open(os.path.join(args.repo, relative), encoding="utf-8") as handle:
                for number, line in enumerate(handle, 1):
                    code = re.sub(r'"(\\.|[^"\\])*"', '""', line).split("//")[0]  # no literals, no comments
                    for m in OPEN_CALL.finditer(code):
                        name = m.group(1) or m.group(2)
                        if name == "open" and re.search(r"(\.|->|::)\s*open\s*\($", code[:m.end()]):
                            continue  # a member such as writer.open("svg") or XmlWriter::open(...), not open(2)
                        if name == "open" and re.search(r"\w[\w:&*<>]*\s+open\s*\($", code[:m.end()]):
                            continue  # a declaration of a member function named open
                        if name == "open" and code[m.end():].lstrip().startswith(")"):
                            continue  # open() without arguments: a member of ours; open(2) takes a path
                        found.append((relative, number, name, line.strip()[:100]))
    unexpected = [f for f in found if (f[0], f[2]) not in allowed]
    checks.check(f"{label}: no file-opening call in core/api, core/science or server but the key file's "
                 f"ifstream and FITS from memory", not unexpected, unexpected[:4])
    checks.check(f"{label}: the scan sees the key file's ifstream (so it would see another)",
                 any(f[0] == os.path.join("server", "server_config.cpp") and f[2] == "ifstream" for f in found), found[:3])
    fits = os.path.join(args.repo, "core", "api", "fits_reader.cpp")
    with open(fits, encoding="utf-8") as handle:
        text = handle.read()
    checks.check(f"{label}: FITS bodies are read from memory (fits_open_memfile), never from a file name",
                 "fits_open_memfile" in text and not re.search(r"\bfits_(open|create)_(file|data|table|image|diskfile)\b", text), "")
    # And at run time: names that look like paths are names, not files.
    for path in ("/v1/passbands/..%2F..%2F..%2Fetc%2Fpasswd", "/v1/passbands/%2Fetc%2Fpasswd",
                 "/v1/passbands/..\\..\\etc\\passwd"):
        r = fresh_http("GET", server, path, timeout=10)
        checks.check(f"{label}: GET {path} is a 404 problem that shows no file",
                     is_response(r) and r.status_code == 404 and "root:" not in r.text, describe(r, 120))
    doc = {"photometry": [{"band": "/etc/passwd", "value": 9.1, "error": 0.03, "unit": "ABmag"},
                          {"band": "../../../../etc/hostname", "value": 9.0, "error": 0.03, "unit": "ABmag"}]}
    r = fresh_http("POST", server, "/v1/fit", timeout=10, data=compact(doc).encode(), headers=JSON_CT)
    check_problem(checks, f"{label}: a band named like a path is an unknown band (4xx)", r)
    checks.check(f"{label}: ... and its answer shows no file", is_response(r) and "root:" not in r.text, "")


# ---- the container ---------------------------------------------------------------------------

def container_runs_unprivileged():
    """Review of the Dockerfile (docker cannot fetch base images here, so nothing is built): the
    final stage's last USER is a non-root numeric user, no later instruction switches back, the
    port is unprivileged and nothing in the entrypoint needs root."""
    label = "container"
    with open(os.path.join(args.repo, "Dockerfile"), encoding="utf-8") as handle:
        lines = [l.strip() for l in handle.read().replace("\\\n", " ").splitlines()]
    instructions = [l for l in lines if l and not l.startswith("#")]
    stages = [i for i, l in enumerate(instructions) if l.upper().startswith("FROM ")]
    final = instructions[stages[-1]:] if stages else []
    users = [l.split(None, 1)[1] for l in final if l.upper().startswith("USER ")]
    user = users[-1].split(":")[0] if users else None
    checks.check(f"{label}: the final stage sets USER", user is not None, final[:2])
    checks.check(f"{label}: its user is not root (name or uid 0)", user not in (None, "root", "0"), user)
    after_user = final[max(i for i, l in enumerate(final) if l.upper().startswith("USER ")) + 1:] if users else []
    checks.check(f"{label}: no RUN after USER (nothing installed or changed as that user, nothing needing root)",
                 not any(l.upper().startswith("RUN ") for l in after_user), after_user)
    exposed = [int(p.split("/")[0]) for l in final if l.upper().startswith("EXPOSE ") for p in l.split()[1:]]
    checks.check(f"{label}: the exposed port is unprivileged (>= 1024)", exposed and all(p >= 1024 for p in exposed), exposed)
    entry = [l for l in final if l.upper().startswith("ENTRYPOINT")]
    checks.check(f"{label}: the entrypoint runs the server directly (exec form, no shell, no sudo/su)",
                 len(entry) == 1 and entry[0].split(None, 1)[1].startswith("[")
                 and not re.search(r"\b(sudo|su|gosu|chown|chmod)\b", entry[0]), entry)


def main():
    import tempfile
    with tempfile.TemporaryDirectory(prefix="planckton-security-") as directory:
        key_file = os.path.join(directory, "keys.txt")
        with open(key_file, "w") as handle:
            handle.write(f"# test keys\n{FILE_KEY}\n")
        keys_never_logged(key_file)
    server = harness.Server(args.server, ["--max-body-bytes", str(LIMIT)], name="server (limits)")
    if server.start(checks):
        encoded_bodies(server)
        no_file_opened_for_requests(server)
        log = server.access_log()
        fives = [d for d in log if isinstance(d.get("status"), int) and d["status"] >= 500]
        checks.check("limits: no 5xx in the access log", not fives, fives[:3])
        server.stop(checks)
    batch_index_bounded()
    slow_client_in_overflow()
    overflow_stays_in_step()
    kept_alive_connection_yields()
    listener_settings()
    container_runs_unprivileged()


harness.crash_guard(checks, main)
