#!/usr/bin/python3
"""Soak of planckton-server: a steady, moderate mixed load for 10 minutes; memory and descriptors.

Usage: soak.py --server PATH [--duration 600] [--warm-up 60] [--interval 10] [--connections 8]
               [--delay-ms 4] [--server-threads 2] [--max-growth 0.05]

Needs wrk (Debian package "wrk") and /usr/bin/python3 (standard library only). Loopback only; wrk
runs for --duration seconds (at most 3,600) under a subprocess timeout.

In one run:
* the server: `SERVER --bind 127.0.0.1 --port 0 --threads T`, no PLANCKTON_* variables; each
  request kind of bench/load_support.py is posted once (200 with a fit);
* idle figures: VmRSS (/proc/PID/status) and the number of open descriptors (/proc/PID/fd);
* wrk with bench/wrk_mixed.lua on the whole mix (spectra of 100 to 10,000 points, photometry, an
  NDJSON batch, a CSV table) at --connections connections, each pausing --delay-ms before each
  request (a steady load that leaves the cores partly idle), for --duration seconds;
* every --interval seconds: elapsed time, VmRSS, descriptors, threads and /proc/loadavg, printed as
  a time series;
* after wrk stops and the keep-alive timeout (5 s) has passed, the idle descriptors again.

Criteria (each printed with its figures; the exit status is 1 when one fails):
* memory: the median VmRSS of the last three samples exceeds the median of the first three samples
  after --warm-up by at most --max-growth (5 %); the largest sample after warm-up is reported too;
* descriptors: during the load at most idle + connections + 4 (a listener, and a few being
  accepted or closed); after the load exactly as many as before it (no descriptor leaked);
* every response 2xx, no socket error, the server alive and exiting 0 on SIGTERM.
"""

import argparse
import statistics
import sys
import threading
import time

import load_support as ls


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--server", required=True)
    parser.add_argument("--duration", type=int, default=600, help="seconds of load (60-3600)")
    parser.add_argument("--warm-up", type=int, default=60, help="seconds before the memory baseline")
    parser.add_argument("--interval", type=int, default=10, help="seconds between samples")
    parser.add_argument("--connections", type=int, default=8)
    parser.add_argument("--delay-ms", type=int, default=4, help="pause of each connection before each request")
    parser.add_argument("--server-threads", type=int, default=2)
    parser.add_argument("--max-growth", type=float, default=0.05)
    args = parser.parse_args()
    if not 60 <= args.duration <= 3600:
        parser.error("--duration must be 60..3600 seconds")
    if not 0 < args.warm_up < args.duration - 6 * args.interval:
        parser.error("--warm-up must leave at least six samples after it")
    if not 1 <= args.interval <= 60 or not 1 <= args.connections <= 256:
        parser.error("--interval must be 1..60 and --connections 1..256")

    kinds = ls.request_kinds()
    server = None
    samples = []
    try:
        server = ls.Server(args.server, ["--threads", str(args.server_threads)])
        print("server: %s" % server.listening)
        ls.check_kinds(server, kinds)
        time.sleep(6)  # the check's connections are closed after the keep-alive timeout
        idle_rss, idle_fds = server.rss_kib(), server.fd_count()
        print("idle: VmRSS %d KiB, %d descriptors, %d threads; loadavg %s"
              % (idle_rss, idle_fds, server.threads(), ls.loadavg()))
        print("load: %d connections, %d ms pause before each request, %d s" % (
            args.connections, args.delay_ms, args.duration), flush=True)
        result = {}
        with ls.temporary_directory() as directory:
            manifest = ls.write_manifest(kinds, list(kinds), directory)

            def drive():
                try:
                    result["wrk"] = ls.run_wrk(server, manifest, args.duration, args.connections, 2,
                                               timeout_s=10, delay_ms=args.delay_ms)
                except ls.RunFailure as error:
                    result["error"] = str(error)

            worker = threading.Thread(target=drive, daemon=True)
            started = time.monotonic()
            worker.start()
            print()
            print("| t (s) | VmRSS (KiB) | descriptors | threads | loadavg (1/5/15 min) | server log 200 |")
            print("|---:|---:|---:|---:|---|---:|")
            next_at = started + args.interval
            while worker.is_alive():
                worker.join(max(0.0, next_at - time.monotonic()))
                if not worker.is_alive() or not server.alive():
                    break
                t = time.monotonic() - started
                next_at += args.interval
                if t > args.duration:
                    continue
                sample = (t, server.rss_kib(), server.fd_count(), server.threads(), ls.loadavg())
                samples.append(sample)
                print("| %.0f | %d | %d | %d | %s | %d |" % (sample[0], sample[1], sample[2], sample[3],
                                                            " ".join(sample[4].split()[:3]),
                                                            server.statuses().get("200", 0)), flush=True)
            worker.join(args.duration + 120)
        if "error" in result:
            raise ls.RunFailure(result["error"])
        wrk = result["wrk"]
        alive = server.alive()
        time.sleep(7)  # past the keep-alive timeout: wrk's connections are closed
        after_fds = server.fd_count() if alive else -1
        after_rss = server.rss_kib() if alive else -1
        code = server.stop()
    except ls.RunFailure as error:
        print("soak.py: %s" % error, file=sys.stderr)
        if server is not None:
            server.kill()
        return 1

    problems = []
    after_warm = [s for s in samples if s[0] >= args.warm_up]
    if len(after_warm) < 6:
        problems.append("only %d samples after warm-up" % len(after_warm))
        base = last = peak = float("nan")
    else:
        base = statistics.median(s[1] for s in after_warm[:3])
        last = statistics.median(s[1] for s in after_warm[-3:])
        peak = max(s[1] for s in after_warm)
    growth = last / base - 1.0
    peak_growth = peak / base - 1.0
    fd_peak = max((s[2] for s in samples), default=-1)
    fd_limit = idle_fds + args.connections + 4
    seconds = wrk["duration_us"] / 1e6
    print()
    print("wrk: %d requests in %.0f s (%.0f/s), p50 %s, p99 %s, max %s, non-2xx %s, socket errors %s" % (
        wrk["requests"], seconds, wrk["requests"] / seconds, ls.fmt_ms(wrk["latency_us"]["p50"]),
        ls.fmt_ms(wrk["latency_us"]["p99"]), ls.fmt_ms(wrk["latency_us"]["max"]), wrk["status_counts"] or 0,
        wrk["errors"]))
    print("sent per kind: %s" % wrk["sent"])
    print("server access log: %s" % server.statuses())
    print("memory: idle %d KiB; after warm-up (%d s) %.0f KiB; end %.0f KiB: growth %+.2f %% (limit %+.0f %%); "
          "largest %.0f KiB (%+.2f %%); idle after the load %d KiB" % (
              idle_rss, args.warm_up, base, last, growth * 100, args.max_growth * 100, peak, peak_growth * 100,
              after_rss))
    print("descriptors: idle before %d, largest during %d (limit %d), idle after %d" % (
        idle_fds, fd_peak, fd_limit, after_fds))
    if not growth <= args.max_growth:
        problems.append("memory grew %.2f %% after warm-up (limit %.0f %%)" % (growth * 100, args.max_growth * 100))
    if fd_peak > fd_limit:
        problems.append("%d descriptors during the load (limit %d)" % (fd_peak, fd_limit))
    if after_fds != idle_fds:
        problems.append("%d descriptors after the load, %d before" % (after_fds, idle_fds))
    if wrk["non_2xx"]:
        problems.append("non-2xx responses: %s" % wrk["status_counts"])
    if ls.socket_errors(wrk):
        problems.append("socket errors: %s" % wrk["errors"])
    if {k for k in server.statuses() if k != "200"}:
        problems.append("the server logged %s" % server.statuses())
    return ls.verdict(problems, alive, code)


if __name__ == "__main__":
    sys.exit(main())
