"""Shared pieces of bench/load_mixed.py, bench/soak.py and bench/overload.py (standard library only).

* `Server`: planckton-server on 127.0.0.1 and an ephemeral port, started with every PLANCKTON_*
  variable removed from its environment and the given flags; its stderr (the access log) is drained
  in a thread and counted by status; `rss_kib()` and `fd_count()` read /proc/PID.
* `request_kinds()`: the request documents of the load scripts, all invented: Planck spectra
  (W/m2/nm over 300-2500 nm, 1 % Gaussian noise, fixed seeds) of 100, 1,000 and 10,000 points as
  JSON, a 10-band photometry SED, an NDJSON batch of 8 spectra, and a CSV table with its units as
  query parameters.
* `run_wrk()`: wrk against 127.0.0.1 only, bounded by --duration and a subprocess timeout, with
  bench/wrk_mixed.lua; returns the script's summary line as a dict.
"""

import json
import math
import os
import random
import re
import signal
import subprocess
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.request

HERE = os.path.dirname(os.path.abspath(__file__))
WRK_MIXED = os.path.join(HERE, "wrk_mixed.lua")
LISTEN_TIMEOUT_S = 30
STOP_TIMEOUT_S = 90

# CODATA 2018 exact values (h, c, k).
H = 6.62607015e-34
C = 299792458.0
K_B = 1.380649e-23


class RunFailure(Exception):
    """Something the measurement needs could not be run, or the server misbehaved."""


# ----------------------------------------------------------------------------- request bodies

def planck_spectrum(n, temperature, seed, lo_nm=300.0, hi_nm=2500.0, solid_angle=2.0e-19):
    """x in nm, y in W/m2/nm: solid_angle * B_lambda(T) with 1 % Gaussian noise, y_error 1 %."""
    rng = random.Random(seed)
    x, y, e = [], [], []
    for i in range(n):
        nm = lo_nm + (hi_nm - lo_nm) * i / (n - 1)
        lam = nm * 1e-9
        b = 2.0 * H * C * C / lam ** 5 / math.expm1(H * C / (lam * K_B * temperature))  # W/m2/m/sr
        value = solid_angle * b * 1e-9
        sigma = 0.01 * value
        x.append(round(nm, 6))
        y.append(float("%.6e" % (value + rng.gauss(0.0, sigma))))
        e.append(float("%.3e" % sigma))
    return x, y, e


def spectrum_document(n, temperature, seed):
    x, y, e = planck_spectrum(n, temperature, seed)
    return {"spectrum": {"x": x, "x_unit": "nm", "y": y, "y_unit": "W/m2/nm", "y_error": e}}


def compact(document):
    return json.dumps(document, separators=(",", ":"), allow_nan=False)


def photometry_document():
    """A 10-band SED of an invented 5,600 K star (AB magnitudes, made up for this benchmark)."""
    bands = [("johnson-u", 11.02), ("johnson-b", 10.31), ("johnson-v", 9.74), ("cousins-r", 9.52),
             ("cousins-i", 9.38), ("2mass-j", 9.27), ("2mass-h", 9.21), ("2mass-ks", 9.22),
             ("wise-w1", 9.41), ("wise-w2", 9.55)]
    return {"photometry": [{"band": b, "value": v, "error": 0.03, "unit": "ABmag"} for b, v in bands]}


def csv_table(n, temperature, seed):
    x, y, e = planck_spectrum(n, temperature, seed)
    rows = ["x,y,y_error"] + ["%r,%r,%r" % row for row in zip(x, y, e)]
    return "\n".join(rows) + "\n"


def request_kinds():
    """name -> dict(method, path, content_type, body (bytes), weight, expect (what a 200 holds))."""
    kinds = {}

    def add(name, path, content_type, body, weight, expect):
        kinds[name] = {"method": "POST", "path": path, "content_type": content_type,
                       "body": body.encode("ascii"), "weight": weight, "expect": expect}

    add("spectrum_100", "/v1/fit", "application/json", compact(spectrum_document(100, 4200.0, 11)), 3,
        "temperature")
    add("spectrum_1000", "/v1/fit", "application/json", compact(spectrum_document(1000, 5800.0, 12)), 3,
        "temperature")
    add("spectrum_10000", "/v1/fit", "application/json", compact(spectrum_document(10000, 7300.0, 13)), 1,
        "temperature")
    add("photometry", "/v1/fit", "application/json", compact(photometry_document()), 2, "temperature")
    lines = [compact(dict(spectrum_document(300, 3000.0 + 500.0 * i, 100 + i), id="star-%d" % i))
             for i in range(8)]
    add("batch_8x300", "/v1/fit/batch", "application/x-ndjson", "\n".join(lines) + "\n", 1, '"status"')
    add("csv_500", "/v1/fit?x_unit=nm&y_unit=W/m2/nm", "text/csv", csv_table(500, 6400.0, 14), 2,
        "temperature")
    return kinds


def write_manifest(kinds, names, directory):
    """The manifest wrk_mixed.lua reads: one line per kind, tab-separated:
    weight, method, path, content type, body file, name."""
    lines = []
    for name in names:
        kind = kinds[name]
        body_path = os.path.join(directory, name + ".body")
        with open(body_path, "wb") as handle:
            handle.write(kind["body"])
        lines.append("\t".join([str(kind["weight"]), kind["method"], kind["path"], kind["content_type"],
                                body_path, name]))
    manifest = os.path.join(directory, "manifest.tsv")
    with open(manifest, "w") as handle:
        handle.write("\n".join(lines) + "\n")
    return manifest


# ----------------------------------------------------------------------------- the server

class Server:
    """planckton-server on 127.0.0.1, an ephemeral port; stderr drained and counted in a thread."""

    def __init__(self, path, flags=()):
        env = {k: v for k, v in os.environ.items() if not k.startswith("PLANCKTON_")}
        self.command = [path, "--bind", "127.0.0.1", "--port", "0"] + list(flags)
        self.proc = subprocess.Popen(self.command, stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                     stderr=subprocess.PIPE, env=env)
        self.pid = self.proc.pid
        self.listening = None
        self.port = None
        self.lock = threading.Lock()
        self.log_status = {}
        self.log_lines = 0
        self.events = {}
        self.other_lines = []
        self.tail = []
        self._first = threading.Event()
        self._reader = threading.Thread(target=self._read, daemon=True)
        self._reader.start()
        if not self._first.wait(LISTEN_TIMEOUT_S) or self.listening is None:
            self.kill()
            raise RunFailure("server did not report listening: %s" % " | ".join(self.tail)[:800])
        if self.listening.get("address") != "127.0.0.1":
            self.kill()
            raise RunFailure("server listens on %r, not 127.0.0.1" % self.listening.get("address"))
        self.port = int(self.listening["port"])

    def _read(self):
        first = True
        for raw in self.proc.stderr:
            line = raw.decode("utf-8", "replace").rstrip("\n")
            try:
                event = json.loads(line)
            except ValueError:
                event = None
            with self.lock:
                self.tail = (self.tail + [line])[-20:]
                if first:
                    first = False
                    if isinstance(event, dict) and event.get("event") == "listening":
                        self.listening = event
                    self._first.set()
                    continue
                if isinstance(event, dict) and event.get("event") == "request":
                    self.log_lines += 1
                    status = str(event.get("status"))
                    self.log_status[status] = self.log_status.get(status, 0) + 1
                elif isinstance(event, dict) and "event" in event:
                    self.events[event["event"]] = self.events.get(event["event"], 0) + 1
                elif len(self.other_lines) < 10:
                    self.other_lines.append(line)
        self._first.set()

    def statuses(self):
        with self.lock:
            return dict(self.log_status)

    def url(self, path):
        return "http://127.0.0.1:%d%s" % (self.port, path)

    def alive(self):
        return self.proc.poll() is None

    def rss_kib(self):
        with open("/proc/%d/status" % self.pid) as handle:
            for line in handle:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1])
        raise RunFailure("no VmRSS in /proc/%d/status" % self.pid)

    def fd_count(self):
        return len(os.listdir("/proc/%d/fd" % self.pid))

    def threads(self):
        with open("/proc/%d/status" % self.pid) as handle:
            for line in handle:
                if line.startswith("Threads:"):
                    return int(line.split()[1])
        return -1

    def stop(self):
        """SIGTERM; the exit code, or None when it had to be killed."""
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(STOP_TIMEOUT_S)
            except subprocess.TimeoutExpired:
                self.kill()
                return None
        self._reader.join(10)
        return self.proc.returncode

    def kill(self):
        if self.proc.poll() is None:
            self.proc.kill()
            try:
                self.proc.wait(10)
            except subprocess.TimeoutExpired:
                pass


def post(server, kind, timeout=30):
    """One request of a kind on a fresh connection: (status, seconds, body bytes, headers)."""
    request = urllib.request.Request(server.url(kind["path"]), data=kind["body"], method=kind["method"],
                                     headers={"Content-Type": kind["content_type"]})
    started = time.monotonic()
    try:
        with urllib.request.urlopen(request, timeout=timeout) as response:
            body = response.read()
            return response.status, time.monotonic() - started, body, dict(response.headers)
    except urllib.error.HTTPError as error:
        body = error.read()
        return error.code, time.monotonic() - started, body, dict(error.headers)


def check_kinds(server, kinds):
    """Each kind answered once, 200, with what a good answer holds; raises RunFailure otherwise."""
    for name, kind in kinds.items():
        status, seconds, body, _ = post(server, kind)
        text = body.decode("utf-8", "replace")
        if status != 200 or kind["expect"] not in text:
            raise RunFailure("check %s: status %d, %s" % (name, status, text[:300]))
        if kind["path"] == "/v1/fit/batch":
            lines = [json.loads(l) for l in text.splitlines() if l.strip()]
            bad = [l for l in lines if l.get("status") != 200 or "response" not in l]
            if len(lines) != 8 or bad:
                raise RunFailure("check %s: %d lines, bad %s" % (name, len(lines), str(bad)[:300]))
        print("check: %-15s %7d-byte body -> 200 in %.1f ms" % (name, len(kind["body"]), seconds * 1e3))


def loadavg():
    with open("/proc/loadavg") as handle:
        return handle.read().strip()


# ----------------------------------------------------------------------------- wrk

def run_wrk(server, manifest, duration_s, connections, threads, timeout_s=10, delay_ms=0, extra_wait_s=60):
    """wrk with wrk_mixed.lua on the manifest, loopback only; the summary dict of the script."""
    env = dict(os.environ, PLANCKTON_WRK_MANIFEST=manifest, PLANCKTON_WRK_DELAY_MS=str(delay_ms))
    command = ["wrk", "--threads", str(threads), "--connections", str(connections),
               "--duration", "%ds" % duration_s, "--timeout", "%ds" % timeout_s, "--latency",
               "--script", WRK_MIXED, server.url("/")]
    try:
        proc = subprocess.run(command, capture_output=True, text=True, env=env,
                              timeout=duration_s + extra_wait_s, stdin=subprocess.DEVNULL)
    except FileNotFoundError:
        raise RunFailure("wrk not found: apt-get install -y wrk")
    except subprocess.TimeoutExpired:
        raise RunFailure("wrk did not finish within %d s" % (duration_s + extra_wait_s))
    if proc.returncode != 0:
        raise RunFailure("wrk exited %d: %s" % (proc.returncode, (proc.stderr or proc.stdout)[:800]))
    summary = None
    for line in proc.stdout.splitlines():
        if line.startswith("planckton-wrk-mixed: "):
            summary = json.loads(line[len("planckton-wrk-mixed: "):])
    if summary is None:
        raise RunFailure("no planckton-wrk-mixed line in wrk's output:\n" + proc.stdout[-1500:])
    m = re.search(r"Socket errors: connect (\d+), read (\d+), write (\d+), timeout (\d+)", proc.stdout)
    summary["wrk_text_socket_errors"] = list(map(int, m.groups())) if m else [0, 0, 0, 0]
    summary["stdout"] = proc.stdout
    return summary


def socket_errors(summary):
    e = summary["errors"]
    return e["connect"] + e["read"] + e["write"] + e["timeout"]


def fmt_ms(us):
    return "%.2f ms" % (us / 1e3) if us < 100e3 else "%.0f ms" % (us / 1e3)


def temporary_directory():
    return tempfile.TemporaryDirectory(prefix="planckton-load-")


def verdict(problems, alive, code):
    """Adds the server's own failures to problems, prints them and the verdict; the exit code."""
    if not alive:
        problems.append("the server died during the load")
    if code != 0:
        problems.append("the server exited %s after SIGTERM" % code)
    for problem in problems:
        print("problem: " + problem, file=sys.stderr)
    print("verdict: %s" % ("PASS" if not problems else "FAIL"))
    return 1 if problems else 0
