"""The curl examples of README.md work: every fenced ```sh block immediately preceded by the line
`<!-- test: curl -->` is run with `sh -c` from the repository root, with 127.0.0.1:8080 replaced by
the test server's address; each must exit 0, print JSON that parses (one document, or NDJSON
lines), and reach the test server. Traffic goes to 127.0.0.1 only: a block naming any other host is
not run (and fails)."""
import json
import os
import re
import subprocess

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, Server

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
MARKER = "<!-- test: curl -->"
URL_RE = re.compile(r"https?://([^/:'\"\s]+)(?::(\d+))?")


def marked_blocks(text):
    """[(line number of the fence, block text)], and the markers not followed by a ```sh fence."""
    lines = text.split("\n")
    blocks, stray = [], []
    for i, line in enumerate(lines):
        if line.strip() != MARKER:
            continue
        if i + 1 < len(lines) and lines[i + 1].strip() in ("```sh", "```shell"):
            body = []
            j = i + 2
            while j < len(lines) and lines[j].strip() != "```":
                body.append(lines[j])
                j += 1
            if j >= len(lines):
                stray.append(i + 1)
                continue
            blocks.append((i + 2, "\n".join(body)))
        else:
            stray.append(i + 1)
    return blocks, stray


def parse_output(out):
    """The JSON values in the output: one document, or one per non-empty line (NDJSON)."""
    text = out.decode("utf-8")
    try:
        return [json.loads(text)]
    except json.JSONDecodeError:
        pass
    values = []
    for line in text.split("\n"):
        if line.strip():
            values.append(json.loads(line))
    return values


def main():
    readme = os.path.join(args.repo, "README.md")
    with open(readme, encoding="utf-8") as f:
        blocks, stray = marked_blocks(f.read())
    checks.check(f"every '{MARKER}' line is immediately followed by a ```sh block", not stray,
                 f"markers at README.md lines {stray}" if stray else f"{len(blocks)} marked block(s)")
    server = Server(args.server, name="server")
    if not server.start(checks):
        return
    if not blocks:
        checks.skip("README curl blocks", f"README.md has no ```sh block preceded by '{MARKER}' yet")
        # At least one check: curl reaches the test server and its answer parses.
        rc, body, status, _ = harness.curl(server.url("/v1/health"), [])
        checks.check("curl reaches the test server (GET /v1/health, JSON)", rc == 0 and status == 200
                     and isinstance(json.loads(body or b"null"), dict), f"curl exit {rc}, HTTP {status}")
    for line_number, block in blocks:
        label = f"README.md line {line_number}"
        command = block.replace("127.0.0.1:8080", server.address).replace("localhost:8080", server.address)
        if server.address not in command:
            checks.note(f"{label}: the block does not name 127.0.0.1:8080; it is run as written")
        foreign = sorted({m.group(0) for m in URL_RE.finditer(command) if m.group(1) != "127.0.0.1"})
        if foreign:
            checks.check(f"{label}: names only 127.0.0.1 (not run otherwise)", False, foreign)
            continue
        before = len(server.access_log())
        try:
            done = subprocess.run(["sh", "-c", command], cwd=args.repo, capture_output=True, timeout=120,
                                  env=harness.clean_environment())
        except subprocess.TimeoutExpired:
            checks.check(f"{label}: finishes within 120 s", False, command[:200])
            continue
        first = command.strip().split("\n")[0][:110]
        checks.check(f"{label}: exits 0  [{first}]", done.returncode == 0,
                     f"exit {done.returncode}, stderr: {done.stderr.decode(errors='replace').strip()[:200]}")
        try:
            values = parse_output(done.stdout)
            ok, detail = len(values) > 0, f"{len(values)} JSON value(s)"
        except (UnicodeDecodeError, json.JSONDecodeError) as e:
            values, ok, detail = [], False, f"{e}: {done.stdout[:200]!r}"
        checks.check(f"{label}: prints JSON that parses", ok, detail)
        problems = [v for v in values if isinstance(v, dict) and str(v.get("type", "")).startswith("/problems/")]
        if problems:
            checks.note(f"{label}: the output is a problem document: {json.dumps(problems[0])[:200]}")
        log = server.wait_for_log(before + 1, timeout=5)
        checks.check(f"{label}: the command reached the test server", len(log) > before,
                     f"{len(log) - before} access-log line(s)")
    server.stop(checks)


harness.crash_guard(checks, main)
