"""Bad input through the CLI: exit code 2, a clear message on stderr naming where the problem is,
nothing on stdout, and never a crash (exit codes from signals are negative here)."""
import argparse
import json
import os
import tempfile

from clitest import Checks, run_cli

parser = argparse.ArgumentParser()
parser.add_argument("--cli", required=True)
args = parser.parse_args()
checks = Checks()

GOOD = {"spectrum": {"x": [400, 500, 600, 700, 800], "x_unit": "nm",
                     "y": [1.0, 1.2, 1.1, 0.9, 0.7], "y_unit": "W/m2/nm"}}


def with_change(path, value):
    doc = json.loads(json.dumps(GOOD))
    node = doc
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    return json.dumps(doc)


cases = [
    ("malformed JSON", "{\"spectrum\": [", "not valid JSON"),
    ("empty document", "", "x_unit is required"),
    ("unknown x unit", with_change(["spectrum", "x_unit"], "furlong"), "/spectrum/x_unit"),
    ("unknown y unit", with_change(["spectrum", "y_unit"], "W/m2"), "/spectrum/y_unit"),
    ("string in y", with_change(["spectrum", "y"], [1, 2, "three", 4, 5]), "/spectrum/y/2"),
    ("negative x", with_change(["spectrum", "x"], [400, -500, 600, 700, 800]), "/spectrum/x/1"),
    ("zero error", with_change(["spectrum", "y_error"], [0.1, 0.1, 0.0, 0.1, 0.1]), "/spectrum/y_error/2"),
    ("lengths differ", with_change(["spectrum", "y"], [1, 2, 3]), "/spectrum/y"),
    ("unknown member", with_change(["spectrum", "colour"], "red"), "/spectrum/colour"),
    ("unknown model", with_change(["model"], {"kind": "rainbow"}), "/model/kind"),
    ("unknown option", with_change(["options"], {"speed": "ludicrous"}), "/options/speed"),
    ("one point", with_change(["spectrum", "x"], [500]).replace("[1.0, 1.2, 1.1, 0.9, 0.7]", "[1.0]"), "fewer than"),
    ("overflowing number", json.dumps(GOOD).replace("400", "1e999"), "cannot represent"),
    ("deep nesting", "[" * 100000 + "]" * 100000, "nests deeper"),
]
for name, body, expected in cases:
    with tempfile.NamedTemporaryFile("w", suffix=".json", delete=False) as f:
        f.write(body)
    code, doc, err = run_cli(args.cli, ["fit", "--format", "json" if body else "auto", f.name])
    os.unlink(f.name)
    checks.check(f"{name}: exit code 2 and the place named", code == 2 and expected in err and doc is None,
                 f"exit {code}, stderr: {err.strip()[:160]}")

table_cases = [
    ("table without units", "400,1\n500,2\n600,1\n", [], "x_unit is required"),
    ("bad number in a table", "# comment\nx,y\n400,1\n500,abc\n600,1\n", ["--x-unit", "nm", "--y-unit", "Jy"], "line 4"),
    ("NaN in a table", "400 1\n500 nan\n600 1\n", ["--x-unit", "nm", "--y-unit", "Jy"], "line 2"),
    ("ragged table", "400,1,0.1\n500,2\n", ["--x-unit", "nm", "--y-unit", "Jy"], "line 2"),
    ("binary garbage", "\x00\x01\x02\xff\xfe", ["--x-unit", "nm", "--y-unit", "Jy"], "cannot be read"),
]
for name, body, flags, expected in table_cases:
    code, doc, err = run_cli(args.cli, ["fit", "-", *flags], stdin=body)
    checks.check(f"{name}: exit code 2 and the place named", code == 2 and expected in err and doc is None,
                 f"exit {code}, stderr: {err.strip()[:160]}")

code, doc, err = run_cli(args.cli, ["fit", "/nonexistent/file.json"])
checks.check("missing file: exit code 2", code == 2 and "cannot open" in err, err.strip())
code, doc, err = run_cli(args.cli, ["fit"])
checks.check("missing argument: exit code 2", code == 2, err.strip()[:120])
code, doc, err = run_cli(args.cli, ["fit", "-"], stdin=json.dumps(GOOD))
checks.check("a good request from standard input: exit code 0", code == 0 and doc is not None, err.strip())
checks.finish()
