#!/usr/bin/python3
"""HTTP throughput of planckton-server POST /v1/fit vs the in-process fit rate.

Usage: throughput.py --server PATH --bench PATH [--duration 10] [--connections 2] [--threads 2]

Needs wrk (Debian package "wrk") and Debian's /usr/bin/python3 (standard library only).

In one run:
* the request body: the spectrum of `BENCH --dump-spectrum=1000` (CSV, '#' comments, header
  x,y,y_error; x in nm, y in W/m2/nm) as the document
  {"spectrum": {"x": [...], "x_unit": "nm", "y": [...], "y_unit": "W/m2/nm", "y_error": [...]}},
  every number written so that it reads back to the same double (Python's shortest round-trip
  repr of the dump's %.17g values);
* the server: `SERVER --bind 127.0.0.1 --port 0 --threads 2` with every PLANCKTON_* variable
  removed from its environment (so no keys, no CORS, the documented defaults); the port is read
  from its first stderr line {"event":"listening",...,"port":N}; its access log is drained and
  counted in the background; one POST /v1/fit must answer 200 with a fit near the dump's true
  temperature;
* wrk on the loopback address only, for --duration seconds, --connections connections,
  --threads threads, --latency, bench/wrk_post.lua POSTing the body with Content-Type
  application/json; requests/s, p50, p99, non-2xx responses and socket errors are read from the
  script's summary line (and cross-checked with wrk's own text);
* the server is stopped with SIGTERM; it must write {"event":"stopped"} and exit 0;
* then, with the server gone so the two measurements do not share the cores,
  `BENCH --benchmark_filter=^BM_FitSpectrum/1000$ --benchmark_format=json
  --benchmark_repetitions=5`: the median real_time gives the in-process single-thread fit rate.

It prints server fits/s, in-process fits/s, their ratio (the target is >= 40 %), p50, p99 and the
errors. This is a report: it exits 0 when everything ran and every request succeeded, even if the
target is missed; non-zero when something failed to run, the server misbehaved, or any request
errored (a non-2xx status or a socket error).

Caution: wrk runs on the same 2-core machine as the server, so the server's 2 worker threads share
the cores with wrk's threads; the ratio is a lower bound of what the server does on its own cores.
"""

import argparse
import json
import os
import re
import signal
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.request

N_POINTS = 1000
TARGET_RATIO = 0.40
SERVER_THREADS = 2
LISTEN_TIMEOUT_S = 30
STOP_TIMEOUT_S = 30
TIME_UNIT_TO_US = {"ns": 1e-3, "us": 1.0, "ms": 1e3, "s": 1e6}
HERE = os.path.dirname(os.path.abspath(__file__))
WRK_SCRIPT = os.path.join(HERE, "wrk_post.lua")


class RunFailure(Exception):
    """Something needed for the report could not be run, or the server misbehaved."""


# ----------------------------------------------------------------------------- request body

def dump_request(bench):
    proc = subprocess.run([bench, "--dump-spectrum=%d" % N_POINTS], capture_output=True,
                          text=True, timeout=120, stdin=subprocess.DEVNULL)
    if proc.returncode != 0:
        raise RunFailure("%s --dump-spectrum=%d exited %d: %s"
                         % (bench, N_POINTS, proc.returncode, proc.stderr.strip()[:500]))
    lines = proc.stdout.splitlines()
    comments = [l for l in lines if l.lstrip().startswith("#")]
    rows = [l for l in lines if l.strip() and not l.lstrip().startswith("#")]
    if not rows or rows[0].replace(" ", "") != "x,y,y_error":
        raise RunFailure("dump: expected header x,y,y_error, got %r" % (rows[0] if rows else None))
    text = "\n".join(comments).lower()
    if "nm" not in text or "w/m2/nm" not in text:
        raise RunFailure("dump: comments do not state x in nm and y in W/m2/nm: %r" % comments)
    m = re.search(r"true temperature\s*[:=]\s*([-+0-9.eE]+)", text)
    t_true = float(m.group(1)) if m else None
    x, y, e = [], [], []
    for number, row in enumerate(rows[1:], start=2):
        cells = row.split(",")
        if len(cells) != 3:
            raise RunFailure("dump: data row %d has %d cells: %r" % (number, len(cells), row))
        x.append(float(cells[0]))
        y.append(float(cells[1]))
        e.append(float(cells[2]))
    if len(x) != N_POINTS:
        raise RunFailure("dump: %d rows, expected %d" % (len(x), N_POINTS))
    document = {"spectrum": {"x": x, "x_unit": "nm", "y": y, "y_unit": "W/m2/nm", "y_error": e}}
    body = json.dumps(document, separators=(",", ":"), allow_nan=False).encode("ascii")
    # Full precision: the body must read back to exactly the dump's doubles.
    back = json.loads(body)["spectrum"]
    if back["x"] != x or back["y"] != y or back["y_error"] != e:
        raise RunFailure("request body does not round-trip the dump's values")
    return body, t_true


# ----------------------------------------------------------------------------- the server

class Server:
    """planckton-server on 127.0.0.1, an ephemeral port; stderr drained in a thread."""

    def __init__(self, path):
        env = {k: v for k, v in os.environ.items() if not k.startswith("PLANCKTON_")}
        self.proc = subprocess.Popen(
            [path, "--bind", "127.0.0.1", "--port", "0", "--threads", str(SERVER_THREADS)],
            stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env)
        self.listening = None
        self.port = None
        self.lock = threading.Lock()
        self.log_lines = 0
        self.log_status = {}        # status -> count over access-log lines
        self.log_duration_ms = []   # duration_ms of the POST /v1/fit lines
        self.other_lines = []       # non-JSON or unexpected lines (first few)
        self.stopped_event = False
        self.tail = []
        self._first = threading.Event()
        self._reader = threading.Thread(target=self._read, daemon=True)
        self._reader.start()
        if not self._first.wait(LISTEN_TIMEOUT_S):
            self.kill()
            raise RunFailure("server wrote no first stderr line within %d s" % LISTEN_TIMEOUT_S)
        if self.listening is None:
            try:
                code = self.proc.wait(2)
            except subprocess.TimeoutExpired:
                code = None
            self.kill()
            raise RunFailure("server's first stderr line is not a listening event (exit %s): %s"
                             % (code, " | ".join(self.tail)[:800]))
        if self.listening.get("address") != "127.0.0.1":
            self.kill()
            raise RunFailure("server listens on %r, not 127.0.0.1" % self.listening.get("address"))
        self.port = int(self.listening["port"])
        if not 0 < self.port < 65536:
            self.kill()
            raise RunFailure("listening event gives port %r" % self.listening["port"])

    def _read(self):
        first = True
        for raw in self.proc.stderr:
            line = raw.decode("utf-8", "replace").rstrip("\n")
            with self.lock:
                self.tail = (self.tail + [line])[-20:]
            event = None
            try:
                event = json.loads(line)
            except ValueError:
                pass
            if first:
                first = False
                if isinstance(event, dict) and event.get("event") == "listening" and "port" in event:
                    self.listening = event
                self._first.set()
                continue
            with self.lock:
                if isinstance(event, dict) and event.get("event") == "request":
                    self.log_lines += 1
                    status = str(event.get("status"))
                    self.log_status[status] = self.log_status.get(status, 0) + 1
                    if event.get("path") == "/v1/fit" and len(self.log_duration_ms) < 2000000:
                        try:
                            self.log_duration_ms.append(float(event["duration_ms"]))
                        except (KeyError, TypeError, ValueError):
                            pass
                elif isinstance(event, dict) and event.get("event") == "stopped":
                    self.stopped_event = True
                elif len(self.other_lines) < 10:
                    self.other_lines.append(line)
        self._first.set()           # EOF before any line

    def url(self, path):
        return "http://127.0.0.1:%d%s" % (self.port, path)

    def stop(self):
        """SIGTERM; returns the exit code (None when it had to be killed)."""
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(STOP_TIMEOUT_S)
            except subprocess.TimeoutExpired:
                self.kill()
                self._reader.join(5)
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


def check_one_fit(server, body, t_true):
    request = urllib.request.Request(server.url("/v1/fit"), data=body, method="POST",
                                     headers={"Content-Type": "application/json"})
    try:
        with urllib.request.urlopen(request, timeout=30) as response:
            status, payload = response.status, response.read()
            ctype = response.headers.get("Content-Type", "")
    except urllib.error.HTTPError as error:
        raise RunFailure("POST /v1/fit answered %d: %s"
                         % (error.code, error.read().decode("utf-8", "replace")[:500]))
    except (urllib.error.URLError, OSError) as error:
        raise RunFailure("POST /v1/fit failed: %s" % error)
    if status != 200:
        raise RunFailure("POST /v1/fit answered %d" % status)
    if "application/json" not in ctype:
        raise RunFailure("POST /v1/fit answered Content-Type %r" % ctype)
    try:
        document = json.loads(payload)
        temperature = float(document["parameters"]["temperature"]["value"])
    except (ValueError, KeyError, TypeError) as error:
        raise RunFailure("POST /v1/fit: no parameters.temperature.value in the response (%s)"
                         % error)
    if t_true is not None and abs(temperature - t_true) > 0.01 * t_true:
        raise RunFailure("POST /v1/fit: temperature %.6g K, true %.6g K" % (temperature, t_true))
    return temperature, len(payload)


# ----------------------------------------------------------------------------- wrk

def parse_wrk_duration_us(text):
    m = re.fullmatch(r"([0-9.]+)(us|ms|s|m|h)", text)
    if not m:
        return None
    return float(m.group(1)) * {"us": 1, "ms": 1e3, "s": 1e6, "m": 6e7, "h": 3.6e9}[m.group(2)]


def run_wrk(server, body_path, duration, connections, threads):
    env = dict(os.environ, PLANCKTON_WRK_BODY=body_path)
    command = ["wrk", "--threads", str(threads), "--connections", str(connections),
               "--duration", "%ds" % duration, "--timeout", "10s", "--latency",
               "--script", WRK_SCRIPT, server.url("/v1/fit")]
    try:
        proc = subprocess.run(command, capture_output=True, text=True, env=env,
                              timeout=duration + 60, stdin=subprocess.DEVNULL)
    except FileNotFoundError:
        raise RunFailure("wrk not found: apt-get install -y wrk")
    except subprocess.TimeoutExpired:
        raise RunFailure("wrk did not finish within %d s" % (duration + 60))
    if proc.returncode != 0:
        raise RunFailure("wrk exited %d: %s" % (proc.returncode,
                                                (proc.stderr or proc.stdout).strip()[:800]))
    summary = None
    for line in proc.stdout.splitlines():
        if line.startswith("planckton-wrk: "):
            summary = json.loads(line[len("planckton-wrk: "):])
    if summary is None:
        raise RunFailure("no planckton-wrk summary line in wrk's output:\n" + proc.stdout[-1500:])
    # wrk's own text, as a cross-check.
    text = {}
    m = re.search(r"Requests/sec:\s*([0-9.]+)", proc.stdout)
    if m:
        text["rps"] = float(m.group(1))
    for pct in ("50", "99"):
        m = re.search(r"^\s*%s(?:\.0+)?%%\s+(\S+)" % pct, proc.stdout, re.M)
        if m:
            text["p" + pct] = parse_wrk_duration_us(m.group(1))
    m = re.search(r"Non-2xx or 3xx responses:\s*(\d+)", proc.stdout)
    text["non_2xx_or_3xx"] = int(m.group(1)) if m else 0
    m = re.search(r"Socket errors: connect (\d+), read (\d+), write (\d+), timeout (\d+)",
                  proc.stdout)
    if m:
        text["socket"] = dict(zip(("connect", "read", "write", "timeout"), map(int, m.groups())))
    return summary, text, proc.stdout


# ----------------------------------------------------------------------------- in process

def in_process_median_us(bench):
    command = [bench, "--benchmark_filter=^BM_FitSpectrum/%d$" % N_POINTS,
               "--benchmark_format=json", "--benchmark_repetitions=5"]
    proc = subprocess.run(command, capture_output=True, text=True, timeout=600,
                          stdin=subprocess.DEVNULL)
    if proc.returncode != 0:
        raise RunFailure("%s exited %d: %s" % (" ".join(command), proc.returncode,
                                               proc.stderr.strip()[:500]))
    start = proc.stdout.find("{")
    if start < 0:
        raise RunFailure("no JSON from %s" % " ".join(command))
    entries = json.loads(proc.stdout[start:]).get("benchmarks", [])
    if not entries:
        raise RunFailure("no benchmark BM_FitSpectrum/%d in %s" % (N_POINTS, bench))

    def to_us(entry):
        unit = entry.get("time_unit", "ns")
        if unit not in TIME_UNIT_TO_US:
            raise RunFailure("unknown time_unit %r" % unit)
        return float(entry["real_time"]) * TIME_UNIT_TO_US[unit]

    medians = [e for e in entries if e.get("run_type") == "aggregate"
               and e.get("aggregate_name") == "median"]
    if medians:
        return to_us(medians[0])
    iterations = [e for e in entries if e.get("run_type", "iteration") == "iteration"]
    if not iterations:
        raise RunFailure("no repetitions of BM_FitSpectrum/%d in the JSON" % N_POINTS)
    return statistics.median(to_us(e) for e in iterations)


# ----------------------------------------------------------------------------- main

def fmt_us(us):
    return "%.2f ms" % (us / 1e3) if us >= 1000 else "%.0f us" % us


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--server", required=True, help="build/server/planckton-server")
    parser.add_argument("--bench", required=True, help="build/bench/planckton-bench")
    parser.add_argument("--duration", type=int, default=10, help="wrk seconds (1-300)")
    parser.add_argument("--connections", type=int, default=2)
    parser.add_argument("--threads", type=int, default=2, help="wrk threads")
    args = parser.parse_args()
    if not 1 <= args.duration <= 300:
        parser.error("--duration must be 1..300 seconds")
    if args.connections < 1 or args.threads < 1:
        parser.error("--connections and --threads must be >= 1")
    if args.threads > args.connections:
        parser.error("--threads must not exceed --connections (wrk's rule)")
    for path in (args.server, args.bench):
        if not os.access(path, os.X_OK):
            parser.error("%s is not an executable file" % path)

    server = None
    problems = []
    try:
        body, t_true = dump_request(args.bench)
        with tempfile.NamedTemporaryFile(prefix="planckton-body-", suffix=".json",
                                         delete=False) as handle:
            handle.write(body)
            body_path = handle.name
        try:
            print("request body: %d points, %d bytes" % (N_POINTS, len(body)))
            server = Server(args.server)
            print("server: %s" % json.dumps(server.listening))
            temperature, response_bytes = check_one_fit(server, body, t_true)
            print("check: POST /v1/fit -> 200, T = %.6f K (true %s K), %d-byte response"
                  % (temperature, t_true, response_bytes))
            print("wrk: %d s, %d connections, %d threads, 127.0.0.1:%d ..."
                  % (args.duration, args.connections, args.threads, server.port), flush=True)
            wrk, wrk_text, wrk_out = run_wrk(server, body_path, args.duration,
                                             args.connections, args.threads)
        finally:
            os.unlink(body_path)
        code = server.stop()
        if code is None:
            problems.append("server did not exit within %d s of SIGTERM (killed)" % STOP_TIMEOUT_S)
        elif code != 0:
            problems.append("server exited %d after SIGTERM" % code)
        if not server.stopped_event:
            problems.append('server wrote no {"event":"stopped"} line')
        print("server stopped: exit %s" % code)
        median_us = in_process_median_us(args.bench)
    except RunFailure as error:
        print("throughput.py: %s" % error, file=sys.stderr)
        if server is not None:
            server.kill()
            if server.tail:
                print("server stderr (last lines):\n  " + "\n  ".join(server.tail[-8:]),
                      file=sys.stderr)
        return 1
    finally:
        if server is not None:
            server.kill()

    seconds = wrk["duration_us"] / 1e6
    server_rate = wrk["requests"] / seconds if seconds > 0 else 0.0
    inproc_rate = 1e6 / median_us
    ratio = server_rate / inproc_rate
    e = wrk["errors"]
    socket_errors = e["connect"] + e["read"] + e["write"] + e["timeout"]
    non_2xx = wrk["non_2xx"]
    log_non_200 = {k: v for k, v in server.log_status.items() if k != "200"}

    print()
    print("| measure | value |")
    print("|---|---:|")
    print("| server fits/s (POST /v1/fit, %d conn, %d wrk threads, %d server threads) | %.0f |"
          % (args.connections, args.threads, SERVER_THREADS, server_rate))
    print("| in-process fits/s (BM_FitSpectrum/%d, 1 thread, median of 5: %.1f us) | %.0f |"
          % (N_POINTS, median_us, inproc_rate))
    print("| ratio server / in-process (target >= %.0f %%) | %.1f %% |"
          % (TARGET_RATIO * 100, ratio * 100))
    print("| latency p50 | %s |" % fmt_us(wrk["latency_us"]["p50"]))
    print("| latency p99 | %s |" % fmt_us(wrk["latency_us"]["p99"]))
    print("| requests | %d in %.2f s |" % (wrk["requests"], seconds))
    print("| non-2xx responses | %d%s |" % (non_2xx, (" %s" % wrk["status_counts"]) if non_2xx else ""))
    print("| socket errors (connect/read/write/timeout) | %d/%d/%d/%d |"
          % (e["connect"], e["read"], e["write"], e["timeout"]))
    print()
    print("target: ratio >= %.0f %%: %s" % (TARGET_RATIO * 100,
                                           "MET" if ratio >= TARGET_RATIO else "MISSED"))
    print("wrk text: %.2f requests/s, p50 %s, p99 %s, non-2xx-or-3xx %d, socket %s"
          % (wrk_text.get("rps", float("nan")),
             fmt_us(wrk_text["p50"]) if wrk_text.get("p50") else "?",
             fmt_us(wrk_text["p99"]) if wrk_text.get("p99") else "?",
             wrk_text["non_2xx_or_3xx"], wrk_text.get("socket", "none")))
    print("server access log: %d request lines, statuses %s"
          % (server.log_lines, dict(sorted(server.log_status.items()))))
    if server.log_duration_ms:
        d = sorted(server.log_duration_ms)
        print("server-reported duration_ms of POST /v1/fit: median %.3f, p99 %.3f (%d lines)"
              % (d[len(d) // 2], d[min(len(d) - 1, int(0.99 * len(d)))], len(d)))
    if server.other_lines:
        print("server stderr, other lines: %s" % server.other_lines)
    print("caution: wrk shares the machine's %d cores with the server" % (os.cpu_count() or 0))

    if non_2xx:
        problems.append("%d non-2xx responses: %s" % (non_2xx, wrk["status_counts"]))
    if socket_errors:
        problems.append("%d socket errors: %s" % (socket_errors, e))
    if log_non_200:
        problems.append("server logged non-200 statuses: %s" % log_non_200)
    # One check request plus wrk's completed requests; wrk may leave a few in flight at the end.
    if server.log_lines < wrk["requests"] + 1:
        problems.append("server logged %d requests, wrk completed %d (+1 check)"
                        % (server.log_lines, wrk["requests"]))
    if wrk["requests"] == 0:
        problems.append("wrk completed no request")
    for problem in problems:
        print("problem: " + problem, file=sys.stderr)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
