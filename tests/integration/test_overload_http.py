"""Overload: with every worker busy and the queue of waiting connections full, a further client gets
a quick 503 problem with Retry-After (RFC 9110, 15.6.4 and 10.2.3) instead of waiting, and the
server answers normally once the load is gone. Loopback only; every wait is bounded."""
import socket
import time

import harness

args = harness.parse_args(__doc__.splitlines()[0])
checks = harness.Checks(args.require_schema)


def hold_connection(server):
    """Opens a kept-alive connection and sends one complete request: it then holds a worker until
    the keep-alive timeout."""
    s = socket.create_connection(("127.0.0.1", server.port), timeout=10)
    s.sendall(b"GET /v1/health HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n")
    s.recv(65536)
    return s


def waiting_connection(server):
    """Opens a connection that waits in the queue (no worker is free to read it)."""
    return socket.create_connection(("127.0.0.1", server.port), timeout=10)


def keep_alive_latency():
    """Requests on one kept-alive connection are answered without Nagle's delay: with it, each
    response's body waited ~40 ms behind its headers for the client's delayed acknowledgement
    (found by bench/throughput.py; the server now sets TCP_NODELAY)."""
    server = harness.Server(args.server, ["--threads", "2"], name="server (latency)")
    if not server.start(checks):
        return
    with harness.session() as s:
        s.get(server.url("/v1/health"), timeout=10)  # connect and warm up
        started = time.monotonic()
        statuses = [s.get(server.url("/v1/health"), timeout=10).status_code for _ in range(20)]
        elapsed = time.monotonic() - started
    checks.check("latency: 20 requests on one kept-alive connection all answered 200",
                 statuses == [200] * 20, statuses)
    checks.check("latency: they take under 0.4 s together (Nagle's delay would add ~0.8 s)", elapsed < 0.4,
                 f"{elapsed:.3f} s")
    server.stop(checks)


def main():
    keep_alive_latency()
    # One worker, one waiting connection allowed, kept-alive connections held for 5 s.
    server = harness.Server(args.server, ["--threads", "1", "--max-waiting-connections", "1",
                                          "--keep-alive-timeout", "5"], name="server (1 worker)")
    if not server.start(checks):
        return
    held = hold_connection(server)          # takes the only worker
    waiting = waiting_connection(server)    # fills the queue
    time.sleep(0.2)
    started = time.monotonic()
    try:
        r = harness.fresh_http("GET", server, "/v1/health", timeout=10)
        elapsed = time.monotonic() - started
        checks.check("overload: an extra client is answered 503", r.status_code == 503, harness.describe(r))
        checks.check("overload: the answer is quick (< 2 s, not after the keep-alive timeout)", elapsed < 2.0,
                     f"{elapsed:.2f} s")
        checks.check("overload: Retry-After is set", r.headers.get("Retry-After") == "1", dict(r.headers))
        harness.check_problem(checks, "overload: a problem document", r, status=503)
        schema = harness.OpenAPI(args.repo)
        schema.check_component(checks, "overload: the problem validates against openapi.yaml", r.json(), "Problem")
    except Exception as e:  # noqa: BLE001
        checks.check("overload: an extra client is answered", False, f"{type(e).__name__}: {e}")
    held.close()
    waiting.close()
    # Recovery: once the held connections are gone, requests are answered normally again.
    deadline = time.monotonic() + 15
    status = None
    while time.monotonic() < deadline:
        try:
            status = harness.fresh_http("GET", server, "/v1/health", timeout=10).status_code
        except Exception:  # noqa: BLE001
            status = None
        if status == 200:
            break
        time.sleep(0.25)
    checks.check("overload: the server recovers when the load stops", status == 200, f"last status {status}")
    server.stop(checks)


harness.crash_guard(checks, main)
