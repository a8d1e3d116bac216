#!/usr/bin/python3
"""Mixed load on planckton-server: wrk at 64 connections for 60 s on a mix of request kinds.

Usage: load_mixed.py --server PATH [--duration 60] [--kind-duration 10] [--connections 64]
                     [--wrk-threads 2] [--server-threads 2] [--max-waiting-connections 64]
                     [--keep-alive-max N] [--timeout 10]

Needs wrk (Debian package "wrk") and /usr/bin/python3 (standard library only). Loopback only; every
run is bounded by its duration and a subprocess timeout.

The kinds (bench/load_support.py, all invented): JSON Planck spectra of 100, 1,000 and 10,000 points,
a 10-band photometry SED, an NDJSON batch of 8 spectra of 300 points, and a 500-row CSV table with
x_unit/y_unit query parameters; weights 3:3:1:2:1:2 in the mix. In one run:
* the server: `SERVER --bind 127.0.0.1 --port 0 --threads T --max-waiting-connections W` (and
  `--keep-alive-max` when given), no PLANCKTON_* variables; each kind is posted once and must
  answer 200 with a fit;
* wrk with bench/wrk_mixed.lua on the whole mix for --duration seconds at --connections
  connections: throughput, p50, p99, p99.9, statuses and socket errors;
* then each kind alone for --kind-duration seconds (0 skips them): per-kind throughput and latency
  (wrk cannot tell which response answers which request of a mix);
* /proc/loadavg before each run, since the machine is shared.

What is expected: every response 2xx and no socket error, unless --connections + --server-threads
exceeds --max-waiting-connections: then the overload guard (server/connection_queue.*) may answer
the connections beyond the queue with 503 and Retry-After, and those 503s are expected and counted
apart. (While connections wait, the server asks each client to close its connection after an
answer so that the waiting ones take turns; a client reconnects at once while a worker may still
hold its old connection, so the queue can briefly hold connections + server threads. At the server's
defaults, 2 threads and 64 waiting, 64 connections therefore may see a rare 503; run with
--max-waiting-connections 128 for none.) Any other non-2xx, any socket error (wrk's timeout included), a 5xx other than those
503s in the server's access log, or a server that dies, makes the exit status 1.

Caution: wrk shares the 2 cores with the server; figures are lower bounds and noisy.
"""

import argparse
import sys
import time

import load_support as ls


def run_one(server, manifest, label, duration, args):
    # The previous run's connections are closed by now, but their jobs may still be queued for a
    # moment: let them drain, so that they do not count against this run's queue.
    time.sleep(1)
    load = ls.loadavg()
    before = server.statuses()
    summary = ls.run_wrk(server, manifest, duration, args.connections, args.wrk_threads, timeout_s=args.timeout)
    # The server still answers what was queued when wrk stopped (wrk closed those connections, and no
    # longer counts): its log lines of the next 2 s belong to this run too.
    time.sleep(2)
    after = server.statuses()
    summary["label"] = label
    summary["loadavg"] = load
    summary["loadavg_after"] = ls.loadavg()
    summary["server_statuses"] = {k: after.get(k, 0) - before.get(k, 0) for k in after
                                  if after.get(k, 0) != before.get(k, 0)}
    seconds = summary["duration_us"] / 1e6
    summary["rate"] = summary["requests"] / seconds if seconds > 0 else 0.0
    print("run %-15s loadavg before %s | after %s: %d requests, %.0f/s, p50 %s, p99 %s, non-2xx %s, "
          "socket errors %s, server logged %s" % (
              label, load, summary["loadavg_after"], summary["requests"], summary["rate"],
              ls.fmt_ms(summary["latency_us"]["p50"]), ls.fmt_ms(summary["latency_us"]["p99"]),
              summary["status_counts"] or 0, summary["errors"], summary["server_statuses"]), flush=True)
    return summary


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--server", required=True)
    parser.add_argument("--duration", type=int, default=60, help="seconds of the mixed run (1-600)")
    parser.add_argument("--kind-duration", type=int, default=10, help="seconds per single-kind run (0: none)")
    parser.add_argument("--connections", type=int, default=64)
    parser.add_argument("--wrk-threads", type=int, default=2)
    parser.add_argument("--server-threads", type=int, default=2)
    parser.add_argument("--max-waiting-connections", type=int, default=64)
    parser.add_argument("--keep-alive-max", type=int, default=None)
    parser.add_argument("--timeout", type=int, default=10, help="wrk's per-request timeout, seconds")
    args = parser.parse_args()
    if not 1 <= args.duration <= 600 or not 0 <= args.kind_duration <= 120:
        parser.error("--duration must be 1..600 and --kind-duration 0..120")
    if not 1 <= args.wrk_threads <= args.connections <= 1000:
        parser.error("need 1 <= --wrk-threads <= --connections <= 1000")

    # Beyond --max-waiting-connections the guard answers 503. The server asks clients to close their
    # connections while others wait (fair turns), and a client reconnects as soon as it has read its
    # answer, while the worker may still hold the old connection: the queue can then briefly hold
    # up to connections + server threads. Only below that are 503s not expected at all.
    overload_expected = args.connections + args.server_threads > args.max_waiting_connections
    flags = ["--threads", str(args.server_threads), "--max-waiting-connections", str(args.max_waiting_connections)]
    if args.keep_alive_max is not None:
        flags += ["--keep-alive-max", str(args.keep_alive_max)]
    kinds = ls.request_kinds()
    server = None
    runs = []
    try:
        server = ls.Server(args.server, flags)
        print("server: %s (flags %s)" % (server.listening, " ".join(flags)))
        ls.check_kinds(server, kinds)
        with ls.temporary_directory() as directory:
            manifest = ls.write_manifest(kinds, list(kinds), directory)
            runs.append(run_one(server, manifest, "mixed", args.duration, args))
            if args.kind_duration > 0:
                for name in kinds:
                    single = ls.write_manifest(kinds, [name], directory + "/")
                    runs.append(run_one(server, single, name, args.kind_duration, args))
        alive = server.alive()
        code = server.stop()
    except ls.RunFailure as error:
        print("load_mixed.py: %s" % error, file=sys.stderr)
        if server is not None:
            server.kill()
        return 1

    print()
    print("settings: %d connections, %d wrk threads, server --threads %d --max-waiting-connections %d%s; "
          "503 from the overload guard %s" % (
              args.connections, args.wrk_threads, args.server_threads, args.max_waiting_connections,
              (" --keep-alive-max %d" % args.keep_alive_max) if args.keep_alive_max else "",
              "EXPECTED (counted apart)" if overload_expected else "not expected"))
    print()
    print("| run | loadavg (1/5/15 min) before | requests | req/s | p50 | p99 | p99.9 | max | 503 | other non-2xx | socket errors (c/r/w/t) |")
    print("|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---|")
    problems = []
    for run in runs:
        lat = run["latency_us"]
        counts = dict(run["status_counts"])
        n503 = counts.pop("503", 0)
        other = sum(counts.values())
        e = run["errors"]
        print("| %s (%d s) | %s | %d | %.0f | %s | %s | %s | %s | %d | %d%s | %d/%d/%d/%d |" % (
            run["label"], round(run["duration_us"] / 1e6), " ".join(run["loadavg"].split()[:3]), run["requests"],
            run["rate"], ls.fmt_ms(lat["p50"]), ls.fmt_ms(lat["p99"]), ls.fmt_ms(lat["p999"]), ls.fmt_ms(lat["max"]),
            n503, other, (" %s" % counts) if counts else "", e["connect"], e["read"], e["write"], e["timeout"]))
        if ls.socket_errors(run):
            problems.append("%s: socket errors %s" % (run["label"], e))
        if other:
            problems.append("%s: unexpected non-2xx %s" % (run["label"], counts))
        if n503 and not overload_expected:
            problems.append("%s: %d 503s although the queue should hold every connection" % (run["label"], n503))
        logged_503 = run["server_statuses"].get("503", 0)
        if logged_503 and not n503:
            print("note: %s: the server logged %d 503s that wrk did not count (answered after wrk stopped "
                  "reading, at the end of the run)" % (run["label"], logged_503))
        bad_logged = {k: v for k, v in run["server_statuses"].items()
                      if k != "200" and not (k == "503" and overload_expected)}
        if bad_logged:
            problems.append("%s: the server logged %s" % (run["label"], bad_logged))
    mixed = runs[0]
    print()
    print("mixed run, requests sent per kind: %s" % mixed["sent"])
    print("server access log, all runs: %s" % server.statuses())
    if server.other_lines:
        print("server stderr, other lines: %s" % server.other_lines)
    return ls.verdict(problems, alive, code)


if __name__ == "__main__":
    sys.exit(main())
