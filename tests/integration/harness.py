"""Shared pieces of the HTTP integration checks (plain Python 3 scripts, Debian's /usr/bin/python3).

- Checks: one printed line per check; the last line is exactly "N passed, M failed"; exit 0 only
  when nothing failed and at least one check ran. Checks that cannot run (e.g. schema checks while
  openapi/openapi.yaml does not exist) are printed as SKIP and counted as not run, never as passed.
- Server: starts the real planckton-server on an ephemeral loopback port (--bind 127.0.0.1
  --port 0), reads the first stderr line (the "listening" event) for the port, keeps reading stderr
  in a thread (access-log lines) and stops it with SIGTERM, checking exit code 0. A sanitizer
  report on its stderr (a build with PLANCKTON_SANITIZE, scripts/test-sanitizers) is a failed check
  with the report's first lines, even when the server otherwise answers right.
- HTTP helpers: every request goes to 127.0.0.1 only, never through a proxy, always with a timeout.
- OpenAPI: validates documents against openapi/openapi.yaml (JSON Schema Draft 2020-12 with
  $ref resolved inside the OpenAPI document, i.e. into #/components/schemas).
- Prometheus text format 0.0.4 parser for /metrics.
- Problem documents (RFC 9457) with planckton's extension members (pointer: RFC 6901).
"""
import argparse
import json
import math
import os
import queue
import signal
import subprocess
import sys
import threading
import time
import urllib.parse

import requests

DEFAULT_TIMEOUT = 60  # seconds, for every HTTP request unless a check needs another bound
START_TIMEOUT = 20    # seconds to wait for the "listening" line
STOP_TIMEOUT = 60     # seconds to wait for the exit after SIGTERM

PROBLEM_TYPE = "application/problem+json"

# The sanitizers of the server under test, as scripts/test-sanitizers exports them ("" in the Release
# build; "address,undefined" or "thread").
SANITIZERS = os.environ.get("PLANCKTON_SANITIZE", "")
# How many times slower the instrumented server runs (cmake/sanitizers.cmake scales the ctest
# timeouts by the same factors): the server budgets a test relies on for a fit to finish are scaled
# by it (the server's --time-budget in Server), never the bounds a test checks an early answer against.
SLOWDOWN = 5 if "thread" in SANITIZERS else 3 if SANITIZERS else 1

# The headline each sanitizer runtime prints at the start of a report (ASan, LeakSanitizer, UBSan,
# TSan). Reports are not JSON, so events() would pass over them without a word.
SANITIZER_MARKERS = ("ERROR: AddressSanitizer", "ERROR: LeakSanitizer", "runtime error:",
                     "WARNING: ThreadSanitizer")
SANITIZER_REPORT_LINES = 25  # lines kept from each report: the headline and the top of its stacks


# ---- command line ----------------------------------------------------------------------------

def parse_args(description=""):
    parser = argparse.ArgumentParser(description=description)
    parser.add_argument("--server", required=True, help="the planckton-server binary")
    parser.add_argument("--cli", required=True, help="the planckton CLI binary (build/cli/planckton)")
    parser.add_argument("--repo", required=True, help="repository root (samples, README.md, openapi/)")
    parser.add_argument("--require-schema", action="store_true",
                        help="count schema checks that cannot run (no openapi/openapi.yaml) as failed")
    return parser.parse_args()


# ---- checks ----------------------------------------------------------------------------------

class Checks:
    def __init__(self, require_schema=False):
        self.passed = 0
        self.failed = 0
        self.skipped = 0
        self.require_schema = require_schema
        self.failures = []
        self._lock = threading.Lock()

    def check(self, name, ok, detail=""):
        ok = bool(ok)
        with self._lock:
            detail = str(detail).replace("\n", " ")
            if len(detail) > 400:
                detail = detail[:400] + "..."
            print(f"{'PASS' if ok else 'FAIL'}  {name}  {detail}".rstrip(), flush=True)
            if ok:
                self.passed += 1
            else:
                self.failed += 1
                self.failures.append((name, detail))
        return ok

    def skip(self, name, reason):
        with self._lock:
            print(f"SKIP  {name}  (not run: {reason})", flush=True)
            self.skipped += 1

    def skip_schema(self, name, reason):
        """A schema check that cannot run: SKIP, or FAIL under --require-schema."""
        if self.require_schema:
            return self.check(name, False, f"--require-schema: {reason}")
        self.skip(name, reason)
        return None

    def note(self, text):
        print(f"NOTE  {text}", flush=True)

    def finish(self):
        Server.check_sanitizer_reports(self)
        if self.skipped:
            print(f"NOTE  {self.skipped} check(s) not run (listed as SKIP above; neither passed nor failed)",
                  flush=True)
        print(f"{self.passed} passed, {self.failed} failed", flush=True)
        sys.exit(0 if self.failed == 0 and self.passed > 0 else 1)


def crash_guard(checks, function):
    """Runs the script body; an unexpected exception becomes one failed check, then the summary."""
    try:
        function()
    except SystemExit:
        raise
    except BaseException as e:  # noqa: BLE001 - a crash of the test must still end with the summary
        import traceback
        traceback.print_exc()
        checks.check("test script ran to the end without an exception", False, f"{type(e).__name__}: {e}")
    finally:
        Server.stop_all_quietly()
    checks.finish()


# ---- the server ------------------------------------------------------------------------------

def clean_environment(extra=None):
    """The inherited environment without PLANCKTON_* settings and without proxies (loopback only)."""
    env = {k: v for k, v in os.environ.items()
           if not k.startswith("PLANCKTON_") and k.lower() not in ("http_proxy", "https_proxy", "all_proxy")}
    env["NO_PROXY"] = "*"
    env["no_proxy"] = "*"
    if extra:
        env.update(extra)
    return env


class Server:
    _running = []
    _started = []  # every server started by this script, for the sanitizer check in Checks.finish()

    def __init__(self, binary, args=(), env=None, name="server"):
        self.binary = binary
        self.args = list(args)
        if SLOWDOWN > 1 and "--time-budget" not in self.args:
            # The default budget (10 s) scaled, so that an instrumented fit or posterior finishes as
            # in the Release build; a test that sets --time-budget keeps its own.
            self.args += ["--time-budget", str(10 * SLOWDOWN)]
        self.env = clean_environment(env)
        self.name = name
        self.process = None
        self.port = None
        self.listening = None
        self.lines = []          # raw stderr lines after the first (str)
        self._lines_lock = threading.Lock()
        self._first = queue.Queue()
        self._reader = None
        self.sanitizer_reports = []  # each a list of stderr lines, from the headline on
        self._collecting = False
        self._reports_checked = 0
        self.stop_code = None

    # -- start / stop

    def start(self, checks=None):
        """Starts the server; returns True when it is listening. Records one check when given."""
        if not os.access(self.binary, os.X_OK):
            if checks:
                checks.check(f"{self.name}: server binary exists", False, self.binary)
            return False
        self.process = subprocess.Popen(
            [self.binary, "--bind", "127.0.0.1", "--port", "0", *self.args],
            stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=self.env)
        Server._running.append(self)
        Server._started.append(self)
        self._reader = threading.Thread(target=self._read_stderr, daemon=True)
        self._reader.start()
        first = None
        try:
            first = self._first.get(timeout=START_TIMEOUT)
        except queue.Empty:
            pass
        ok = False
        detail = repr(first)
        if first is not None:
            try:
                doc = json.loads(first)
                ok = (isinstance(doc, dict) and doc.get("event") == "listening"
                      and isinstance(doc.get("port"), int) and 0 < doc["port"] < 65536
                      and doc.get("address") == "127.0.0.1")
                if ok:
                    self.listening = doc
                    self.port = doc["port"]
            except json.JSONDecodeError as e:
                detail += f" ({e})"
        if checks:
            checks.check(f"{self.name}: first stderr line is the JSON 'listening' event on 127.0.0.1",
                         ok, detail if not ok else f"port {self.port}, {first.strip()}")
        if not ok:
            self.kill()
        return ok

    def _read_stderr(self):
        first = True
        for raw in iter(self.process.stderr.readline, b""):
            text = raw.decode("utf-8", errors="replace").rstrip("\r\n")
            self._collect_sanitizer_report(text)
            if first:
                self._first.put(text)
                first = False
                continue
            with self._lines_lock:
                self.lines.append(text)
        if first:
            self._first.put(None)

    def _collect_sanitizer_report(self, text):
        """Called by the reader thread for every stderr line, the first included. A JSON log line
        is never a report (its detail may quote anything) and ends the one being collected; a
        report's headline starts a new one."""
        is_json = text.lstrip().startswith("{")
        with self._lines_lock:
            if not is_json and any(marker in text for marker in SANITIZER_MARKERS):
                self.sanitizer_reports.append([text])
                self._collecting = True
            elif is_json:
                self._collecting = False
            elif self._collecting and len(self.sanitizer_reports[-1]) < SANITIZER_REPORT_LINES:
                self.sanitizer_reports[-1].append(text)

    def _check_sanitizer_reports(self, checks):
        """One failed check per report not yet checked (none when there was no report)."""
        if self._reader is not None and self.process is not None and self.process.poll() is not None:
            self._reader.join(timeout=10)  # the process is gone: read its last lines (the leak report)
        with self._lines_lock:
            reports = self.sanitizer_reports[self._reports_checked:]
            self._reports_checked = len(self.sanitizer_reports)
        for report in reports:
            for line in report:
                checks.note(f"{self.name} stderr: {line}")
            checks.check(f"{self.name}: no sanitizer report on stderr", False, " | ".join(report[:6]))

    @classmethod
    def check_sanitizer_reports(cls, checks):
        for server in cls._started:
            server._check_sanitizer_reports(checks)

    def send_signal(self, sig):
        if self.process and self.process.poll() is None:
            self.process.send_signal(sig)

    def stop(self, checks=None, sig=signal.SIGTERM):
        """Sends SIGTERM (or sig), waits (bounded) for the exit; checks exit code 0 and the
        "stopped" event when checks is given. Returns the exit code (None: killed after timeout)."""
        if self.process is None:
            return None
        code = None
        if self.process.poll() is None:
            self.process.send_signal(sig)
        try:
            code = self.process.wait(timeout=STOP_TIMEOUT)
        except subprocess.TimeoutExpired:
            self.kill()
        self.stop_code = code
        if self in Server._running:
            Server._running.remove(self)
        time.sleep(0.1)  # let the reader thread take the last lines
        if checks:
            signame = signal.Signals(sig).name
            checks.check(f"{self.name}: exits with code 0 on {signame}", code == 0,
                         f"exit code {code}" + (" (killed after timeout)" if code is None else ""))
            stopped = any(d.get("event") == "stopped" for d in self.events())
            checks.check(f"{self.name}: writes the 'stopped' event before exiting", stopped,
                         "" if stopped else f"last stderr lines: {self.lines[-3:]}")
            self._check_sanitizer_reports(checks)
        return code

    def kill(self):
        if self.process and self.process.poll() is None:
            self.process.kill()
            try:
                self.process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                pass
        if self in Server._running:
            Server._running.remove(self)

    @classmethod
    def stop_all_quietly(cls):
        for server in list(cls._running):
            server.send_signal(signal.SIGTERM)
            try:
                server.process.wait(timeout=15)
            except subprocess.TimeoutExpired:
                server.kill()
            if server in cls._running:
                cls._running.remove(server)

    # -- stderr

    def stderr_lines(self):
        with self._lines_lock:
            return list(self.lines)

    def events(self):
        """Parsed stderr lines after the first (non-JSON lines are skipped)."""
        out = []
        for line in self.stderr_lines():
            try:
                doc = json.loads(line)
            except json.JSONDecodeError:
                continue
            if isinstance(doc, dict):
                out.append(doc)
        return out

    def access_log(self):
        return [d for d in self.events() if d.get("event") == "request"]

    def wait_for_log(self, count, timeout=10.0):
        """Waits (bounded) until at least count access-log lines exist; returns them."""
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            log = self.access_log()
            if len(log) >= count:
                return log
            time.sleep(0.05)
        return self.access_log()

    # -- addresses

    @property
    def address(self):
        return f"127.0.0.1:{self.port}"

    def url(self, path):
        return f"http://127.0.0.1:{self.port}{path}"


# ---- HTTP ------------------------------------------------------------------------------------

def start_checked_server(checks, schema, binary, args=(), name="server"):
    """Notes when schema checks cannot run, then starts the server; returns it, or None when it did
    not start (that failure is already a check)."""
    if not schema.available:
        checks.note(f"schema checks will not run: {schema.problem}")
    server = Server(binary, args, name=name)
    return server if server.start(checks) else None


def session():
    s = requests.Session()
    s.trust_env = False  # no proxies from the environment: loopback only
    return s


_SESSION = None


def http(method, server, path, timeout=DEFAULT_TIMEOUT, **kwargs):
    """One request to the test server (127.0.0.1 only). Returns the response or the exception."""
    global _SESSION
    if _SESSION is None:
        _SESSION = session()
    url = server.url(path)
    assert url.startswith("http://127.0.0.1:"), url
    try:
        return _SESSION.request(method, url, timeout=timeout, **kwargs)
    except requests.RequestException as e:
        return e


def fresh_http(method, server, path, timeout=DEFAULT_TIMEOUT, **kwargs):
    """Like http() but on a new connection (no keep-alive reuse)."""
    url = server.url(path)
    assert url.startswith("http://127.0.0.1:"), url
    with session() as s:
        try:
            return s.request(method, url, timeout=timeout, **kwargs)
        except requests.RequestException as e:
            return e


def is_response(r):
    return isinstance(r, requests.Response)


def describe(r, n=300):
    if not is_response(r):
        return f"no response: {type(r).__name__}: {r}"
    body = r.content[:n].decode("utf-8", errors="replace")
    return f"HTTP {r.status_code} {r.headers.get('Content-Type', '')} {body}"


def media_type(r):
    return r.headers.get("Content-Type", "").split(";")[0].strip().lower() if is_response(r) else ""


def json_of(r):
    """The parsed body (keeping member order), or None."""
    if not is_response(r):
        return None
    try:
        return json.loads(r.content.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError):
        return None


def query(pairs):
    """URL-encodes (name, value) pairs with %20 for spaces (RFC 3986 percent-encoding)."""
    return urllib.parse.urlencode(pairs, quote_via=urllib.parse.quote)


def curl(url, args, timeout=60):
    """Runs curl against the loopback test server; returns (exit code, body bytes, status, content type)."""
    assert url.startswith("http://127.0.0.1:"), url
    done = subprocess.run(
        ["curl", "-sS", "--noproxy", "*", "--max-time", str(timeout), "-o", "-",
         "-w", "\n%{http_code} %{content_type}", *args, url],
        capture_output=True, timeout=timeout + 10, env=clean_environment())
    out = done.stdout
    body, _, tail = out.rpartition(b"\n")
    parts = tail.decode(errors="replace").split(" ", 1)
    status = int(parts[0]) if parts and parts[0].isdigit() else None
    ctype = parts[1] if len(parts) > 1 else ""
    return done.returncode, body, status, ctype


def run_cli(cli, args, stdin=None, timeout=120):
    """Runs the CLI; returns (exit code, parsed stdout or None, stderr)."""
    done = subprocess.run([cli, *args], input=stdin, capture_output=True, timeout=timeout)
    try:
        doc = json.loads(done.stdout.decode()) if done.stdout.strip() else None
    except (UnicodeDecodeError, json.JSONDecodeError):
        doc = None
    return done.returncode, doc, done.stderr.decode(errors="replace")


# ---- documents -------------------------------------------------------------------------------

def strict_diff(a, b, path=""):
    """None when a and b are the same JSON value (same types, same member order, same numbers),
    else a description of the first difference (an RFC 6901 pointer and both values)."""
    if type(a) is not type(b):
        return f"{path or '/'}: {type(a).__name__} {json.dumps(a)[:80]} vs {type(b).__name__} {json.dumps(b)[:80]}"
    if isinstance(a, dict):
        if list(a.keys()) != list(b.keys()):
            return f"{path or '/'}: members {list(a.keys())} vs {list(b.keys())}"
        for k in a:
            d = strict_diff(a[k], b[k], f"{path}/{k.replace('~', '~0').replace('/', '~1')}")
            if d:
                return d
        return None
    if isinstance(a, list):
        if len(a) != len(b):
            return f"{path or '/'}: length {len(a)} vs {len(b)}"
        for i, (x, y) in enumerate(zip(a, b)):
            d = strict_diff(x, y, f"{path}/{i}")
            if d:
                return d
        return None
    if isinstance(a, float) and math.isnan(a) and math.isnan(b):
        return None
    return None if a == b else f"{path or '/'}: {json.dumps(a)[:80]} vs {json.dumps(b)[:80]}"


def without_id(doc):
    if isinstance(doc, dict) and "id" in doc:
        return {k: v for k, v in doc.items() if k != "id"}
    return doc


PROBLEM_TYPES = {
    400: "/problems/malformed-document", 401: "/problems/unauthorized", 404: "/problems/not-found",
    405: "/problems/method-not-allowed", 413: "/problems/payload-too-large",
    415: "/problems/unsupported-media-type", 500: "/problems/internal-error",
}
PROBLEM_TYPES_422 = {"/problems/invalid-value", "/problems/unsupported", "/problems/fit-failed"}


def problem_issues(doc, status=None):
    """What is wrong with a problem document (RFC 9457 members type, title, status, detail)."""
    issues = []
    if not isinstance(doc, dict):
        return ["the body is not a JSON object"]
    for member, kind in (("type", str), ("title", str), ("status", int), ("detail", str)):
        if member not in doc:
            issues.append(f"no '{member}'")
        elif not isinstance(doc[member], kind) or isinstance(doc[member], bool):
            issues.append(f"'{member}' is not a {kind.__name__}")
    if status is not None and doc.get("status") != status:
        issues.append(f"'status' {doc.get('status')} differs from the HTTP status {status}")
    t = doc.get("type")
    if isinstance(t, str) and isinstance(doc.get("status"), int):
        expected = PROBLEM_TYPES.get(doc["status"])
        if expected and t != expected:
            issues.append(f"type {t} for status {doc['status']} (the plan says {expected})")
        if doc["status"] == 422 and t not in PROBLEM_TYPES_422:
            issues.append(f"type {t} for 422 (the plan says one of {sorted(PROBLEM_TYPES_422)})")
    if "pointer" in doc and not (isinstance(doc["pointer"], str) and (doc["pointer"] == "" or doc["pointer"].startswith("/"))):
        issues.append(f"'pointer' {doc['pointer']!r} is not an RFC 6901 JSON pointer")
    if "line" in doc and not (isinstance(doc["line"], int) and doc["line"] >= 1):
        issues.append(f"'line' {doc['line']!r} is not a 1-based line number")
    if "accepted" in doc and not isinstance(doc["accepted"], list):
        issues.append("'accepted' is not a list")
    return issues


def check_problem(checks, name, r, status=None, statuses=None, pointer=None, pointer_prefix=None, line=None,
                  parameter=None, accepted=False, schema=None):
    """Checks r is a problem answer: 4xx, application/problem+json, the RFC 9457 members, and
    the named extension members. Returns the parsed problem (or None)."""
    if not is_response(r):
        checks.check(f"{name}: answered", False, describe(r))
        return None
    wanted = statuses if statuses is not None else ({status} if status is not None else None)
    if wanted is not None:
        checks.check(f"{name}: status {'/'.join(str(s) for s in sorted(wanted))}", r.status_code in wanted,
                     describe(r))
    else:
        checks.check(f"{name}: status 4xx", 400 <= r.status_code < 500, describe(r))
    checks.check(f"{name}: Content-Type {PROBLEM_TYPE}", media_type(r) == PROBLEM_TYPE,
                 r.headers.get("Content-Type"))
    doc = json_of(r)
    issues = problem_issues(doc, r.status_code)
    checks.check(f"{name}: problem document has type, title, status, detail", not issues,
                 "; ".join(issues) + " | " + describe(r, 200) if issues else doc.get("type"))
    if doc is None or not isinstance(doc, dict):
        return None
    if pointer is not None:
        checks.check(f"{name}: pointer is {pointer!r}", doc.get("pointer") == pointer, f"got {doc.get('pointer')!r}")
    if pointer_prefix is not None:
        p = doc.get("pointer")
        checks.check(f"{name}: pointer starts with {pointer_prefix!r}", isinstance(p, str) and p.startswith(pointer_prefix),
                     f"got {p!r}")
    if line is not None:
        checks.check(f"{name}: line is {line}", doc.get("line") == line, f"got {doc.get('line')!r}")
    if parameter is not None:
        checks.check(f"{name}: parameter is {parameter!r}", doc.get("parameter") == parameter,
                     f"got {doc.get('parameter')!r}")
    if accepted:
        acc = doc.get("accepted")
        checks.check(f"{name}: lists what is accepted", isinstance(acc, list) and len(acc) > 0, f"got {acc!r}"[:200])
    if schema is not None:
        schema.check(checks, f"{name}: problem matches the OpenAPI schema", doc, "/v1/fit", "post", r.status_code,
                     PROBLEM_TYPE)
    return doc


# ---- OpenAPI schemas -------------------------------------------------------------------------

class OpenAPI:
    """openapi/openapi.yaml of the repository, for validating documents. If the file is missing
    (or cannot be read), every schema check is reported as not run (SKIP)."""

    def __init__(self, repo):
        self.path = os.path.join(repo, "openapi", "openapi.yaml")
        self.doc = None
        self.problem = None
        try:
            import yaml  # python3-yaml
            import jsonschema  # python3-jsonschema
            self._jsonschema = jsonschema
        except ImportError as e:
            self.problem = f"python module missing: {e}"
            return
        if not os.path.exists(self.path):
            self.problem = f"{self.path} does not exist yet"
            return
        try:
            with open(self.path, encoding="utf-8") as f:
                self.doc = yaml.safe_load(f)
        except Exception as e:  # noqa: BLE001
            self.problem = f"{self.path} does not parse as YAML: {e}"
            self.doc = None

    @property
    def available(self):
        return self.doc is not None

    def _resolve(self, node):
        """Follows a local $ref ('#/...') of an OpenAPI object (responses, media types)."""
        seen = 0
        while isinstance(node, dict) and "$ref" in node and seen < 20:
            ref = node["$ref"]
            if not ref.startswith("#/"):
                return None
            target = self.doc
            for part in ref[2:].split("/"):
                part = part.replace("~1", "/").replace("~0", "~")
                if not isinstance(target, dict) or part not in target:
                    return None
                target = target[part]
            node = target
            seen += 1
        return node

    def response_schema(self, path, method, status, content_type):
        """The schema the OpenAPI document gives for this answer, or (None, reason)."""
        paths = self.doc.get("paths") or {}
        item = self._resolve(paths.get(path))
        if not isinstance(item, dict):
            return None, f"no path {path} in openapi.yaml"
        op = self._resolve(item.get(method.lower()))
        if not isinstance(op, dict):
            return None, f"no {method.upper()} {path} in openapi.yaml"
        # YAML reads unquoted status codes (200:) as integers.
        responses = {str(k): v for k, v in (op.get("responses") or {}).items()}
        code = str(status)
        resp = None
        for key in (code, code[0] + "XX", code[0] + "xx", "default"):
            if key in responses:
                resp = self._resolve(responses[key])
                break
        if not isinstance(resp, dict):
            return None, f"no response {status} for {method.upper()} {path} in openapi.yaml"
        content = resp.get("content") or {}
        media = None
        for key in (content_type, content_type.split(";")[0]):
            if key in content:
                media = self._resolve(content[key])
                break
        if media is None:
            return None, f"no content {content_type} for {method.upper()} {path} {status} (has {list(content)})"
        if "schema" not in media and "itemSchema" in media:
            return media["itemSchema"], None
        if "schema" not in media:
            return None, f"no schema for {content_type} of {method.upper()} {path} {status}"
        return media["schema"], None

    def component(self, name):
        schemas = ((self.doc or {}).get("components") or {}).get("schemas") or {}
        return {"$ref": f"#/components/schemas/{name}"} if name in schemas else None

    def validate(self, instance, schema):
        """None when the instance is valid, else the first error message (Draft 2020-12)."""
        js = self._jsonschema
        validator_class = getattr(js, "Draft202012Validator", None)
        if validator_class is None:
            return "jsonschema has no Draft202012Validator"
        # $ref inside the schema resolves against the whole OpenAPI document (#/components/schemas/...).
        resolver = js.RefResolver(base_uri="", referrer=self.doc)
        validator = validator_class(schema, resolver=resolver)
        errors = sorted(validator.iter_errors(instance), key=lambda e: list(e.absolute_path))
        if not errors:
            return None
        shown = []
        for e in errors[:4]:
            where = "/" + "/".join(str(p) for p in e.absolute_path)
            shown.append(f"at {where}: {e.message[:160]}")
        return f"{len(errors)} error(s): " + "; ".join(shown)

    def check(self, checks, name, instance, path, method, status, content_type, fallback=None):
        """One check: instance matches the schema of this answer. SKIP (not run) without the file.
        fallback names a components/schemas entry for answers the paths do not list (e.g. a 404
        for a path that does not exist)."""
        if not self.available:
            return checks.skip_schema(name, self.problem)
        schema, reason = self.response_schema(path, method, status, content_type)
        if schema is None and fallback is not None:
            schema = self.component(fallback)
            if schema is None:
                reason += f"; and no components/schemas/{fallback}"
        if schema is None:
            return checks.check(name, False, reason)
        try:
            error = self.validate(instance, schema)
        except Exception as e:  # noqa: BLE001 - a broken schema is a failed check, not a crash
            error = f"schema could not be applied: {type(e).__name__}: {e}"
        return checks.check(name, error is None, error or "")

    def check_component(self, checks, name, instance, component):
        if not self.available:
            return checks.skip_schema(name, self.problem)
        schema = self.component(component)
        if schema is None:
            return checks.check(name, False, f"no components/schemas/{component} in openapi.yaml")
        try:
            error = self.validate(instance, schema)
        except Exception as e:  # noqa: BLE001
            error = f"schema could not be applied: {type(e).__name__}: {e}"
        return checks.check(name, error is None, error or "")


# ---- Prometheus text exposition format 0.0.4 -----------------------------------------------

def parse_prometheus(text):
    """Parses the Prometheus text exposition format (version 0.0.4): returns
    (samples, types, errors) with samples a list of (name, {label: value}, float)."""
    samples, types, errors = [], {}, []
    for number, line in enumerate(text.split("\n"), 1):
        if not line.strip():
            continue
        if line.startswith("#"):
            parts = line.split(None, 3)
            if len(parts) >= 4 and parts[1] == "TYPE":
                types[parts[2]] = parts[3].strip()
            continue
        try:
            i = 0
            while i < len(line) and line[i] not in "{ \t":
                i += 1
            name = line[:i]
            labels = {}
            if i < len(line) and line[i] == "{":
                i += 1
                while True:
                    while line[i] in " ,":
                        i += 1
                    if line[i] == "}":
                        i += 1
                        break
                    eq = line.index("=", i)
                    key = line[i:eq].strip()
                    i = eq + 1
                    if line[i] != '"':
                        raise ValueError("label value not quoted")
                    i += 1
                    value = []
                    while line[i] != '"':
                        if line[i] == "\\":
                            i += 1
                            value.append({"n": "\n", "\\": "\\", '"': '"'}.get(line[i], "\\" + line[i]))
                        else:
                            value.append(line[i])
                        i += 1
                    i += 1
                    labels[key] = "".join(value)
            rest = line[i:].split()
            if not name or not rest or len(rest) > 2:
                raise ValueError("expected 'name{labels} value [timestamp]'")
            v = rest[0]
            value = {"+Inf": math.inf, "-Inf": -math.inf, "NaN": math.nan}.get(v)
            if value is None:
                value = float(v)
            samples.append((name, labels, value))
        except (ValueError, IndexError) as e:
            errors.append(f"line {number}: {line[:120]!r}: {e}")
    return samples, types, errors


def metric_value(samples, name, **labels):
    """Sum of the samples of name whose labels include the given ones (0 when none)."""
    total = 0.0
    for n, l, v in samples:
        if n == name and all(l.get(k) == val for k, val in labels.items()):
            total += v
    return total


def fetch_metrics(server, headers=None):
    r = http("GET", server, "/metrics", headers=headers or {}, timeout=30)
    if not is_response(r) or r.status_code != 200:
        return None, r
    return parse_prometheus(r.text), r


# ---- samples ---------------------------------------------------------------------------------

def load_truth(repo):
    with open(os.path.join(repo, "sample-spectra", "truth.json"), encoding="utf-8") as f:
        return json.load(f)


def table_parameters(sample):
    """The table settings of a sample as (name, value) pairs: the query parameters of POST /v1/fit
    for text/csv and, with '--' and '-' for '_', the CLI flags; carrying the JSON request's
    exclude ranges, loss and distance so that both give the same fit."""
    pairs = [("x_unit", sample["x_unit"]), ("y_unit", sample["y_unit"])]
    for lo, hi in sample.get("exclude", []):
        pairs.append(("exclude", f"{lo}:{hi}"))
    options = sample.get("options", {})
    if "loss" in options:
        pairs.append(("loss", options["loss"]["kind"]))
        pairs.append(("loss_scale", str(options["loss"]["scale"])))
    if "distance" in options:
        pairs.append(("distance", f"{options['distance']['value']} {options['distance']['unit']}"))
    return pairs


def cli_flags(pairs):
    flags = []
    for name, value in pairs:
        flags += ["--" + name.replace("_", "-"), value]
    return flags


def planck_spectrum(n, temperature=5000.0, lo_nm=300.0, hi_nm=2300.0, scale=1e-18, noise=0.01, seed=1,
                    errors=True):
    """A synthetic Planck spectrum (B_lambda per nm times a solid angle, W/m2/nm), CODATA 2018
    exact h, c, k; seeded Gaussian noise. Returns the request document."""
    import random
    h, c, k = 6.62607015e-34, 299792458.0, 1.380649e-23
    rng = random.Random(seed)
    xs, ys, es = [], [], []
    for i in range(n):
        lam_nm = lo_nm + (hi_nm - lo_nm) * i / max(n - 1, 1)
        lam = lam_nm * 1e-9
        b = 2 * h * c * c / lam ** 5 / math.expm1(h * c / (lam * k * temperature)) * 1e-9 * scale
        xs.append(round(lam_nm, 6))
        ys.append(float(f"{b * (1 + noise * rng.gauss(0, 1)):.6e}"))
        es.append(float(f"{b * noise:.4e}"))
    spectrum = {"x": xs, "x_unit": "nm", "y": ys, "y_unit": "W/m2/nm"}
    if errors:
        spectrum["y_error"] = es
    return {"spectrum": spectrum}


def compact(doc):
    return json.dumps(doc, separators=(",", ":"))


def read_passband_file(repo, band):
    """A shipped curve file, core/data/passbands/<band>.csv: its '# key: value' comments (notes as a
    list) and its samples, wavelengths in micrometres as the file gives them."""
    meta, notes, wavelength, response = {}, [], [], []
    header_seen = False
    with open(os.path.join(repo, "core", "data", "passbands", band + ".csv"), encoding="utf-8") as f:
        for raw in f:
            line = raw.strip()
            if not line:
                continue
            if line.startswith("#"):
                key, sep, value = line[1:].strip().partition(": ")
                if sep and key == "note":
                    notes.append(value.strip())
                elif sep:
                    meta[key] = value.strip()
                continue
            if not header_seen:
                header_seen = True  # wavelength_um,response
                continue
            w, s = line.split(",")
            wavelength.append(float(w))
            response.append(float(s))
    return {"meta": meta, "notes": notes, "wavelength_um": wavelength, "response": response}


def check_served_paths(checks, server, method, paths):
    """The served /openapi.yaml documents `method` (lower case) on each of the paths."""
    import yaml
    r = http("GET", server, "/openapi.yaml")
    served = None
    if is_response(r) and r.status_code == 200:
        try:
            served = yaml.safe_load(r.content)
        except yaml.YAMLError:
            served = None
    documented = (served or {}).get("paths") or {} if isinstance(served, dict) else {}
    missing = [p for p in paths if method not in (documented.get(p) or {})]
    checks.check(f"GET /openapi.yaml documents {method.upper()} " + " and ".join(paths), served is not None and not missing,
                 describe(r, 120) if served is None else f"missing {missing}")


def answer_json(checks, schema, label, r, path, method):
    """200 application/json, parsed, and valid against the schema of the path; returns the document."""
    ok = is_response(r) and r.status_code == 200 and media_type(r) == "application/json"
    checks.check(f"{label}: 200 application/json", ok, "" if ok else describe(r))
    doc = json_of(r) if ok else None
    if ok and doc is None:
        checks.check(f"{label}: body parses as JSON", False, describe(r))
    if doc is not None:
        schema.check(checks, f"{label}: response matches the OpenAPI schema", doc, path, method, 200, "application/json")
    return doc
