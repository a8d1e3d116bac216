"""Faults end to end against the real server.

1. Killed mid-batch: SIGKILL the server while it streams POST /v1/fit/batch (NDJSON). Every line
   received before the cut is complete JSON with its `index` (the request line's 0-based number in
   the body) and the `id` the client gave; a trailing partial line is detectable (no final newline,
   and the chunked stream lacks its last, zero-length chunk). The client restarts the server,
   resubmits the body from the first missing line, and the union of both answers equals an
   uninterrupted run, line for line (index shifted by the resumed offset).
2. No convergence within the iteration or time budget: a 200 whose `status` is not_converged (with
   the solver's `termination` iteration_limit or time_limit and the `not_converged` warning) and the
   best estimate so far, or a 422 problem (openapi.yaml, info: Limits) -- never a hang: each answer
   comes within a bound. For a plain Planck fit (spectrum, table, photometry, batch line), models
   (modified_black_body, two_temperature), and profile and posterior intervals.
3. Determinism: the same requests (spectrum, table, photometry, models, profile, posterior with a
   seed, SVG and CSV representations, the laboratory endpoints, a batch) to servers started with
   --threads 1 and --threads 2, and to a restarted server, and concurrently, give byte-identical
   bodies. No member of these answers is volatile (no timings or dates in a fit document), so the
   bytes are compared whole.
"""
import concurrent.futures
import json
import math
import os
import re
import socket
import sys
import time

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, Server, describe, is_response, json_of

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
SAMPLES = os.path.join(args.repo, "sample-spectra")
JSON_CT = {"Content-Type": "application/json"}
NDJSON_CT = {"Content-Type": "application/x-ndjson"}


def sample(name):
    with open(os.path.join(SAMPLES, name), encoding="utf-8") as f:
        return json.load(f)


def fresh(method, server, path, timeout=120, **kwargs):
    """One request on a new connection (no kept-alive connection across servers or threads)."""
    with harness.session() as s:
        try:
            return s.request(method, server.url(path), timeout=timeout, **kwargs)
        except Exception as e:  # noqa: BLE001
            return e


# ---- 1. killed mid-batch -------------------------------------------------------------------------

def acknowledged(payload):
    """What a client may take from a (possibly cut) NDJSON stream: the complete lines (each ends
    with a newline), parsed; the bytes after the last newline are an incomplete line and are
    dropped. Returns (answers, partial bytes)."""
    *complete, partial = payload.split(b"\n")
    return [json.loads(line) for line in complete if line.strip()], partial


def read_chunked_until_cut(sock, on_line, deadline):
    """Reads an HTTP/1.1 chunked answer from sock until the connection ends; returns (status, the
    de-chunked payload, whether the zero-length last chunk arrived). on_line(n) is called with the
    number of complete lines received so far whenever it grows."""
    buf = b""
    while b"\r\n\r\n" not in buf and time.monotonic() < deadline:
        chunk = sock.recv(65536)
        if not chunk:
            break
        buf += chunk
    head, _, buf = buf.partition(b"\r\n\r\n")
    m = re.match(rb"HTTP/1\.1 (\d{3})", head)
    status = int(m.group(1)) if m else None
    payload, ended, lines = b"", False, 0
    while time.monotonic() < deadline and not ended:
        # Take every whole chunk in buf.
        while True:
            size_line, sep, rest = buf.partition(b"\r\n")
            if not sep:
                break
            size = int(size_line.split(b";")[0] or b"0", 16)
            if size == 0:
                ended = True
                break
            if len(rest) < size + 2:
                break
            payload += rest[:size]
            buf = rest[size + 2:]
        if ended:
            break
        if payload.count(b"\n") != lines:
            lines = payload.count(b"\n")
            on_line(lines)
        try:
            chunk = sock.recv(65536)
        except OSError:
            chunk = b""
        if not chunk:
            # The partial chunk still in buf is part of what the client got.
            size_line, sep, rest = buf.partition(b"\r\n")
            if sep:
                payload += rest[:int(size_line.split(b";")[0] or b"0", 16)]
            break
        buf += chunk
    return status, payload, ended


def batch_lines():
    """28 body lines: 26 fits of 20,000 points with a Cauchy loss (each ~0.1 s), a blank line and a
    bad line; ids given on all but two."""
    base = [harness.planck_spectrum(20000, temperature=4200.0 + 300 * k, seed=300 + k) for k in range(3)]
    lines = []
    for i in range(28):
        if i == 6:
            lines.append("")  # blank: no answer line; the indices count it
            continue
        doc = json.loads(json.dumps(base[i % 3]))
        doc["options"] = {"loss": {"kind": "cauchy", "scale": 2.0}}
        if i == 11:
            doc["spectrum"]["x_unit"] = "furlong"  # a problem line keeps its id
        if i not in (3, 17):
            doc = {"id": f"kill-{i}", **doc}
        lines.append(harness.compact(doc))
    return lines


def expected_id(lines, index):
    doc = json.loads(lines[index])
    return doc.get("id")


def killed_mid_batch():
    lines = batch_lines()
    body = ("\n".join(lines) + "\n").encode()
    server_args = ["--threads", "1", "--max-body-bytes", str(4 * len(body))]
    server = Server(args.server, server_args, name="server (to be killed)")
    if not server.start(checks):
        return
    cut_after = 5
    killed = {}

    def on_line(n):
        if n >= cut_after and "at" not in killed:
            server.process.kill()  # SIGKILL: no drain, no last chunk
            killed["at"] = n

    head = (f"POST /v1/fit/batch HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/x-ndjson\r\n"
            f"Content-Length: {len(body)}\r\nConnection: close\r\n\r\n").encode()
    t0 = time.monotonic()
    with socket.create_connection(("127.0.0.1", server.port), timeout=60) as sock:
        sock.sendall(head + body)
        status, payload, ended = read_chunked_until_cut(sock, on_line, time.monotonic() + 120)
    seconds = time.monotonic() - t0
    try:
        server.process.wait(timeout=10)
    except Exception:  # noqa: BLE001
        pass
    server.kill()
    checks.check("killed batch: 200 and SIGKILL sent after 5 answer lines, mid-stream",
                 status == 200 and killed.get("at", 0) >= cut_after and server.process.returncode == -9,
                 f"status {status}, killed after {killed.get('at')} lines, exit {server.process.returncode}, {seconds:.1f} s")
    checks.check("killed batch: a client can tell the stream was cut (no zero-length last chunk)", not ended,
                 f"last chunk seen: {ended}")
    try:
        answers, partial = acknowledged(payload)
        parse_error = None
    except json.JSONDecodeError as e:
        answers, partial, parse_error = [], b"", e
    checks.check("killed batch: every line received before the cut is complete JSON", parse_error is None,
                 f"{parse_error}")
    n = len(answers)
    checks.check("killed batch: some lines were acknowledged and some were not", 0 < n < len(lines) - 1,
                 f"{n} answer lines of {len(lines) - 1}")
    indices = [a.get("index") for a in answers]
    want = [i for i in range(len(lines)) if lines[i].strip()][:n]
    checks.check("killed batch: the received lines carry the indices of their request lines, in order (the blank "
                 "line 6 counted, unanswered)", indices == want, f"{indices} vs {want}")
    ids_ok = all(a.get("id") == expected_id(lines, a["index"]) for a in answers if isinstance(a.get("index"), int))
    checks.check("killed batch: each received line carries the id its request gave (none where none was given)",
                 ids_ok, [(a.get("index"), a.get("id")) for a in answers][:8])
    # Every prefix of the received bytes: its complete lines are complete JSON, and a cut inside a
    # line leaves bytes without a final newline, which the client drops (shown at every byte).
    bad_prefixes = 0
    for cut in range(0, len(payload) + 1, max(1, len(payload) // 4000)):
        try:
            got, rest = acknowledged(payload[:cut])
        except json.JSONDecodeError:
            bad_prefixes += 1
            continue
        if len(got) > n or (rest and rest.endswith(b"\n")):
            bad_prefixes += 1
    checks.check("killed batch: at every cut through the received bytes, the complete lines parse and the "
                 "incomplete rest has no final newline", bad_prefixes == 0, f"{bad_prefixes} bad cuts")
    checks.check("killed batch: the partial rest after the last newline (if any) is not taken as a line",
                 partial == b"" or b"\n" not in partial, repr(partial[:60]))

    # Resume: a new server; the body from the first missing line (the line after the last
    # acknowledged index; blank lines included so that indices keep their meaning: new index +
    # offset = original index).
    first_missing = (indices[-1] + 1) if indices else 0
    rest_body = ("\n".join(lines[first_missing:]) + "\n").encode()
    restarted = Server(args.server, server_args, name="server (restarted)")
    if not restarted.start(checks):
        return
    r = fresh("POST", restarted, "/v1/fit/batch", data=rest_body, headers=NDJSON_CT, timeout=180)
    resumed = [json.loads(x) for x in r.content.split(b"\n") if x.strip()] if is_response(r) else []
    full = fresh("POST", restarted, "/v1/fit/batch", data=body, headers=NDJSON_CT, timeout=180)
    full_lines = [json.loads(x) for x in full.content.split(b"\n") if x.strip()] if is_response(full) else []
    restarted.stop(checks)
    checks.check(f"resume: the rest of the body from line {first_missing} and an uninterrupted run both answer 200",
                 is_response(r) and r.status_code == 200 and is_response(full) and full.status_code == 200,
                 f"{describe(r, 80)} | {describe(full, 80)}")
    shifted = [{**a, "index": a["index"] + first_missing} for a in resumed]
    union = answers + shifted
    checks.check("resume: the union has one line per non-blank request line", len(union) == len(full_lines) ==
                 len([x for x in lines if x.strip()]), f"{len(union)} vs {len(full_lines)}")
    diffs = [d for d in (harness.strict_diff(a, b) for a, b in zip(union, full_lines)) if d]
    checks.check("resume: the union equals the uninterrupted run, line for line (every number the same)",
                 not diffs and len(union) == len(full_lines), diffs[:2])
    statuses = [a.get("status") for a in full_lines]
    checks.check("resume: the uninterrupted run has the bad line's problem (422) with its id, the rest 200",
                 statuses.count(422) == 1 and statuses.count(200) == len(full_lines) - 1 and
                 any(a.get("status") == 422 and a.get("id") == "kill-11" for a in full_lines), statuses)
    for a in union[:2] + [x for x in union if x.get("status") == 422][:1]:
        schema.check(checks, f"resume: line {a.get('index')} matches BatchLine", a, "/v1/fit/batch", "post", 200,
                     "application/x-ndjson")


# ---- 2. no convergence within the budgets --------------------------------------------------------

def budget_case(server, label, path, body, headers, bound, expect_termination):
    t0 = time.monotonic()
    r = fresh("POST", server, path, data=body, headers=headers, timeout=bound + 30)
    seconds = time.monotonic() - t0
    checks.check(f"{label}: answered within {bound:g} s (never a hang)", is_response(r) and seconds < bound,
                 f"{seconds:.2f} s, {describe(r, 100)}")
    if not is_response(r):
        return None
    if r.status_code == 422:
        checks.check(f"{label}: or a 422 problem", harness.media_type(r) == harness.PROBLEM_TYPE, describe(r, 200))
        return None
    doc = json_of(r)
    if path.endswith("/batch"):
        line = json.loads(r.content.split(b"\n")[0]) if r.status_code == 200 else {}
        doc = line.get("response")
    ok = r.status_code == 200 and isinstance(doc, dict)
    checks.check(f"{label}: 200 with a fit document", ok, describe(r, 200))
    if not ok:
        return None
    termination = (doc.get("solver") or {}).get("termination")
    warnings = [w.get("code") for w in doc.get("warnings", [])]
    checks.check(f"{label}: status not_converged, the not_converged warning, termination {expect_termination}",
                 doc.get("status") == "not_converged" and "not_converged" in warnings
                 and termination == expect_termination, f"status {doc.get('status')}, termination {termination}, {warnings}")
    values = [p.get("value") for p in (doc.get("parameters") or {}).values() if isinstance(p, dict)]
    checks.check(f"{label}: the best estimate so far: every parameter value a finite number",
                 values and all(isinstance(v, (int, float)) and math.isfinite(v) for v in values), values)
    schema.check(checks, f"{label}: response matches the OpenAPI schema", doc, "/v1/fit", "post", 200, "application/json")
    return doc


def with_options(doc, **options):
    doc = json.loads(json.dumps(doc))
    doc.setdefault("options", {}).update(options)
    return harness.compact(doc).encode()


def budgets():
    server = Server(args.server, ["--threads", "2"], name="server (budgets)")
    if not server.start(checks):
        return
    small = harness.planck_spectrum(40, temperature=5200.0, seed=21)
    small["options"] = {"temperature_bounds": [100, 1e6]}
    big = harness.planck_spectrum(100000, temperature=5200.0, seed=22)
    big["options"] = {"loss": {"kind": "cauchy", "scale": 2.0}}
    dust = sample("bfc-7-dust-clump.json")
    binary = sample("tms-0418-composite-binary.json")
    sed = sample("tms-0203-catalogue-sed.json")
    cases = [
        ("planck spectrum, max_iterations 1", with_options(small, max_iterations=1), "iteration_limit"),
        ("planck spectrum of 100,000 points, time_budget_seconds 1e-6", with_options(big, time_budget_seconds=1e-6),
         "time_limit"),
        ("planck photometry, max_iterations 1", with_options(sed, max_iterations=1), "iteration_limit"),
        ("modified_black_body, max_iterations 1", with_options(dust, max_iterations=1), "iteration_limit"),
        ("modified_black_body, time_budget_seconds 1e-9", with_options(dust, time_budget_seconds=1e-9), "time_limit"),
        ("two_temperature, max_iterations 1", with_options(binary, max_iterations=1), "iteration_limit"),
        ("two_temperature, time_budget_seconds 1e-9", with_options(binary, time_budget_seconds=1e-9), "time_limit"),
        ("profile intervals, max_iterations 1", with_options(small, max_iterations=1, intervals="profile"),
         "iteration_limit"),
        ("profile intervals of two_temperature, time_budget_seconds 1e-9",
         with_options(binary, time_budget_seconds=1e-9, intervals="profile"), "time_limit"),
        ("posterior intervals, max_iterations 1", with_options(small, max_iterations=1, intervals="posterior", seed=5),
         "iteration_limit"),
        ("posterior intervals of modified_black_body, time_budget_seconds 1e-9",
         with_options(dust, time_budget_seconds=1e-9, intervals="posterior", seed=5), "time_limit"),
    ]
    for label, body, termination in cases:
        budget_case(server, label, "/v1/fit", body, JSON_CT, 30, termination)
    # A table and a batch line take the same budgets.
    csv = "x,y,y_error\n" + "".join(f"{x},{y},{e}\n" for x, y, e in zip(
        small["spectrum"]["x"], small["spectrum"]["y"], small["spectrum"]["y_error"]))
    budget_case(server, "CSV table, time_budget_seconds=1e-9 (query)",
                "/v1/fit?x_unit=nm&y_unit=W/m2/nm&time_budget_seconds=1e-9&model=two_temperature",
                csv.encode(), {"Content-Type": "text/csv"}, 30, "time_limit")
    budget_case(server, "batch line, max_iterations 1", "/v1/fit/batch", with_options(small, max_iterations=1) + b"\n",
                NDJSON_CT, 30, "iteration_limit")
    # A server whose own budget is tiny caps a request that asks for more.
    server.stop(checks)
    tiny = Server(args.server, ["--threads", "2", "--time-budget", "0.001"], name="server (--time-budget 0.001)")
    if tiny.start(checks):
        wide = harness.planck_spectrum(20000, temperature=5200.0, seed=22)
        wide["model"] = {"kind": "two_temperature"}
        budget_case(tiny, "--time-budget 0.001, two_temperature of 20,000 points asking for 100 s",
                    "/v1/fit", with_options(wide, time_budget_seconds=100), JSON_CT, 30, "time_limit")
        tiny.stop(checks)
    # The posterior's chain must keep to the budget too: a large chain within the documented bounds
    # (32 walkers x 20,000 steps = 6.4e5 <= 1e6; x 300 points = 1.9e8 <= 3e8) on a server whose
    # budget per fit is 1 s (README: "--time-budget (s per fit; a request may ask for less)";
    # openapi.yaml, Limits: when exceeded, the best estimate so far, status not_converged). The
    # answer must come within the budget and a margin of 3 s, as a 200 that says it did not converge
    # (status not_converged, or the posterior_not_converged warning) or a 422.
    one = Server(args.server, ["--threads", "2", "--time-budget", "1"], name="server (--time-budget 1)")
    if one.start(checks):
        n300 = harness.planck_spectrum(300, temperature=5200.0, seed=23)
        heavy = with_options(n300, intervals="posterior", seed=5, posterior={"walkers": 32, "steps": 20000, "burn_in": 500})
        t0 = time.monotonic()
        r = fresh("POST", one, "/v1/fit", data=heavy, headers=JSON_CT, timeout=120)
        seconds = time.monotonic() - t0
        doc = json_of(r) if is_response(r) and r.status_code == 200 else None
        said = doc is not None and (doc.get("status") == "not_converged" or "posterior_not_converged" in
                                    [w.get("code") for w in doc.get("warnings", [])])
        checks.check("posterior of 32 walkers x 20,000 steps x 300 points with --time-budget 1: answered within 4 s, "
                     "as a 200 that says it did not converge or a 422",
                     is_response(r) and seconds < 4.0 and (said or r.status_code == 422),
                     f"{seconds:.2f} s, status {doc.get('status') if doc else None}, "
                     f"warnings {[w.get('code') for w in (doc or {}).get('warnings', [])]}, {describe(r, 80)}")
        one.stop(checks)


# ---- 3. determinism --------------------------------------------------------------------------------

def determinism_requests():
    spec = harness.planck_spectrum(300, temperature=5600.0, seed=31)
    csv = "x,y,y_error\n" + "".join(f"{x},{y},{e}\n" for x, y, e in zip(
        spec["spectrum"]["x"], spec["spectrum"]["y"], spec["spectrum"]["y_error"]))
    q = "?x_unit=nm&y_unit=W/m2/nm"
    with open(os.path.join(SAMPLES, "batch.ndjson"), "rb") as f:
        batch = f.read()
    lamp = sample("cinder-lamp-ql7.json")
    kiln = sample("kiln-window-k4.json")
    return [
        ("spectrum (JSON)", "/v1/fit", harness.compact(spec).encode(), JSON_CT),
        ("spectrum (CSV table)", "/v1/fit" + q, csv.encode(), {"Content-Type": "text/csv"}),
        ("spectrum as SVG", "/v1/fit?format=svg", harness.compact(spec).encode(), JSON_CT),
        ("spectrum as CSV", "/v1/fit?format=csv", harness.compact(spec).encode(), JSON_CT),
        ("sample tms-0112 (JSON)", "/v1/fit", harness.compact(sample("tms-0112-cool-star.json")).encode(), JSON_CT),
        ("photometry", "/v1/fit", harness.compact(sample("tms-0203-catalogue-sed.json")).encode(), JSON_CT),
        ("modified_black_body", "/v1/fit", harness.compact(sample("bfc-7-dust-clump.json")).encode(), JSON_CT),
        ("two_temperature", "/v1/fit", harness.compact(sample("tms-0418-composite-binary.json")).encode(), JSON_CT),
        ("profile intervals", "/v1/fit", with_options(spec, intervals="profile"), JSON_CT),
        ("posterior with a seed", "/v1/fit",
         with_options(spec, intervals="posterior", seed=11, posterior={"steps": 1500, "burn_in": 300}), JSON_CT),
        ("posterior of modified_black_body with a seed", "/v1/fit",
         with_options(sample("bfc-7-dust-clump.json"), intervals="posterior", seed=12,
                      posterior={"steps": 1500, "burn_in": 300}), JSON_CT),
        ("batch (sample-spectra/batch.ndjson)", "/v1/fit/batch", batch, NDJSON_CT),
        ("light source", "/v1/light", harness.compact(lamp).encode(), JSON_CT),
        ("hot body", "/v1/hot-body", harness.compact(kiln).encode(), JSON_CT),
    ]


def first_difference(a, b):
    if a == b:
        return None
    try:
        d = harness.strict_diff(json.loads(a), json.loads(b))
        if d:
            return d
    except (ValueError, UnicodeDecodeError):
        pass
    i = next((k for k in range(min(len(a), len(b))) if a[k] != b[k]), min(len(a), len(b)))
    return f"byte {i}: {a[max(0, i - 30):i + 30]!r} vs {b[max(0, i - 30):i + 30]!r}"


def run_all(server, requests_list, parallel=1):
    def one(item):
        _, path, body, headers = item
        r = fresh("POST", server, path, data=body, headers=headers, timeout=180)
        return (r.status_code, r.content) if is_response(r) else (None, repr(r).encode())
    if parallel == 1:
        return [one(item) for item in requests_list]
    with concurrent.futures.ThreadPoolExecutor(parallel) as pool:
        return list(pool.map(one, requests_list))


def determinism():
    reqs = determinism_requests()
    runs = {}
    for label, server_args, parallel in [("--threads 1", ["--threads", "1"], 1),
                                         ("--threads 2", ["--threads", "2"], 1),
                                         ("--threads 2, restarted, 2 requests at a time", ["--threads", "2"], 2)]:
        server = Server(args.server, server_args, name=f"server ({label})")
        if not server.start(checks):
            continue
        runs[label] = run_all(server, reqs, parallel)
        server.stop(checks)
    base = runs.get("--threads 1")
    if base is None:
        return
    for i, (name, _, _, _) in enumerate(reqs):
        status, body = base[i]
        checks.check(f"determinism: {name}: 200 with --threads 1", status == 200, body[:160])
        for label, results in runs.items():
            if label == "--threads 1":
                continue
            diff = first_difference(body, results[i][1])
            checks.check(f"determinism: {name}: {label} gives the same bytes as --threads 1",
                         results[i][0] == status and diff is None, diff or f"status {results[i][0]}")
    # The answers themselves hold no volatile member: the same request twice on one server.
    server = Server(args.server, ["--threads", "2"], name="server (twice)")
    if server.start(checks):
        twice = run_all(server, reqs[:2] + reqs[9:10])
        again = run_all(server, reqs[:2] + reqs[9:10])
        checks.check("determinism: the same requests twice on one server give the same bytes",
                     all(a == b for a, b in zip(twice, again)), "")
        server.stop(checks)


def main():
    if not schema.available:
        checks.note(f"schema checks will not run: {schema.problem}")
    started = time.monotonic()
    killed_mid_batch()
    checks.note(f"killed batch done after {time.monotonic() - started:.1f} s")
    budgets()
    checks.note(f"budgets done after {time.monotonic() - started:.1f} s")
    determinism()
    checks.note(f"determinism done after {time.monotonic() - started:.1f} s")


harness.crash_guard(checks, main)
