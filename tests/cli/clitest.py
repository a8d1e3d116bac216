"""Small helpers for the CLI end-to-end checks: run the CLI, count checks, print the closing line."""
import json
import subprocess
import sys


class Checks:
    def __init__(self):
        self.passed = 0
        self.failed = 0

    def check(self, name, ok, detail=""):
        print(f"{'PASS' if ok else 'FAIL'}  {name}  {detail}")
        if ok:
            self.passed += 1
        else:
            self.failed += 1

    def finish(self):
        print(f"{self.passed} passed, {self.failed} failed")
        sys.exit(0 if self.failed == 0 and self.passed > 0 else 1)


def run_cli(cli, args, stdin=None):
    """Runs the CLI; returns (exit code, parsed stdout or None, stderr)."""
    done = subprocess.run([cli, *args], input=stdin, capture_output=True, text=True, timeout=120)
    try:
        document = json.loads(done.stdout) if done.stdout.strip() else None
    except json.JSONDecodeError:
        document = None
    return done.returncode, document, done.stderr
