"""Bad input over HTTP, table-driven: every case must answer 4xx (never 5xx) with Content-Type
application/problem+json and the RFC 9457 members type, title, status and detail, plus `pointer`
(an RFC 6901 JSON pointer), `line` (a table line) or `parameter` (a query parameter) where the
plan says; and the server must answer a good request right after each case. Numbers at and
beyond the edges of a double (-0, subnormals, 1e-400, 1e308, 1e999, integers of more than 64 bits,
NaN and Infinity spelled in JSON and in CSV), text that is not UTF-8, duplicate keys, and every
endpoint. The few edge values a practitioner expects to be accepted (-0 as 0, a subnormal flux)
must answer 200 with the same numbers as the plain 0. The raw-socket cases (lying lengths,
truncated chunked bodies, megabyte headers, 10^7 points, slow clients) are in test_hostile_http.py."""
import json
import os
import random

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, Server, check_problem, describe, http, is_response

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)

GOOD = harness.planck_spectrum(20, temperature=5000.0, seed=3)
with open(os.path.join(args.repo, "sample-spectra", "tms-0203-catalogue-sed.json"), encoding="utf-8") as _f:
    SED = json.load(_f)  # band photometry (ABmag) of the invented survey


def sed_csv(error_of_row_1):
    rows = [f"{m['band']},{m['value']},{error_of_row_1 if i == 1 else m['error']},{m['unit']}"
            for i, m in enumerate(SED["photometry"])]
    return ("band,value,error,unit\n" + "\n".join(rows) + "\n").encode()

GOOD_TEXT = harness.compact(GOOD)
JSON_CT = {"Content-Type": "application/json"}
CSV_CT = {"Content-Type": "text/csv"}
GOOD_CSV = "# x in nm, y in W/m2/nm\nx,y,y_error\n" + "".join(
    f"{x},{y},{e}\n" for x, y, e in zip(GOOD["spectrum"]["x"], GOOD["spectrum"]["y"], GOOD["spectrum"]["y_error"]))
CSV_Q = "?" + harness.query([("x_unit", "nm"), ("y_unit", "W/m2/nm")])


def changed(path, value, base=None):
    doc = json.loads(json.dumps(base or GOOD))
    node = doc
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    return harness.compact(doc).encode()


def removed(path):
    doc = json.loads(GOOD_TEXT)
    node = doc
    for key in path[:-1]:
        node = node[key]
    del node[path[-1]]
    return harness.compact(doc).encode()


def with_points(n):
    return harness.compact(harness.planck_spectrum(n, seed=5)).encode()


def spectrum_text(**members):
    """GOOD's spectrum as text with some members replaced by raw JSON text (for spellings json.dumps
    cannot write, e.g. NaN, duplicates, invalid UTF-8)."""
    s = GOOD["spectrum"]
    parts = {k: json.dumps(v) for k, v in s.items()}
    parts.update(members)
    return ("{" + ",".join(f'"{k}":{v}' for k, v in parts.items()) + "}")


def raw(spectrum, rest=""):
    return ('{"spectrum":' + spectrum + rest + "}").encode()


X = GOOD["spectrum"]["x"]
Y = GOOD["spectrum"]["y"]
x_text = json.dumps(X)


def x_with(token, at=3, values=None):
    values = [json.dumps(v) for v in (X if values is None else values)]
    values[at] = token
    return "[" + ",".join(values) + "]"


def y_with(token, at=3):
    return x_with(token, at, Y)


def e_with(token, at=3):
    return x_with(token, at, GOOD["spectrum"]["y_error"])


garbage = bytes(random.Random(42).randrange(256) for _ in range(2000))

# (name, method, path, body, headers, expectations, server); expectations: status or statuses, pointer,
# pointer_prefix, line, parameter, accepted (a list is expected), allow (the Allow header must name it).
F = "/v1/fit"
B = "/v1/fit/batch"
ND_CT = {"Content-Type": "application/x-ndjson"}
CASES = [
    # -- malformed JSON (400)
    ("malformed JSON", "POST", F, b'{"spectrum": [', JSON_CT, {"status": 400}),
    ("trailing garbage after the document", "POST", F, GOOD_TEXT.encode() + b" xyz", JSON_CT, {"status": 400}),
    ("two documents in one body", "POST", F, (GOOD_TEXT + GOOD_TEXT).encode(), JSON_CT, {"status": 400}),
    ("single quotes", "POST", F, GOOD_TEXT.replace('"', "'").encode(), JSON_CT, {"status": 400}),
    ("trailing comma", "POST", F, GOOD_TEXT[:-1].encode() + b",}", JSON_CT, {"status": 400}),
    ("NaN spelled in JSON", "POST", F, raw(spectrum_text(x=x_with("NaN"))), JSON_CT, {"status": 400}),
    ("Infinity spelled in JSON", "POST", F, raw(spectrum_text(x=x_with("Infinity"))), JSON_CT, {"status": 400}),
    ("-Infinity spelled in JSON", "POST", F, raw(spectrum_text(y=x_with("-Infinity"))), JSON_CT, {"status": 400}),
    ("1e999 (overflows a double)", "POST", F, raw(spectrum_text(x=x_with("1e999"))), JSON_CT,
     {"statuses": {400, 422}}),
    ("-1e999 in y", "POST", F, raw(spectrum_text(y=x_with("-1e999"))), JSON_CT, {"statuses": {400, 422}}),
    ("invalid UTF-8 in a string", "POST", F, raw(spectrum_text(x_unit='"nQm"')).replace(b"nQm", b"n\xffm"), JSON_CT,
     {"status": 400}),
    ("invalid UTF-8 in a member name", "POST", F,
     b'{"spectrum":' + spectrum_text().encode() + b',"\xc3\x28":1}', JSON_CT, {}),
    ("lone surrogate escape in a string", "POST", F, raw(spectrum_text(x_unit='"\\ud800"')), JSON_CT, {}),
    ("deeply nested arrays (100000 levels)", "POST", F, b"[" * 100000 + b"]" * 100000, JSON_CT, {"status": 400}),
    ("deeply nested objects (100000 levels)", "POST", F, b'{"a":' * 100000 + b"1" + b"}" * 100000, JSON_CT,
     {"status": 400}),
    ("deep nesting inside x (70 levels)", "POST", F, raw(spectrum_text(x="[" * 70 + "1" + "]" * 70)), JSON_CT, {}),
    ("empty body", "POST", F, b"", JSON_CT, {"status": 400}),
    ("whitespace-only body", "POST", F, b" \n\t ", JSON_CT, {"status": 400}),
    ("binary garbage", "POST", F, garbage, JSON_CT, {"status": 400}),
    ("NUL bytes", "POST", F, b"\x00" * 64, JSON_CT, {"status": 400}),
    # -- wrong types (422 with a pointer)
    ("top-level array", "POST", F, b"[1, 2, 3]", JSON_CT, {"status": 422, "pointer": ""}),
    ("top-level string", "POST", F, b'"spectrum"', JSON_CT, {"status": 422, "pointer": ""}),
    ("top-level null", "POST", F, b"null", JSON_CT, {"status": 422, "pointer": ""}),
    ("spectrum is a string", "POST", F, b'{"spectrum": "400-800 nm"}', JSON_CT, {"status": 422, "pointer": "/spectrum"}),
    ("x is a string", "POST", F, changed(["spectrum", "x"], "400,500"), JSON_CT, {"status": 422, "pointer": "/spectrum/x"}),
    ("string in y", "POST", F, changed(["spectrum", "y", 2], "three"), JSON_CT, {"status": 422, "pointer": "/spectrum/y/2"}),
    ("null in x", "POST", F, changed(["spectrum", "x", 1], None), JSON_CT, {"status": 422, "pointer": "/spectrum/x/1"}),
    ("boolean in y_error", "POST", F, changed(["spectrum", "y_error", 0], True), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_error/0"}),
    ("nested array in y", "POST", F, changed(["spectrum", "y", 4], [1.0]), JSON_CT, {"status": 422, "pointer": "/spectrum/y/4"}),
    ("x_unit is a number", "POST", F, changed(["spectrum", "x_unit"], 42), JSON_CT, {"status": 422, "pointer": "/spectrum/x_unit"}),
    ("y_unit is a boolean", "POST", F, changed(["spectrum", "y_unit"], False), JSON_CT, {"status": 422, "pointer": "/spectrum/y_unit"}),
    ("model is a string", "POST", F, changed(["model"], "planck"), JSON_CT, {"status": 422, "pointer": "/model"}),
    ("options is an array", "POST", F, changed(["options"], []), JSON_CT, {"status": 422, "pointer": "/options"}),
    ("max_iterations 1.5", "POST", F, changed(["options"], {"max_iterations": 1.5}), JSON_CT,
     {"status": 422, "pointer": "/options/max_iterations"}),
    ("time_budget_seconds a string", "POST", F, changed(["options"], {"time_budget_seconds": "fast"}), JSON_CT,
     {"status": 422, "pointer": "/options/time_budget_seconds"}),
    # -- missing members
    ("missing spectrum", "POST", F, b'{"model": {"kind": "planck"}}', JSON_CT, {"status": 422, "pointer": "/spectrum"}),
    ("empty object", "POST", F, b"{}", JSON_CT, {"status": 422, "pointer": "/spectrum"}),
    ("missing x", "POST", F, removed(["spectrum", "x"]), JSON_CT, {"status": 422, "pointer": "/spectrum/x"}),
    ("missing y", "POST", F, removed(["spectrum", "y"]), JSON_CT, {"status": 422, "pointer": "/spectrum/y"}),
    ("missing x_unit", "POST", F, removed(["spectrum", "x_unit"]), JSON_CT, {"status": 422, "pointer": "/spectrum/x_unit"}),
    ("missing y_unit", "POST", F, removed(["spectrum", "y_unit"]), JSON_CT, {"status": 422, "pointer": "/spectrum/y_unit"}),
    ("missing model kind", "POST", F, changed(["model"], {}), JSON_CT, {"status": 422, "pointer": "/model/kind"}),
    ("missing loss kind", "POST", F, changed(["options"], {"loss": {"scale": 2}}), JSON_CT,
     {"status": 422, "pointer": "/options/loss/kind"}),
    ("missing distance unit", "POST", F, changed(["options"], {"distance": {"value": 10}}), JSON_CT,
     {"status": 422, "pointer": "/options/distance/unit"}),
    # -- lengths and values
    ("y shorter than x", "POST", F, changed(["spectrum", "y"], Y[:15]), JSON_CT, {"status": 422, "pointer": "/spectrum/y"}),
    ("y_error longer than x", "POST", F, changed(["spectrum", "y_error"], GOOD["spectrum"]["y_error"] + [1e-20]), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_error"}),
    ("empty y_error", "POST", F, changed(["spectrum", "y_error"], []), JSON_CT, {"status": 422, "pointer": "/spectrum/y_error"}),
    ("zero y_error", "POST", F, changed(["spectrum", "y_error", 2], 0.0), JSON_CT, {"status": 422, "pointer": "/spectrum/y_error/2"}),
    ("negative y_error", "POST", F, changed(["spectrum", "y_error", 2], -1e-12), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_error/2"}),
    ("zero x", "POST", F, changed(["spectrum", "x", 0], 0), JSON_CT, {"status": 422, "pointer": "/spectrum/x/0"}),
    ("negative x", "POST", F, changed(["spectrum", "x", 1], -500), JSON_CT, {"status": 422, "pointer": "/spectrum/x/1"}),
    ("one point (fewer than the two parameters)", "POST", F,
     b'{"spectrum":{"x":[500],"x_unit":"nm","y":[1e-12],"y_unit":"W/m2/nm"}}', JSON_CT,
     {"status": 422, "pointer_prefix": "/spectrum"}),
    ("no points", "POST", F, b'{"spectrum":{"x":[],"x_unit":"nm","y":[],"y_unit":"W/m2/nm"}}', JSON_CT,
     {"status": 422, "pointer": "/spectrum/x"}),
    ("every y negative", "POST", F, changed(["spectrum", "y"], [-v for v in Y]), JSON_CT,
     {"status": 422, "pointer_prefix": "/spectrum/y"}),
    ("exclude masks every point", "POST", F, changed(["spectrum", "exclude"], [[100, 10000]]), JSON_CT,
     {"status": 422, "pointer_prefix": "/spectrum"}),
    ("exclude range not a pair", "POST", F, changed(["spectrum", "exclude"], [[400]]), JSON_CT,
     {"status": 422, "pointer": "/spectrum/exclude/0"}),
    ("temperature bounds reversed", "POST", F, changed(["options"], {"temperature_bounds": [5000, 100]}), JSON_CT,
     {"status": 422, "pointer_prefix": "/options/temperature_bounds"}),
    ("temperature bounds of one number", "POST", F, changed(["options"], {"temperature_bounds": [100]}), JSON_CT,
     {"status": 422, "pointer": "/options/temperature_bounds"}),
    ("max_iterations 0", "POST", F, changed(["options"], {"max_iterations": 0}), JSON_CT,
     {"status": 422, "pointer": "/options/max_iterations"}),
    ("time_budget_seconds negative", "POST", F, changed(["options"], {"time_budget_seconds": -1}), JSON_CT,
     {"status": 422, "pointer": "/options/time_budget_seconds"}),
    ("negative loss scale", "POST", F, changed(["options"], {"loss": {"kind": "huber", "scale": -1}}), JSON_CT,
     {"status": 422, "pointer": "/options/loss/scale"}),
    ("negative distance", "POST", F, changed(["options"], {"distance": {"value": -3, "unit": "pc"}}), JSON_CT,
     {"status": 422, "pointer": "/options/distance/value"}),
    ("negative distance error", "POST", F, changed(["options"], {"distance": {"value": 3, "unit": "pc", "error": -1}}), JSON_CT,
     {"status": 422, "pointer": "/options/distance/error"}),
    # -- unknown units, models, options, members
    ("unknown x unit", "POST", F, changed(["spectrum", "x_unit"], "furlong"), JSON_CT,
     {"status": 422, "pointer": "/spectrum/x_unit", "accepted": True}),
    ("unknown y unit", "POST", F, changed(["spectrum", "y_unit"], "W/m2"), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_unit", "accepted": True}),
    ("flux unit as x unit", "POST", F, changed(["spectrum", "x_unit"], "Jy"), JSON_CT,
     {"status": 422, "pointer": "/spectrum/x_unit", "accepted": True}),
    ("unknown distance unit", "POST", F, changed(["options"], {"distance": {"value": 3, "unit": "furlong"}}), JSON_CT,
     {"status": 422, "pointer": "/options/distance/unit", "accepted": True}),
    ("unknown model", "POST", F, changed(["model"], {"kind": "rainbow"}), JSON_CT,
     {"status": 422, "pointer": "/model/kind", "accepted": True}),
    ("unknown loss", "POST", F, changed(["options"], {"loss": {"kind": "quadratic"}}), JSON_CT,
     {"status": 422, "pointer": "/options/loss/kind", "accepted": True}),
    ("unknown option", "POST", F, changed(["options"], {"speed": "ludicrous"}), JSON_CT,
     {"status": 422, "pointer": "/options/speed", "accepted": True}),
    ("unknown spectrum member", "POST", F, changed(["spectrum", "colour"], "red"), JSON_CT,
     {"status": 422, "pointer": "/spectrum/colour", "accepted": True}),
    ("unknown top-level member", "POST", F, changed(["colour"], "red"), JSON_CT, {"status": 422, "pointer": "/colour"}),
    ("unknown model member", "POST", F, changed(["model"], {"kind": "planck", "extra": 1}), JSON_CT,
     {"status": 422, "pointer": "/model/extra"}),
    ("member name with '/' and '~' (RFC 6901 escaping)", "POST", F, changed(["spectrum", "a/b~c"], 1), JSON_CT,
     {"status": 422, "pointer": "/spectrum/a~1b~0c"}),
    ("photometry (not in this version)", "POST", F, changed(["photometry"], {"bands": []}), JSON_CT,
     {"status": 422, "pointer": "/photometry"}),
    ("id is an object", "POST", F, changed(["id"], {"a": 1}), JSON_CT, {"status": 422, "pointer": "/id"}),
    # -- duplicate keys (RFC 8259 section 4: names SHOULD be unique; a duplicate is ambiguous)
    ("duplicate top-level key", "POST", F, ('{"spectrum":' + spectrum_text() + ',"spectrum":' + spectrum_text() + "}").encode(),
     JSON_CT, {}),
    ("duplicate key inside spectrum", "POST", F, raw(spectrum_text()[:-1] + ',"x_unit":"um"}'), JSON_CT, {}),
    # -- media types and sizes
    ("wrong content type (application/xml)", "POST", F, GOOD_TEXT.encode(), {"Content-Type": "application/xml"}, {"status": 415}),
    ("form content type", "POST", F, GOOD_TEXT.encode(), {"Content-Type": "application/x-www-form-urlencoded"}, {"status": 415}),
    ("no content type", "POST", F, GOOD_TEXT.encode(), {}, {}),
    ("NDJSON to /v1/fit", "POST", F, GOOD_TEXT.encode(), {"Content-Type": "application/x-ndjson"}, {"status": 415}),
    # -- tables (text/csv): query parameters and lines
    ("CSV with an unknown query parameter", "POST", F + CSV_Q + "&colour=red", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "colour"}),
    ("CSV with a misspelt query parameter", "POST", F + CSV_Q + "&xunit=nm", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "xunit"}),
    ("CSV without x_unit", "POST", F + "?y_unit=W/m2/nm", GOOD_CSV.encode(), CSV_CT,
     {"statuses": {400, 422}, "parameter": "x_unit"}),
    ("CSV without y_unit", "POST", F + "?x_unit=nm", GOOD_CSV.encode(), CSV_CT, {"statuses": {400, 422}, "parameter": "y_unit"}),
    ("CSV without any query", "POST", F, GOOD_CSV.encode(), CSV_CT, {"statuses": {400, 422}}),
    ("CSV with an unknown x_unit", "POST", F + "?x_unit=furlong&y_unit=W/m2/nm", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "x_unit", "accepted": True}),
    ("CSV with a bad number (line 4)", "POST", F + CSV_Q, b"# comment\nx,y\n400,1e-12\n500,abc\n600,1e-12\n", CSV_CT,
     {"status": 400, "line": 4}),
    ("CSV ragged row (line 3)", "POST", F + CSV_Q, b"x,y,y_error\n400,1e-12,1e-14\n500,2e-12\n", CSV_CT,
     {"status": 400, "line": 3}),
    ("CSV with nan (line 2)", "POST", F + CSV_Q, b"400,1e-12\n500,nan\n600,1e-12\n700,1e-12\n", CSV_CT,
     {"statuses": {400, 422}, "line": 2}),
    ("CSV with a negative error (line 5)", "POST", F + CSV_Q,
     ("x,y,y_error\n" + "".join(f"{x},{y},{e if i != 3 else -e}\n" for i, (x, y, e) in
                                enumerate(zip(X, Y, GOOD["spectrum"]["y_error"])))).encode(), CSV_CT,
     {"status": 422, "line": 5}),
    ("CSV with a zero x (line 1)", "POST", F + CSV_Q, b"0,1e-12\n500,2e-12\n600,1e-12\n700,1e-12\n", CSV_CT,
     {"status": 422, "line": 1}),
    ("CSV header only", "POST", F + CSV_Q, b"x,y,y_error\n", CSV_CT, {"status": 400}),
    ("CSV empty body", "POST", F + CSV_Q, b"", CSV_CT, {"status": 400}),
    ("CSV one column", "POST", F + CSV_Q, b"400\n500\n600\n", CSV_CT, {"status": 400}),
    ("CSV binary garbage", "POST", F + CSV_Q, garbage, CSV_CT, {"status": 400}),
    ("CSV with a bad exclude", "POST", F + CSV_Q + "&exclude=abc", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "exclude"}),
    ("CSV with an unknown loss", "POST", F + CSV_Q + "&loss=quadratic", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "loss"}),
    ("CSV with a non-numeric loss_scale", "POST", F + CSV_Q + "&loss=huber&loss_scale=big", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "loss_scale"}),
    ("CSV with a bad distance", "POST", F + CSV_Q + "&distance=far%20pc", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "distance"}),
    ("CSV with an unknown distance unit", "POST", F + CSV_Q + "&distance=12%20furlong", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "distance"}),
    ("CSV with temperature_min above temperature_max", "POST", F + CSV_Q + "&temperature_min=9000&temperature_max=100",
     GOOD_CSV.encode(), CSV_CT, {"status": 422}),
    ("CSV with a missing x_column", "POST", F + CSV_Q + "&x_column=9", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "x_column"}),
    ("CSV with an unknown model", "POST", F + CSV_Q + "&model=rainbow", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "model"}),
    # -- routes and methods
    ("unknown route", "GET", "/v1/nothing", None, {}, {"status": 404}),
    ("unknown version", "POST", "/v2/fit", GOOD_TEXT.encode(), JSON_CT, {"status": 404}),
    ("root path", "GET", "/", None, {}, {"status": 404}),
    ("dot segments", "GET", "/v1/%2e%2e/%2e%2e/etc/passwd", None, {}, {"status": 404}),
    ("wrong method: GET /v1/fit", "GET", F, None, {}, {"status": 405, "allow": "POST"}),
    ("wrong method: PUT /v1/fit", "PUT", F, GOOD_TEXT.encode(), JSON_CT, {"status": 405, "allow": "POST"}),
    ("wrong method: DELETE /v1/health", "DELETE", "/v1/health", None, {}, {"status": 405, "allow": "GET"}),
    ("wrong method: POST /v1/models", "POST", "/v1/models", b"{}", JSON_CT, {"status": 405, "allow": "GET"}),
    ("wrong method: PUT /v1/fit/batch", "PUT", "/v1/fit/batch", b"", {"Content-Type": "application/x-ndjson"},
     {"status": 405, "allow": "POST"}),
    ("wrong method: POST /metrics", "POST", "/metrics", b"", {}, {"status": 405, "allow": "GET"}),
] + [
    # ---- numbers at and beyond the edges of a double, in JSON (RFC 8259 section 6; IEEE 754 binary64)
    # -0 is zero: a wavelength of -0 is not positive.
    ("-0 in x", "POST", F, raw(spectrum_text(x=x_with("-0"))), JSON_CT, {"status": 422, "pointer": "/spectrum/x/3"}),
    # 1e-400 is a valid JSON number that rounds to 0 in a double: then not a positive wavelength.
    ("1e-400 in x (rounds to 0)", "POST", F, raw(spectrum_text(x=x_with("1e-400"))), JSON_CT,
     {"status": 422, "pointer": "/spectrum/x/3"}),
    # The smallest subnormal, in nm, is 0 in metres: outside what the fit can represent.
    ("subnormal x (5e-324 nm)", "POST", F, raw(spectrum_text(x=x_with("5e-324"))), JSON_CT,
     {"status": 422, "pointer": "/spectrum/x/3"}),
    ("1e308 in y (overflows when converted to W/m2/m)", "POST", F, raw(spectrum_text(y=y_with("1e308"))), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y/3"}),
    ("the largest double in y_error", "POST", F, raw(spectrum_text(y_error=e_with("1.7976931348623157e308"))), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_error/3"}),
    # An error so small that the chi-square overflows was a 200 "converged" at 20.85 K (a defect):
    # now a 422 at the error.
    ("subnormal y_error (5e-324)", "POST", F, raw(spectrum_text(y_error=e_with("5e-324"))), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_error/3", "detail_has": "too small"}),
    ("y_error 2.2e-308 (the chi-square would overflow)", "POST", F, raw(spectrum_text(y_error=e_with("2.2e-308"))),
     JSON_CT, {"status": 422, "pointer": "/spectrum/y_error/3", "detail_has": "too small"}),
    ("y_error 1e-400 (rounds to 0)", "POST", F, raw(spectrum_text(y_error=e_with("1e-400"))), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_error/3"}),
    ("y_error -0", "POST", F, raw(spectrum_text(y_error=e_with("-0"))), JSON_CT,
     {"status": 422, "pointer": "/spectrum/y_error/3"}),
    # Numbers that are not JSON numbers, or that no double holds: 400, the detail naming the token
    # (it used to say "beyond about 1.8e308" for 01 or 0x10 too).
    ("an integer of more than 64 bits", "POST", F, raw(spectrum_text(y=y_with("123456789012345678901234567890"))),
     JSON_CT, {"status": 400, "detail_has": "123456789012345678901234567890"}),
    ("1e999 in x, named in the detail", "POST", F, raw(spectrum_text(x=x_with("1e999"))), JSON_CT,
     {"status": 400, "detail_has": "1e999"}),
    ("a leading zero (01)", "POST", F, raw(spectrum_text(x=x_with("01"))), JSON_CT, {"status": 400, "detail_has": "'01'"}),
    ("a bare decimal point (1.)", "POST", F, raw(spectrum_text(x=x_with("1."))), JSON_CT,
     {"status": 400, "detail_has": "'1.'"}),
    ("an exponent without digits (1e)", "POST", F, raw(spectrum_text(y=y_with("1e"))), JSON_CT,
     {"status": 400, "detail_has": "'1e'"}),
    ("a hexadecimal number (0x10)", "POST", F, raw(spectrum_text(x=x_with("0x10"))), JSON_CT,
     {"status": 400, "detail_has": "'0x10'"}),
    ("a plus sign (+1)", "POST", F, raw(spectrum_text(x=x_with("+1"))), JSON_CT, {"status": 400}),
    ("no digit before the point (.5)", "POST", F, raw(spectrum_text(x=x_with(".5"))), JSON_CT, {"status": 400}),
    ("NaN in y_error", "POST", F, raw(spectrum_text(y_error=e_with("NaN"))), JSON_CT, {"status": 400}),
    ("nan (lower case) in y", "POST", F, raw(spectrum_text(y=y_with("nan"))), JSON_CT, {"status": 400}),
    ("-NaN in x", "POST", F, raw(spectrum_text(x=x_with("-NaN"))), JSON_CT, {"status": 400}),
    ("Infinity as time_budget_seconds", "POST", F, raw(spectrum_text(), ',"options":{"time_budget_seconds":Infinity}'),
     JSON_CT, {"status": 400}),
    ("1e999 as max_iterations", "POST", F, raw(spectrum_text(), ',"options":{"max_iterations":1e999}'), JSON_CT,
     {"status": 400, "detail_has": "1e999"}),
    ("time_budget_seconds -0", "POST", F, raw(spectrum_text(), ',"options":{"time_budget_seconds":-0}'), JSON_CT,
     {"status": 422, "pointer": "/options/time_budget_seconds"}),
    ("max_iterations 100001", "POST", F, changed(["options"], {"max_iterations": 100001}), JSON_CT,
     {"status": 422, "pointer": "/options/max_iterations"}),
    ("temperature_bounds from -0", "POST", F, raw(spectrum_text(), ',"options":{"temperature_bounds":[-0,100]}'),
     JSON_CT, {"status": 422, "pointer_prefix": "/options/temperature_bounds"}),
    ("exclude with 1e999", "POST", F, raw(spectrum_text(exclude="[[1e999,2]]")), JSON_CT, {"status": 400}),
    ("distance 1e308 pc (overflows in metres)", "POST", F,
     changed(["options"], {"distance": {"value": 1e308, "unit": "pc"}}), JSON_CT,
     {"status": 422, "pointer_prefix": "/options/distance"}),
    # The same for band photometry: an error of 1e-300 mag made a 200 of 10.4 K from infinities.
    ("photometry: an error of 1e-300 mag", "POST", F, changed(["photometry", 0, "error"], 1e-300, base=SED), JSON_CT,
     {"status": 422, "pointer": "/photometry/0/error", "detail_has": "too small"}),
    ("photometry: a subnormal error (5e-324)", "POST", F, changed(["photometry", 2, "error"], 5e-324, base=SED),
     JSON_CT, {"status": 422, "pointer": "/photometry/2/error"}),
    ("photometry table: an error of 1e-300 (line 3)", "POST", F, sed_csv("1e-300"), CSV_CT, {"status": 422, "line": 3}),
    ("photometry: NaN as a value", "POST", F,
     harness.compact(SED).replace('"value":', '"value":NaN,"x":', 1).encode(), JSON_CT, {"status": 400}),
    # ---- text that is not UTF-8 JSON
    ("a UTF-8 byte order mark before the document", "POST", F, b"\xef\xbb\xbf" + GOOD_TEXT.encode(), JSON_CT,
     {"status": 400}),
    ("the document in UTF-16", "POST", F, GOOD_TEXT.encode("utf-16"), JSON_CT, {"status": 400}),
    ("an overlong UTF-8 encoding in a string", "POST", F,
     raw(spectrum_text(x_unit='"nQm"')).replace(b"Q", b"\xc0\xaf"), JSON_CT, {"status": 400}),
    ("invalid UTF-8 in the id", "POST", F, raw(spectrum_text(), ',"id":"aQb"').replace(b"aQb", b"a\xffb"), JSON_CT,
     {"status": 400}),
    ("a duplicate x inside spectrum", "POST", F, raw(spectrum_text()[:-1] + ',"x":[1,2]}'), JSON_CT,
     {"status": 422, "pointer": "/spectrum/x"}),
    # ---- tables: NaN and Infinity spelled in CSV, numbers beyond a double, invalid UTF-8
    ("CSV with inf (line 2)", "POST", F + CSV_Q, b"400,1e-12\n500,inf\n600,1e-12\n700,1e-12\n", CSV_CT,
     {"status": 422, "line": 2, "pointer": "/spectrum/y/1"}),
    ("CSV with Infinity as x (line 2)", "POST", F + CSV_Q, b"400,1e-12\nInfinity,1e-12\n600,1e-12\n700,1e-12\n",
     CSV_CT, {"status": 422, "line": 2}),
    ("CSV with -inf as y_error (line 3)", "POST", F + CSV_Q,
     b"x,y,y_error\n400,1e-12,1e-14\n500,1e-12,-inf\n600,1e-12,1e-14\n700,1e-12,1e-14\n", CSV_CT,
     {"status": 422, "line": 3}),
    ("CSV with NaN (line 2)", "POST", F + CSV_Q, b"400,1e-12\n500,NaN\n600,1e-12\n700,1e-12\n", CSV_CT,
     {"status": 422, "line": 2}),
    ("CSV with nan(0x1) (line 2)", "POST", F + CSV_Q, b"400,1e-12\n500,nan(0x1)\n600,1e-12\n700,1e-12\n", CSV_CT,
     {"status": 422, "line": 2}),
    # 1e999 is a number beyond a double (as inf, refused as not finite with its line); it was called
    # "not a number".
    ("CSV with 1e999 (line 2)", "POST", F + CSV_Q, b"400,1e-12\n500,1e999\n600,1e-12\n700,1e-12\n", CSV_CT,
     {"status": 422, "line": 2, "pointer": "/spectrum/y/1"}),
    # 1e-400 rounds to 0 as in JSON: an error of 0 is not positive (it was "not a number", a 400).
    ("CSV with a y_error of 1e-400 (line 5)", "POST", F + CSV_Q,
     ("x,y,y_error\n" + "".join(f"{x},{y},{e if i != 3 else '1e-400'}\n" for i, (x, y, e) in
                                enumerate(zip(X, Y, GOOD["spectrum"]["y_error"])))).encode(), CSV_CT,
     {"status": 422, "line": 5, "pointer": "/spectrum/y_error/3"}),
    ("CSV with -0 as x (line 2)", "POST", F + CSV_Q, b"400,1e-12\n-0,1e-12\n600,1e-12\n700,1e-12\n", CSV_CT,
     {"status": 422, "line": 2}),
    ("CSV with a hexadecimal float (line 2)", "POST", F + CSV_Q, b"400,1e-12\n0x1p9,1e-12\n600,1e-12\n700,1e-12\n",
     CSV_CT, {"status": 400, "line": 2}),
    ("CSV with invalid UTF-8 in a number (line 2)", "POST", F + CSV_Q,
     b"400,1e-12\n5\xff0,1e-12\n600,1e-12\n700,1e-12\n", CSV_CT, {"status": 400, "line": 2}),
    ("CSV with temperature_min=nan", "POST", F + CSV_Q + "&temperature_min=nan", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "temperature_min"}),
    ("CSV with time_budget_seconds=inf", "POST", F + CSV_Q + "&time_budget_seconds=inf", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "time_budget_seconds"}),
    ("CSV with redshift=1e999", "POST", F + CSV_Q + "&redshift=1e999", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "redshift"}),
    ("CSV with invalid UTF-8 (%FF) in y_unit", "POST", F + "?x_unit=nm&y_unit=W/m2/%FF", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "y_unit"}),
    ("CSV with distance=-0 pc", "POST", F + CSV_Q + "&distance=-0%20pc", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "distance"}),
    ("CSV with seed but no posterior", "POST", F + CSV_Q + "&seed=3", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "seed"}),
    ("CSV with fix=temperature:nan", "POST", F + CSV_Q + "&fix=temperature:nan", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "fix"}),
    ("CSV with an unknown interval method", "POST", F + CSV_Q + "&intervals=bogus", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "intervals", "accepted": True}),
    ("CSV with format given twice", "POST", F + CSV_Q + "&format=json&format=csv", GOOD_CSV.encode(), CSV_CT,
     {"status": 422, "parameter": "format"}),
    # ---- POST /v1/fit/batch as a whole (its lines are checked in test_hostile_http.py and test_batch_http.py)
    ("batch with Content-Type application/json", "POST", B, (GOOD_TEXT + "\n").encode(), JSON_CT, {"status": 415}),
    ("batch with Content-Type text/csv", "POST", B, (GOOD_TEXT + "\n").encode(), CSV_CT, {"status": 415}),
    # A query parameter on the batch was ignored silently (format=csv answered NDJSON): now a 422.
    ("batch with a query parameter (format=csv)", "POST", B + "?format=csv", (GOOD_TEXT + "\n").encode(), ND_CT,
     {"status": 422, "parameter": "format"}),
    # ---- the laboratory endpoints
    ("light: NaN in the spectrum", "POST", "/v1/light", b'{"spectrum":{"x":[NaN],"x_unit":"nm","y":[1],"y_unit":"W/m2/nm"}}',
     JSON_CT, {"status": 400}),
    ("light: 10^5 nested arrays", "POST", "/v1/light", b"[" * 100000 + b"]" * 100000, JSON_CT, {"status": 400}),
    ("light: invalid UTF-8", "POST", "/v1/light", b'{"observer":"cie\xff"}', JSON_CT, {"status": 400}),
    ("light: a query parameter", "POST", "/v1/light?observer=cie1931_2deg", b"{}", JSON_CT,
     {"status": 422, "parameter": "observer"}),
    ("light: text/csv", "POST", "/v1/light", GOOD_CSV.encode(), CSV_CT, {"status": 415}),
    ("hot-body: 1e999", "POST", "/v1/hot-body", b'{"spectrum":{"x":[1e999]}}', JSON_CT,
     {"status": 400, "detail_has": "1e999"}),
    ("hot-body: a top-level array", "POST", "/v1/hot-body", b"[]", JSON_CT, {"status": 422, "pointer": ""}),
    ("hot-body: duplicate keys", "POST", "/v1/hot-body", b'{"emissivity":"constant","emissivity":"linear"}', JSON_CT, {}),
    ("hot-body: Infinity", "POST", "/v1/hot-body", b'{"spectrum":{"x":[Infinity]}}', JSON_CT, {"status": 400}),
    # ---- the catalogue and operations endpoints
    ("passband id of invalid UTF-8 (%FF)", "GET", "/v1/passbands/%FF", None, {}, {"status": 404}),
    ("passband id of 7,000 characters", "GET", "/v1/passbands/" + "a" * 7000, None, {}, {"status": 404}),
    ("passband id with an encoded slash", "GET", "/v1/passbands/a%2Fb", None, {}, {"status": 404}),
    ("empty passband id", "GET", "/v1/passbands/", None, {}, {"status": 404}),
    ("wrong method: POST /v1/passbands/2mass-j", "POST", "/v1/passbands/2mass-j", b"{}", JSON_CT,
     {"status": 405, "allow": "GET"}),
    ("wrong method: PUT /v1/passbands", "PUT", "/v1/passbands", b"", {}, {"status": 405, "allow": "GET"}),
    ("wrong method: PATCH /openapi.yaml", "PATCH", "/openapi.yaml", b"", {}, {"status": 405, "allow": "GET"}),
    ("wrong method: DELETE /v1/units", "DELETE", "/v1/units", b"", {}, {"status": 405, "allow": "GET"}),
    ("wrong method: GET /v1/light", "GET", "/v1/light", None, {}, {"status": 405, "allow": "POST"}),
    ("wrong method: OPTIONS /v1/fit without CORS", "OPTIONS", F, None, {}, {"status": 405, "allow": "POST"}),
]

# Cases that need a server with small limits.
SMALL_BODY = 4096
MAX_POINTS = 100
LIMIT_CASES = [
    ("body over --max-body-bytes (4096)", "body", "POST", F, with_points(200), JSON_CT, {"status": 413}),
    ("CSV body over --max-body-bytes", "body", "POST", F + CSV_Q, ("x,y\n" + "500,1e-12\n" * 600).encode(), CSV_CT,
     {"status": 413}),
    ("chunked body over --max-body-bytes", "body", "POST", F,
     (c for c in [with_points(200)[i:i + 1000] for i in range(0, len(with_points(200)), 1000)]), JSON_CT,
     {"statuses": {411, 413}}),  # 411 Length Required (RFC 9110 section 15.5.12) refuses chunked bodies outright
    ("too many points (--max-points 100, 101 given)", "points", "POST", F, with_points(101), JSON_CT,
     {"statuses": {413, 422}}),
    ("too many points in a CSV", "points", "POST", F + CSV_Q,
     ("x,y\n" + "".join(f"{400 + i},1e-12\n" for i in range(150))).encode(), CSV_CT, {"statuses": {413, 422}}),
]


# Values at the edges of a double that are legitimately accepted: a practitioner expects -0 to be the
# number 0 (IEEE 754 -0 == 0; a flux of zero is a measurement), and a subnormal or underflowing
# flux to be a flux indistinguishable from 0 at these errors (1e-14 W/m2/nm). Each must answer 200
# with the same temperature as the plain 0, to the last digit for -0 (the same double in every sum)
# and to 1e-9 relative for the subnormals. (name, body, reference body, relative tolerance)
def zero_y(token):
    return raw(spectrum_text(y=y_with(token)))


ACCEPTED = [
    ("-0 as a y value equals 0", zero_y("-0"), zero_y("0"), 0.0),
    ("-0.0e0 as a y value equals 0", zero_y("-0.0e0"), zero_y("0"), 0.0),
    ("a subnormal y value (5e-324)", zero_y("5e-324"), zero_y("0"), 1e-9),
    ("a y value of 1e-400 (rounds to 0)", zero_y("1e-400"), zero_y("0"), 0.0),
    ("redshift -0 equals redshift 0", raw(spectrum_text(), ',"model":{"kind":"planck","redshift":-0}'),
     raw(spectrum_text(), ',"model":{"kind":"planck","redshift":0}'), 0.0),
    ("CSV: -0 as a y value equals 0", "csv:-0", "csv:0", 0.0),
]


def csv_with_y(token):
    rows = [f"{x},{y if i != 3 else token},{e}" for i, (x, y, e) in enumerate(zip(X, Y, GOOD["spectrum"]["y_error"]))]
    return ("x,y,y_error\n" + "\n".join(rows) + "\n").encode()


def run_accepted(server, name, body, reference, tolerance):
    def post(b):
        if isinstance(b, str) and b.startswith("csv:"):
            return http("POST", server, F + CSV_Q, data=csv_with_y(b[4:]), headers=CSV_CT, timeout=30)
        return http("POST", server, F, data=b, headers=JSON_CT, timeout=30)
    r, ref = post(body), post(reference)
    docs = [harness.json_of(x) if is_response(x) and x.status_code == 200 else None for x in (r, ref)]
    checks.check(f"accepted: {name}: 200 (and the reference 200)", all(d is not None for d in docs),
                 f"{describe(r, 160)} | {describe(ref, 80)}")
    if None in docs:
        return
    t, t_ref = (d["parameters"]["temperature"]["value"] for d in docs)
    if tolerance == 0.0:
        diff = harness.strict_diff(docs[0], docs[1])
        checks.check(f"accepted: {name}: the same document as the reference", diff is None, diff or "")
    else:
        checks.check(f"accepted: {name}: the reference's temperature to {tolerance:g} relative",
                     abs(t - t_ref) <= tolerance * abs(t_ref), f"{t!r} vs {t_ref!r}")
    schema.check(checks, f"accepted: {name}: response matches the OpenAPI schema", docs[0], F, "post", 200,
                 "application/json")


def run_case(server, name, method, path, body, headers, expect):
    r = http(method, server, path, data=body, headers=headers, timeout=60)
    checks.check(f"{name}: answered, not 5xx", is_response(r) and r.status_code < 500, describe(r, 200))
    doc = check_problem(checks, name, r, status=expect.get("status"), statuses=expect.get("statuses"),
                        pointer=expect.get("pointer"), pointer_prefix=expect.get("pointer_prefix"),
                        line=expect.get("line"), parameter=expect.get("parameter"),
                        accepted=expect.get("accepted", False))
    if "detail_has" in expect and doc is not None:
        checks.check(f"{name}: detail names {expect['detail_has']!r}", expect["detail_has"] in str(doc.get("detail")),
                     f"got {doc.get('detail')!r}")
    if "allow" in expect and is_response(r):
        allow = [m.strip() for m in r.headers.get("Allow", "").split(",")]
        checks.check(f"{name}: Allow header names {expect['allow']}", expect["allow"] in allow, r.headers.get("Allow"))
    if doc is not None and is_response(r):
        # The answer's schema where openapi.yaml lists this path and method, else its Problem schema.
        schema.check(checks, f"{name}: problem matches the OpenAPI schema", doc, path.split("?")[0], method,
                     r.status_code, "application/problem+json", fallback="Problem")
    # The server answers a good request right after.
    after = http("POST", server, F, data=GOOD_TEXT.encode(), headers=JSON_CT, timeout=30)
    checks.check(f"{name}: a good request right after answers 200", is_response(after) and after.status_code == 200,
                 describe(after, 120))


def main():
    if not schema.available:
        checks.note(f"schema checks will not run: {schema.problem}")
    checks.note(f"{len(CASES) + len(LIMIT_CASES) + len(ACCEPTED)} cases: {len(CASES) + len(LIMIT_CASES)} bad inputs "
                f"answered 4xx, {len(ACCEPTED)} edge values accepted (test_hostile_http.py adds the raw-socket cases)")
    server = Server(args.server, name="server")
    if not server.start(checks):
        return
    r = http("POST", server, F, data=GOOD_TEXT.encode(), headers=JSON_CT)
    checks.check("the good request answers 200", is_response(r) and r.status_code == 200, describe(r, 200))
    r = http("POST", server, F + CSV_Q, data=GOOD_CSV.encode(), headers=CSV_CT)
    checks.check("the good CSV answers 200", is_response(r) and r.status_code == 200, describe(r, 200))
    for name, method, path, body, headers, expect in CASES:
        run_case(server, name, method, path, body, headers, expect)
    for name, body, reference, tolerance in ACCEPTED:
        run_accepted(server, name, body, reference, tolerance)
    log = server.wait_for_log(1)
    fives = [d for d in log if isinstance(d.get("status"), int) and d["status"] >= 500]
    checks.check("the access log shows no 5xx answer", not fives, fives[:3])
    server.stop(checks)

    servers = {
        "body": Server(args.server, ["--max-body-bytes", str(SMALL_BODY)], name=f"server (--max-body-bytes {SMALL_BODY})"),
        "points": Server(args.server, ["--max-points", str(MAX_POINTS)], name=f"server (--max-points {MAX_POINTS})"),
    }
    for key, s in servers.items():
        if not s.start(checks):
            continue
        for name, which, method, path, body, headers, expect in LIMIT_CASES:
            if which == key:
                run_case(s, name, method, path, body, headers, expect)
        if key == "points":
            r = http("POST", s, F, data=with_points(MAX_POINTS), headers=JSON_CT)
            checks.check(f"exactly --max-points ({MAX_POINTS}) points answers 200",
                         is_response(r) and r.status_code == 200, describe(r, 160))
        s.stop(checks)


harness.crash_guard(checks, main)
